"""One run of the two-electron atom: the core's propagator moving the registered
:class:`~tdse1d.physics.pair_system.TwoElectrons` system, and what is read from it.

Through the run (every step): the propagator's observables (norm, <x1 + x2>, the total
dipole acceleration, the ground-state population) and the region probabilities of the
neutral atom, single and double ionization at each radius
(:mod:`tdse1d.physics.pair_regions`). Between chunks: decimated density snapshots,
handed to a sink one at a time (the run keeps none, so its memory does not grow with
their number), and progress. At the end: the correlated momentum map of the double
part, the harmonic spectrum of the total dipole acceleration, and beside them the
sequential estimate for the same pulse with the ionization potentials of the model
(:mod:`tdse1d.semiclassical.double_ionization`).
"""

from __future__ import annotations

import math
import os
import time as _time
from dataclasses import dataclass, field

import numpy as np

from .. import spectra
from ..input.pair_problem import PairProblem
from ..physics.absorbers import ABSORBERS
from ..physics.grid import Grid
from ..physics.pair_regions import RADII, double_ionization_momenta
from ..physics.pair_system import TwoElectrons, region_observable_names
from ..physics.propagation import SCHEMES, Propagator
from ..physics.threads import one_blas_thread
from ..semiclassical.double_ionization import knee_estimate, sequential_double_ionization

__all__ = ["PairRunResult", "PairRunStopped", "simulate_pair", "pair_memory_bytes", "check_pair_memory", "snapshot_shape",
           "snapshot_steps", "snapshot_times", "THREADS", "MEMORY_SHARE"]

#: FFTW threads of the 2-D step (the machine's cores, at most 2 unless told otherwise)
THREADS = max(1, min(2, os.cpu_count() or 1))
#: complex arrays of the grid's size a run holds (the state, the FFT's work array, the
#: potential and kinetic phases of each kick and sub-step, the absorber factor, the
#: reference state) and real ones (potential, force, absorber, density work arrays)
_COMPLEX_ARRAYS = 6
_REAL_ARRAYS = 6


def snapshot_shape(problem: PairProblem) -> tuple[int, int]:
    """Shape of one density snapshot: every ``output.snapshot_stride``-th point of each axis."""
    n = len(range(0, problem.grid.points, problem.config.output.snapshot_stride))
    return n, n


def pair_memory_bytes(problem: PairProblem) -> int:
    """Memory (bytes) a run holds, estimated before it starts: the propagator's arrays,
    the bound states, one snapshot in flight, and the per-step records; flat in the
    number of snapshots (they go to the sink one at a time)."""
    size = problem.grid.points**2
    records = (problem.time.steps + 1) * (10 + 3 * len(RADII)) * 8
    states = len(problem.states) * size * 8
    snap = int(np.prod(snapshot_shape(problem))) * 4
    return (_COMPLEX_ARRAYS * 16 + _REAL_ARRAYS * 8) * size + states + snap + records


#: largest share of the machine's available memory a run may plan to hold
MEMORY_SHARE = 0.8


def check_pair_memory(problem: PairProblem) -> None:
    """Refuse, before anything is allocated, a run that would not fit in memory.

    Raises
    ------
    InputError
        Naming ``grid.points``, with the estimate and what is available.
    """
    from ..input.spec import InputError

    need = pair_memory_bytes(problem)
    try:
        available = os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (ValueError, OSError, AttributeError):  # not offered on this system
        return
    if need > MEMORY_SHARE * available:
        raise InputError(f"the run would hold about {need / 2**30:.2f} GiB ({problem.grid.points}^2 points), more "
                         f"than {MEMORY_SHARE:.0%} of the {available / 2**30:.2f} GiB available: use fewer points",
                         "grid.points", problem.config.source)


def snapshot_steps(problem: PairProblem) -> np.ndarray:
    """Steps of the ``output.snapshots`` snapshots, first and last included."""
    count, steps = problem.config.output.snapshots, problem.time.steps
    return np.unique(np.round(np.linspace(0, steps, count)).astype(int)) if count > 0 else np.zeros(0, int)


def snapshot_times(problem: PairProblem) -> np.ndarray:
    """Times (a.u.) of the snapshots."""
    return problem.time.times[snapshot_steps(problem)]


@dataclass
class PairRunResult:
    """What a run of the two-electron atom gives (atomic units).

    Attributes
    ----------
    observables : Observables
        Per step: time, field, norm, dipole <x1 + x2>, momentum, acceleration (total),
        initial_population, and the region readings (:func:`region_observable_names`).
    radii : tuple of float
        Radii (bohr) of the regions; the first is reported.
    momenta : ndarray, shape (n,)
        Momentum axis of the correlated map (a.u.).
    momentum_map : ndarray, shape (n, n)
        |psi(p1, p2)|^2 of the double-ionization part at the end (a.u.).
    harmonic : HarmonicSpectrum or None
    sequential : SequentialYields or None
        The sequential estimate for the pulse.
    knee : KneeEstimate or None
    wall_time : float
        Seconds.
    warnings : list of str
    """

    observables: object
    radii: tuple
    momenta: np.ndarray
    momentum_map: np.ndarray
    harmonic: object = None
    sequential: object = None
    knee: object = None
    wall_time: float = 0.0
    warnings: list = field(default_factory=list)

    def final(self, kind: str, radius_index: int = 0) -> float:
        """Final ``neutral``, ``single_ionization`` or ``double_ionization`` at a radius."""
        names = region_observable_names(self.radii)
        return float(getattr(self.observables, names[3 * radius_index + ("neutral", "single_ionization",
                                                                           "double_ionization").index(kind)])[-1])

    @property
    def ratio(self) -> float:
        """Double over single ionization after the run, at the reported radius."""
        single = self.final("single_ionization")
        return self.final("double_ionization") / single if single > 0 else math.nan

    @property
    def ratio_spread(self) -> tuple[float, float]:
        """(lowest, highest) double-to-single ratio over the radii: the reading's band."""
        values = []
        for k in range(len(self.radii)):
            single = self.final("single_ionization", k)
            values.append(self.final("double_ionization", k) / single if single > 0 else math.nan)
        return float(np.nanmin(values)), float(np.nanmax(values))


class PairRunStopped(RuntimeError):
    """A run of the two-electron atom stopped on request (no checkpoint is written yet)."""

    def __init__(self, step: int, time: float):
        self.step, self.time = step, time
        super().__init__(f"stopped at step {step}, t = {time:.6g} a.u. (the two-electron atom writes no "
                         "checkpoint yet: nothing to resume from)")


def simulate_pair(problem: PairProblem, snapshot_sink=None, progress=None, fft_effort="FFTW_MEASURE",
                  threads: int = THREADS, radii=RADII, control=None) -> PairRunResult:
    """Propagate the two-electron atom of ``problem`` through its pulse.

    Parameters
    ----------
    problem : PairProblem
    snapshot_sink : callable, optional
        ``sink(index, time, density)`` for each of ``output.snapshots`` decimated
        densities |psi|^2 (1/bohr^2, float32, :func:`snapshot_shape`).
    progress : callable, optional
        ``progress(step, steps)``.
    fft_effort : str
        FFTW planner flag.
    threads : int
        FFTW threads.
    radii : tuple of float
        Radii of the regions (bohr), the reported one first.
    control : tdse1d.runs.runner.RunControl, optional
        Its stop request (a signal) ends the run between chunks with :class:`PairRunStopped`.

    Returns
    -------
    PairRunResult
    """
    clock = _time.monotonic()
    cfg = problem.config
    axis = problem.grid
    grid2 = Grid.product(axis, axis)
    dt = problem.time.step
    absorber = ABSORBERS[cfg.absorber.type](cfg.absorber.exponent, cfg.absorber.strength)
    mask = absorber.step_factor(grid2, problem.absorber_width, dt)
    initial = list(cfg.atom.initial_state)
    psi0 = np.sum([problem.states.wavefunctions[i] for i in initial], axis=0).astype(complex)
    psi0 /= math.sqrt(float(np.sum(np.abs(psi0) ** 2)) * axis.spacing**2)
    system = TwoElectrons(axis, problem.atom, absorber_factor=mask, reference=psi0, radii=radii)
    times = problem.time.times
    prop = Propagator(system, problem.field, times, gauge=cfg.propagation.gauge,
                      scheme=SCHEMES[cfg.propagation.scheme_name], fft_effort=fft_effort, threads=threads)
    # one BLAS thread: the overlaps and sums of the loop are short BLAS calls, and a
    # threaded BLAS spinning beside FFTW's threads on shared cores was measured 10 to
    # 100 times slower (7 against 300 ms a step on a 200^2 grid at a load of 9)
    with one_blas_thread():
        return _propagate(problem, prop, psi0, snapshot_sink, progress, radii, clock, control)


def _propagate(problem, prop, psi0, snapshot_sink, progress, radii, clock, control):
    cfg = problem.config
    axis = problem.grid
    times = problem.time.times
    prop.start(psi0)
    steps = problem.time.steps
    snaps = snapshot_steps(problem)
    stride = cfg.output.snapshot_stride
    events = np.unique(np.concatenate([snaps, [steps], np.arange(0, steps, max(1, steps // 100))]))
    snap_index = {int(s): i for i, s in enumerate(snaps)}
    for n in events:
        if n > prop.step_index:
            prop.advance(int(n) - prop.step_index)
        if snapshot_sink is not None and int(n) in snap_index:
            density = np.abs(prop.psi[::stride, ::stride]) ** 2
            snapshot_sink(snap_index[int(n)], float(times[n]), density.astype(np.float32))
        if progress is not None:
            progress(prop.step_index, steps)
        if control is not None and control.stop_requested and prop.step_index < steps:
            raise PairRunStopped(prop.step_index, float(times[prop.step_index]))
    prop.finish()
    obs = prop.observables
    # the momentum map after the pulse, from the length-gauge state (A = 0 after a
    # zero-area pulse, where both gauges' canonical momenta are the drift momenta)
    k, momentum_map = double_ionization_momenta(prop.length_gauge_state(), axis.x, axis.spacing, radii[0])
    result = PairRunResult(obs, tuple(radii), k, momentum_map, warnings=list(problem.warnings))
    if problem.field.pulses:
        omega0 = problem.field.omega
        result.harmonic = spectra.harmonic_spectrum(obs.time, obs.acceleration, omega0, cfg.spectra.window)
        peak = max(p.peak_field for p in problem.field.pulses)
        ip1, ip2 = problem.ionization_potential, problem.ion_ionization_potential
        result.knee = knee_estimate(omega0, peak, ip1, ip2)
        try:
            result.sequential = sequential_double_ionization(obs.time, obs.electric, problem.atom.charge,
                                                             problem.atom.softening, ip1, ip2)
        except ValueError as exc:  # e.g. Z <= 1: no charge left for the outer electron
            result.warnings.append(f"no sequential estimate: {exc}")
    result.wall_time = _time.monotonic() - clock
    return result
