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

Stopping and continuing as for one electron (:mod:`tdse1d.runs.runner`): between chunks
the run asks its :class:`~tdse1d.runs.runner.RunControl` whether a checkpoint is due,
hands a :class:`~tdse1d.runs.pair_checkpoint.PairRunState` to its checkpoint sink and,
for a stop, raises :class:`~tdse1d.runs.runner.RunInterrupted`; ``resume=state``
continues with the same steps and sums, so the result is the same to the bit.

Before a run: its memory (:func:`pair_memory_bytes`, checked against the machine's) and
its wall time (:func:`estimate_pair_wall_time`, from steps of its propagator timed now).
"""

from __future__ import annotations

import contextlib
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
           "PairWallEstimate", "estimate_pair_wall_time",
           "snapshot_steps", "snapshot_times", "THREADS", "MEMORY_SHARE"]

#: FFTW threads of the 2-D step (the machine's cores, at most 2 unless told otherwise)
THREADS = max(1, min(2, os.cpu_count() or 1))
#: fewest points per axis for which a run uses several threads: below, a step's
#: transforms and sums take well under a millisecond and waiting for a second thread on
#: a shared machine costs more than it saves (a 48^2 run of 272 steps took 0.7 s on one
#: thread and 28 s on two, FFTW's and numba's, at a load average of 5.7 on 2 cores)
THREADED_FROM_POINTS = 256
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
    the bound states, one snapshot in flight, and the per-step records, twice (a
    checkpoint copies them); flat in the number of snapshots (they go to the sink, and
    into a checkpoint, one at a time)."""
    from ..input.pair_problem import pair_state_count

    size = problem.grid.points**2
    records = (problem.time.steps + 1) * (10 + 3 * len(RADII)) * 8
    count = len(problem.states) if problem.states is not None else pair_state_count(problem.config)
    states = count * size * 8
    snap = int(np.prod(snapshot_shape(problem))) * 4
    return (_COMPLEX_ARRAYS * 16 + _REAL_ARRAYS * 8) * size + states + snap + 2 * records


#: largest share of the machine's available memory a run may plan to hold
MEMORY_SHARE = 0.8

#: largest grid (points per axis) on which steps are timed for an estimate; a larger
#: grid's step is scaled by N^2 log N^2 (the FFT's count of operations)
TIMED_POINTS = 512
#: steps timed (after one that loads the compiled kernels); the fastest counts
TIMED_STEPS = 4


@dataclass(frozen=True)
class PairWallEstimate:
    """The wall time of a run's propagation, from steps of it timed on this machine.

    Attributes
    ----------
    step : float
        Seconds per step: the fastest of :data:`TIMED_STEPS` steps of the run's own
        propagator (its scheme, gauge, absorber and region readings) on its grid, or on
        :data:`TIMED_POINTS`^2 scaled by N^2 log N^2 for a larger one.
    steps : int
    wall : float
        ``steps * step`` (s); the bound states and the FFT planning come on top.
    load : float
        One-minute load average when timed (NaN where unknown): the run goes slower
        on a machine busier than that.
    timed_points : int
        Points per axis of the timed grid.
    """

    step: float
    steps: int
    wall: float
    load: float
    timed_points: int

    def to_json(self) -> dict:
        return {"step_time_s": self.step, "wall_time_s": self.wall, "load_average": self.load,
                "timed_points_per_axis": self.timed_points}


def estimate_pair_wall_time(problem: PairProblem, threads: int = THREADS,
                            fft_effort: str = "FFTW_MEASURE") -> PairWallEstimate:
    """Time a few steps of the run's propagator and scale them to the run.

    The state stepped is a Gaussian (the step's cost does not depend on it), so the
    problem needs no states. The FFTW plans are made as the run makes them (measured,
    about 1.5 s at 512^2 points the first time, then read from the kept wisdom when the
    caller keeps it, :func:`tdse1d.io.wisdom.fftw_wisdom`): estimated plans were measured
    3.4 times slower at 512^2 on two threads (14.3 against 4.2 ms a step, 2026-12-03), and
    an estimate timed with them put the run at two to three times its measured wall time.

    Parameters
    ----------
    problem : PairProblem
    threads : int
        FFTW and kernel threads (one below :data:`THREADED_FROM_POINTS` points per axis, as the run).
    fft_effort : str
        FFTW planning effort, as :func:`simulate_pair` (default: the run's).

    Returns
    -------
    PairWallEstimate
    """
    cfg = problem.config
    n = problem.grid.points
    m = min(n, TIMED_POINTS)
    if m < THREADED_FROM_POINTS:
        threads = 1
    axis = Grid(m, problem.grid.spacing)
    grid2 = Grid.product(axis, axis)
    dt = problem.time.step
    absorber = ABSORBERS[cfg.absorber.type](cfg.absorber.exponent, cfg.absorber.strength)
    width = min(problem.absorber_width, axis.half_width / 2)
    mask = absorber.step_factor(grid2, width, dt)
    psi0 = np.exp(-0.5 * (grid2.positions(0) ** 2 + grid2.positions(1) ** 2)).astype(complex)
    psi0 /= math.sqrt(float(np.sum(np.abs(psi0) ** 2)) * axis.spacing**2)
    system = TwoElectrons(axis, problem.atom, absorber_factor=mask, reference=psi0)
    times = problem.time.times[:TIMED_STEPS + 2]
    with one_blas_thread(), _kernel_threads(threads):
        prop = Propagator(system, problem.field, times, gauge=cfg.propagation.gauge,
                          scheme=SCHEMES[cfg.propagation.scheme_name], fft_effort=fft_effort, threads=threads)
        prop.start(psi0)
        prop.advance(1)  # loads the compiled kernels
        best = math.inf
        for _ in range(TIMED_STEPS):
            start = _time.perf_counter()
            prop.advance(1)
            best = min(best, _time.perf_counter() - start)
    step = best * (n * n * math.log(n * n)) / (m * m * math.log(m * m))
    try:
        load = os.getloadavg()[0]
    except OSError:  # not offered on this system
        load = math.nan
    steps = problem.time.steps
    return PairWallEstimate(step, steps, steps * step, load, m)


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
    """A run stopped on request by a caller that gave no checkpoint sink (nothing to resume from)."""

    def __init__(self, step: int, time: float):
        self.step, self.time = step, time
        super().__init__(f"stopped at step {step}, t = {time:.6g} a.u. (no checkpoint sink: nothing to resume from)")


#: events (snapshot or progress steps) per run: a stop request is answered, and a due
#: checkpoint written, at most 0.5 % of the run's steps later (as for one electron)
EVENTS_PER_RUN = 200


def simulate_pair(problem: PairProblem, snapshot_sink=None, progress=None, fft_effort="FFTW_MEASURE",
                  threads: int = THREADS, radii=RADII, control=None, checkpoint_sink=None,
                  resume=None) -> PairRunResult:
    """Propagate the two-electron atom of ``problem`` through its pulse.

    Parameters
    ----------
    problem : PairProblem
    snapshot_sink : callable, optional
        ``sink(index, time, density)`` for each of ``output.snapshots`` decimated
        densities |psi|^2 (1/bohr^2, float32, :func:`snapshot_shape`).
    progress : callable, optional
        ``progress(step, steps)``, after each chunk of steps.
    fft_effort : str
        FFTW planner flag.
    threads : int
        FFTW and kernel threads (one below :data:`THREADED_FROM_POINTS` points per axis).
    radii : tuple of float
        Radii of the regions (bohr), the reported one first.
    control : tdse1d.runs.runner.RunControl, optional
        Checkpoint cadence and stop requests, asked between chunks.
    checkpoint_sink : object, optional
        ``checkpoint_sink.checkpoint(state)`` receives a
        :class:`~tdse1d.runs.pair_checkpoint.PairRunState` when ``control`` asks for one
        (:class:`~tdse1d.runs.pair_checkpoint.PairCheckpointSink` writes it).
    resume : PairRunState, optional
        Continue from this state (read from a checkpoint of the same input) instead of
        the initial state; the steps and sums are those of an uninterrupted run, so the
        result is the same to the bit.

    Returns
    -------
    PairRunResult

    Raises
    ------
    tdse1d.runs.runner.RunInterrupted
        After writing a checkpoint, when ``control`` asked to stop.
    PairRunStopped
        When ``control`` asked to stop and there is no ``checkpoint_sink``.
    """
    clock = _time.monotonic()
    cfg = problem.config
    axis = problem.grid
    if axis.points < THREADED_FROM_POINTS:
        threads = 1
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
    with one_blas_thread(), _kernel_threads(threads):
        first_event, snapshots_done = _start(prop, psi0, resume)
        return _propagate(problem, prop, snapshot_sink, progress, radii, clock, control, checkpoint_sink,
                          first_event, snapshots_done)


@contextlib.contextmanager
def _kernel_threads(threads: int):
    """A context in which the compiled kernels (numba) run on at most ``threads`` threads
    (their sums are cut into a fixed number of blocks, so the result does not depend on it)."""
    import numba

    before = numba.get_num_threads()
    numba.set_num_threads(max(1, min(threads, numba.config.NUMBA_NUM_THREADS)))
    try:
        yield
    finally:
        numba.set_num_threads(before)


def _start(prop, psi0, resume):
    """Start from the initial state, or from a checkpoint's state: (first event, snapshots done)."""
    if resume is None:
        prop.start(psi0)
        return 0, 0
    obs, recorder = prop.observables, prop.system.recorder
    if resume.psi.shape != prop.grid.shape or resume.absorbed.shape != recorder.absorbed.shape:
        raise ValueError(f"the state to resume is of a grid {resume.psi.shape} with {resume.absorbed.shape[0]} "
                         f"radii, this run {prop.grid.shape} with {recorder.absorbed.shape[0]}")
    prop.start(resume.psi, resume.step_index)
    # the recorded history replaces what start() measured at the resumed step, and the
    # norm absorbed from each region so far continues the readings' sums as they were
    for name in obs.names:
        record = getattr(obs, name)
        if name not in resume.observables or np.shape(resume.observables[name]) != record.shape:
            raise ValueError(f"the state to resume holds no per-step {name!r} of {record.shape[0]} records")
        record[:] = resume.observables[name]
    recorder.absorbed[:] = resume.absorbed
    prop.recorded_force = resume.record_force
    return resume.next_event, resume.snapshots_done


def _propagate(problem, prop, snapshot_sink, progress, radii, clock, control, checkpoint_sink, first_event,
               snapshots_done):
    from .pair_checkpoint import PairRunState
    from .runner import RunInterrupted

    cfg = problem.config
    axis = problem.grid
    times = problem.time.times
    steps = problem.time.steps
    snaps = snapshot_steps(problem)
    stride = cfg.output.snapshot_stride
    events = np.unique(np.concatenate([snaps, [steps], np.arange(0, steps, max(1, steps // EVENTS_PER_RUN))]))
    snap_index = {int(s): i for i, s in enumerate(snaps)}
    for event in range(first_event, len(events)):
        n = int(events[event])
        if n > prop.step_index:
            prop.advance(n - prop.step_index)
            if progress is not None:
                progress(prop.step_index, steps)
        if n in snap_index:
            if snapshot_sink is not None:
                density = np.abs(prop.psi[::stride, ::stride]) ** 2
                snapshot_sink(snap_index[n], float(times[n]), density.astype(np.float32))
            snapshots_done = snap_index[n] + 1
        if (control is not None and prop.step_index < steps and prop.step_index % prop.record_every == 0
                and control.checkpoint_due()):
            if checkpoint_sink is None:
                if control.stop_requested:
                    raise PairRunStopped(prop.step_index, float(times[prop.step_index]))
                continue
            checkpoint_sink.checkpoint(PairRunState(prop.step_index, event + 1, snapshots_done, prop.psi,
                                                    prop.observables.as_dict(), prop.system.recorder.absorbed,
                                                    prop.recorded_force))
            control.checkpoint_written()
            if control.stop_requested:
                raise RunInterrupted(prop.step_index, float(times[prop.step_index]))
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
