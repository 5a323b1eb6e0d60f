"""One full quantum run: propagate a :class:`~tdse1d.input.problem.Problem` and analyse it.

:func:`simulate` drives the :class:`~tdse1d.physics.propagation.Propagator` through the run in
chunks, between which it records bound-state populations, hands snapshots to a sink
(the HDF5 writer streams them to disk, so memory does not grow with their number),
has the propagator count the electrons crossing the surfaces at the inner edges of the
absorbing layers (surface flux method, :mod:`tdse1d.spectra.surface_flux`) and reports progress.
No file is read or written here; the sink does that.

Stopping and continuing: between chunks the runner asks a :class:`RunControl` whether
a checkpoint is due (its wall-clock interval has passed, or a stop was requested, e.g.
by a signal handler installed by the command line, never here). It then hands a
:class:`RunState` (everything needed to continue) to ``sink.checkpoint`` and, for a
stop, raises :class:`RunInterrupted`. ``simulate(..., resume=state)`` continues from
such a state; the steps and analysis events are the same as in an uninterrupted run,
so the results agree to round-off.

Numerical health (:mod:`tdse1d.runs.health`) is checked at the population cadence.

Recorded time axis: the per-step observables (norm, dipole, momentum, acceleration,
initial population, and the field beside them) are recorded every k-th step, k from
:func:`record_stride_of` (the rule of :func:`tdse1d.physics.observables.record_stride`: the
Nyquist frequency of the records is at least 4 times the highest frequency the spectra
analyse). Everything after the loop (spectra, cutoff, absorbed norm, the file) reads
the recorded axis ``observables.time``; the populations, snapshots, health checks and
the surface-flux accumulation look at the wavefunction itself and keep their own steps.
Checkpoints are written at record steps only, so a resumed run records the same steps.
"""

from __future__ import annotations

import math
import time as _time
from dataclasses import dataclass, field

import numpy as np

from . import health as _health
from .. import spectra
from ..physics.absorbers import ABSORBERS
from ..physics.observables import record_stride
from ..input.problem import Problem
from ..physics.states import initial_wavefunction

__all__ = ["RunResult", "RunState", "RunControl", "RunInterrupted", "simulate", "snapshot_steps", "population_steps",
           "record_stride_of", "highest_analysed_frequency", "ANALYSED_OVER_TOP"]

#: default bound-state projections per optical cycle of the first pulse
POPULATIONS_PER_CYCLE = 20

#: the highest frequency the spectra analyse, over the highest harmonic of interest
#: (max of the cutoff estimate Ip + 3.17 Up, the photon energies and Ip): the
#: time-frequency map reaches 1.4 times the cutoff (analysis.emission.TF_TOP), the
#: cutoff reading a drop of 1.5 decades past the knee, within a few orders
ANALYSED_OVER_TOP = 1.5


@dataclass
class RunResult:
    """What a run produced (atomic units).

    Attributes
    ----------
    observables : Observables
        Time, field, norm, dipole, momentum, acceleration and initial population at the
        recorded steps 0, k, 2k, ... (``record_every``).
    population_time : ndarray, shape (m,)
    bound_population : ndarray, shape (m, n_states)
        |<phi_n|psi(t)>|^2 in the length-gauge form of the state.
    final_state : ndarray of complex
        Length-gauge wavefunction at the end.
    ionization_probability : float
        1 - population of all bound states (:mod:`tdse1d.physics.ionization`).
    ionization : tdse1d.physics.ionization.IonizationEstimate
        Its pieces and uncertainty band.
    absorbed : float
        Norm removed by the absorber: initial minus final norm (the final norm from the
        final state, which the last record misses when k does not divide the steps).
    harmonic : spectra.HarmonicSpectrum
    cutoff : spectra.CutoffEstimate or None
    photoelectrons : dict
        Method name -> spectra.PhotoelectronSpectrum.
    derived : dict
        Name -> what each registered derived spectrum computed
        (:mod:`tdse1d.spectra.derived`).
    warnings : list of str
    """

    observables: Observables
    population_time: np.ndarray
    bound_population: np.ndarray
    final_state: np.ndarray
    ionization_probability: float
    ionization: object
    absorbed: float
    harmonic: spectra.HarmonicSpectrum
    cutoff: object
    photoelectrons: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    derived: dict = field(default_factory=dict)
    record_every: int = 1


@dataclass
class RunState:
    """Everything needed to continue a run (see :mod:`tdse1d.runs.checkpoint`).

    Attributes
    ----------
    step_index : int
        Step of ``psi``.
    next_event : int
        Index of the next analysis event (population/snapshot step) not yet handled.
    snapshots_done : int
        Snapshots handed to the sink so far.
    psi : ndarray of complex
        Wavefunction in the propagation gauge at ``step_index``.
    observables : dict of str to ndarray
        Every per-step observable of :data:`tdse1d.physics.observables.PER_STEP_OBSERVABLES`
        by name (NaN beyond what was recorded).
    bound_population : ndarray, shape (m, n_states)
        Populations projected so far (zero rows for later events).
    surface_flux : dict or None
        :meth:`tdse1d.spectra.surface_flux.SurfaceFlux.state`, if the surface flux method is on.
    """

    step_index: int
    next_event: int
    snapshots_done: int
    psi: np.ndarray
    observables: dict
    bound_population: np.ndarray
    surface_flux: dict | None = None


class RunInterrupted(RuntimeError):
    """The run was stopped on request after writing a checkpoint at ``step``."""

    def __init__(self, step: int, time: float):
        self.step = step
        self.time = time
        super().__init__(f"stopped at step {step}, t = {time:.6g} a.u., after writing a checkpoint")


class RunControl:
    """When to checkpoint and whether to stop; polled by :func:`simulate` between chunks.

    Parameters
    ----------
    interval : float, optional
        Wall-clock seconds between checkpoints (None: only on a stop request).
    clock : callable
        Monotonic clock in seconds.

    Notes
    -----
    :meth:`request_stop` only sets a flag, so it is safe to call from a signal
    handler; the run writes a checkpoint and raises :class:`RunInterrupted` at the
    next chunk boundary.
    """

    def __init__(self, interval: float | None = None, clock=_time.monotonic):
        if interval is not None and not interval > 0:
            raise ValueError(f"interval must be positive seconds, got {interval!r}")
        self.interval = interval
        self.clock = clock
        self.stop_requested = False
        self._last = clock()

    def request_stop(self, *_):
        self.stop_requested = True

    def checkpoint_due(self) -> bool:
        if self.stop_requested:
            return True
        return self.interval is not None and self.clock() - self._last >= self.interval

    def checkpoint_written(self):
        self._last = self.clock()


def snapshot_steps(problem: Problem) -> np.ndarray:
    """Step indices of the wavefunction snapshots (evenly spread, first and last included)."""
    n = problem.config.output.snapshots
    if n <= 0:
        return np.zeros(0, dtype=int)
    return np.unique(np.round(np.linspace(0, problem.time.steps, n)).astype(int))


def population_steps(problem: Problem) -> np.ndarray:
    """Step indices at which bound-state populations are projected."""
    interval = problem.config.output.population_interval
    if interval is None:
        omega = problem.field.omega
        interval = (2 * math.pi / omega / POPULATIONS_PER_CYCLE) if math.isfinite(omega) else 1.0
    every = max(1, int(round(interval / problem.time.step)))
    return np.unique(np.append(np.arange(0, problem.time.steps + 1, every), problem.time.steps))


def highest_analysed_frequency(problem: Problem) -> float:
    """The highest angular frequency (a.u., hartree) the run's spectra analyse.

    :data:`ANALYSED_OVER_TOP` times the highest of the pulses' cutoff estimates
    (Ip + 3.17 Up), their photon energies and Ip, the same top harmonic the automatic
    time step samples (:mod:`tdse1d.semiclassical.estimates`). NaN without pulses.
    """
    if not problem.field.pulses or not problem.pulse_estimates:
        return math.nan
    top = max([p.cutoff_energy for p in problem.pulse_estimates] + [p.photon_energy for p in problem.pulse_estimates]
              + [problem.ionization_potential])
    return ANALYSED_OVER_TOP * top


def record_stride_of(problem: Problem) -> int:
    """Steps between records of the per-step observables (>= 1) by the rule of
    :func:`tdse1d.physics.observables.record_stride` at :func:`highest_analysed_frequency`;
    1 (every step) for a run without pulses."""
    top = highest_analysed_frequency(problem)
    if not (math.isfinite(top) and top > 0):
        return 1
    return record_stride(problem.time.step, top)


def _populations(states, psi_length, dx):
    amp_re = states.wavefunctions @ psi_length.real
    amp_im = states.wavefunctions @ psi_length.imag
    return (amp_re**2 + amp_im**2) * dx**2


def ionization_estimate(problem: Problem, population_time, bound_population):
    """:func:`tdse1d.physics.ionization.ionization` for a run of ``problem`` (see there)."""
    states = problem.states
    if problem.field.pulses:
        field_start, field_end = problem.field.start, problem.field.end
    else:
        field_start = field_end = float(population_time[0])
    from ..physics.ionization import ionization as _ionization  # scipy.special: not for estimate

    return _ionization(states.energies, states.wavefunctions, problem.grid,
                       problem.absorber_width if problem.config.absorber.type != "none" else 0.0,
                       population_time, bound_population, field_start, field_end, complete=states.complete,
                       charge=float(getattr(problem.potential, "total_charge", 0.0)))


def simulate(problem: Problem, sink=None, progress=None, fft_effort="FFTW_MEASURE", control=None,
             resume: RunState | None = None, strict: bool = False, record_every: int | None = None) -> RunResult:
    """Propagate the problem's initial state through its field and analyse the result.

    Parameters
    ----------
    problem : Problem
    sink : object, optional
        Receives ``snapshot(index, time, psi)`` for each snapshot (psi in the length
        gauge, complex array; copy it if kept).
    progress : callable, optional
        ``progress(step, steps)``, called between chunks.
    fft_effort : str
        FFTW planner flag.
    control : RunControl, optional
        Checkpoint cadence and stop requests; a due checkpoint is handed to
        ``sink.checkpoint(state)`` (the sink must have that method).
    resume : RunState, optional
        Continue from this state instead of the initial state.
    strict : bool
        Raise on the first numerical-health warning instead of collecting it.
    record_every : int, optional
        Steps between records of the per-step observables; default :func:`record_stride_of`
        of the problem (1 records every step).

    Returns
    -------
    RunResult

    Raises
    ------
    tdse1d.physics.propagation.NumericalError
        If the wavefunction blows up or the norm grows (or, with ``strict``, on a
        health warning).
    RunInterrupted
        After writing a checkpoint, when ``control`` asked to stop.
    """
    # the propagator and the flux kernels are compiled (numba): imported by a run, not by
    # `tdse1d estimate`, which reads record_stride_of from this module
    from ..physics.propagation import SCHEMES, Propagator
    from ..physics.systems import OneElectron

    cfg = problem.config
    grid = problem.grid
    times = problem.time.times
    atom = cfg.atom
    psi0 = initial_wavefunction(problem.states, atom.initial_state, atom.initial_amplitudes, atom.initial_phases)
    absorber = ABSORBERS[cfg.absorber.type](cfg.absorber.exponent, cfg.absorber.strength)
    mask = absorber.step_factor(grid, problem.absorber_width, problem.time.step)
    every = record_stride_of(problem) if record_every is None else record_every

    prop = Propagator(
        OneElectron(grid, problem.potential, absorber_factor=mask, reference=psi0),
        problem.field, times,
        gauge=cfg.propagation.gauge,
        scheme=SCHEMES[cfg.propagation.scheme_name],
        fft_effort=fft_effort,
        record_every=every,
    )
    notes = []
    flux = None
    if cfg.spectra.photoelectrons == "surface_flux" and problem.field.pulses:
        flux, note = _surface_flux(problem, prop, mask)
        if note:
            notes.append(note)
        prop.surface_flux = flux
    snaps = snapshot_steps(problem)
    pops = population_steps(problem)
    events = np.unique(np.concatenate([snaps, pops, [problem.time.steps]]))
    snap_set = {int(s): i for i, s in enumerate(snaps)}
    pop_set = {int(s): i for i, s in enumerate(pops)}
    bound = np.zeros((len(pops), len(problem.states)))
    # chunks end at multiples of the record stride (or at events), so that a
    # checkpoint, written only at a record step, comes at the same cadence
    progress_every = every * max(1, problem.time.steps // (200 * every))
    monitor = _health.HealthMonitor(problem, strict=strict)

    first_event = 0
    snapshots_done = 0
    if resume is None:
        prop.start(psi0)
    else:
        if resume.bound_population.shape != bound.shape:
            raise ValueError(f"the state to resume has populations of shape {resume.bound_population.shape}, "
                             f"this run {bound.shape}")
        prop.start(resume.psi, resume.step_index)
        # the recorded history replaces what start() measured at the resumed step
        for name in prop.observables.names:
            if name not in resume.observables:
                raise ValueError(f"the state to resume holds no per-step {name!r}")
            record = getattr(prop.observables, name)
            if np.shape(resume.observables[name]) != record.shape:
                raise ValueError(f"the state to resume holds {np.shape(resume.observables[name])[0]} records of "
                                 f"{name!r}, this run {record.shape[0]} (recorded every {every} steps)")
            record[:] = resume.observables[name]
        bound[:] = resume.bound_population
        if flux is not None:
            if resume.surface_flux is None:
                raise ValueError("the state to resume holds no surface-flux accumulator")
            flux.restore(resume.surface_flux)
        first_event = resume.next_event
        snapshots_done = resume.snapshots_done

    def state(next_event):
        return RunState(
            step_index=prop.step_index, next_event=next_event, snapshots_done=snapshots_done,
            psi=prop.psi.copy(),
            observables=prop.observables.as_dict(),
            bound_population=bound.copy(),
            surface_flux=flux.state() if flux is not None else None,
        )

    for event_index in range(first_event, len(events)):
        target = events[event_index]
        while prop.step_index < target:
            chunk_end = (prop.step_index // progress_every + 1) * progress_every
            prop.advance(min(chunk_end, target) - prop.step_index)
            if progress is not None:
                progress(prop.step_index, problem.time.steps)
            if (control is not None and prop.step_index % every == 0 and control.checkpoint_due()
                    and prop.step_index < problem.time.steps):
                sink.checkpoint(state(event_index))
                control.checkpoint_written()
                if control.stop_requested:
                    raise RunInterrupted(prop.step_index, prop.time)
        n = int(target)
        if n in pop_set or n in snap_set:
            psi_l = prop.length_gauge_state()
            if n in pop_set:
                bound[pop_set[n]] = _populations(problem.states, psi_l, grid.spacing)
                monitor.check(n, float(times[n]), psi_l)
            if n in snap_set and sink is not None:
                sink.snapshot(snap_set[n], float(times[n]), psi_l)
                snapshots_done = snap_set[n] + 1
    prop.finish()

    final = prop.length_gauge_state()
    obs = prop.observables
    ion = ionization_estimate(problem, times[pops], bound)
    absorbed = float(obs.norm[0] - np.sum(final.real**2 + final.imag**2) * grid.spacing)

    omega0 = problem.field.omega if problem.field.pulses else 1.0
    # the spectra on the recorded time axis (every k-th step)
    harmonic = spectra.harmonic_spectrum(obs.time, obs.acceleration, omega0, window=cfg.spectra.window)
    cutoff = None
    if problem.field.pulses and problem.ionization_potential > 0:
        try:
            # the field's own spectrum through the same window is the floor of the
            # acceleration spectrum (spectra.noise_floor): no cutoff is read in it
            leakage = spectra.harmonic_spectrum(obs.time, obs.electric, omega0, window=cfg.spectra.window).power
            cutoff = spectra.read_cutoff(harmonic.frequency, harmonic.power, omega0, problem.ionization_potential,
                                         noise=leakage)
        except ValueError:
            cutoff = None

    continuum = spectra.project_out_bound(final, problem.states.wavefunctions, grid.spacing)
    photo = {"plane_wave": spectra.plane_wave_spectrum(grid.x, continuum, split="momentum")}
    if flux is not None:
        # the flux accumulator works with canonical momenta in the velocity gauge
        a_end = float(prop.step_vector_potential[-1])
        to_velocity = np.exp(-1j * a_end * grid.x)
        a_start = float(prop.step_vector_potential[0])
        photo["surface_flux"] = flux.result(continuum * to_velocity, (final - continuum) * to_velocity,
                                            psi0 * np.exp(-1j * a_start * grid.x), split="momentum")

    derived = derived_spectra(obs, omega0, cfg.spectra.window)

    return RunResult(
        observables=obs,
        population_time=times[pops],
        bound_population=bound,
        final_state=final,
        ionization_probability=ion.probability,
        ionization=ion,
        absorbed=absorbed,
        harmonic=harmonic,
        cutoff=cutoff,
        photoelectrons=photo,
        warnings=list(problem.warnings) + notes + monitor.warnings,
        derived=derived,
        record_every=every,
    )


def derived_spectra(observables, omega0: float, window: str) -> dict:
    """Every registered derived spectrum of a run's recorded series (name -> its dict).

    Parameters
    ----------
    observables : Observables
        The run's recorded series (time, dipole, momentum, acceleration, norm, field).
    omega0 : float
        Carrier frequency of the first pulse (hartree).
    window : str
        The run's spectral window.

    Returns
    -------
    dict of str to dict
        :data:`tdse1d.spectra.derived.DERIVED_SPECTRA` name -> axis, columns, readings.
    """
    from ..spectra.derived import DERIVED_SPECTRA, SERIES

    series = {name: np.asarray(getattr(observables, name)) for name in SERIES}
    return {name: spectrum().compute(series, omega0, window) for name, spectrum in DERIVED_SPECTRA.items()}


def _surface_flux(problem: Problem, prop, mask):
    """The surface-flux accumulator of a run, or (None, reason) if it cannot be set up.

    Surfaces at the last grid points inside the absorbing layers; momenta from
    :func:`tdse1d.spectra.surface_flux.momentum_grid` over the range of
    :func:`tdse1d.spectra.surface_flux.spectrum_top_energy`, capped at the grid's pi / dx, with
    4 samples per photon energy of the softest pulse, and per bandwidth of any pulse
    that ionizes with one photon, at the top energy.
    """
    from ..spectra import surface_flux as _flux

    grid = problem.grid
    x = grid.x
    inside = np.flatnonzero(mask >= 1.0)
    r = _flux.STENCIL_RADIUS
    if inside.size == 0 or inside[0] < r or inside[-1] >= x.size - r or not (x[inside[0]] < 0 < x[inside[-1]]):
        return None, ("no surface-flux photoelectron spectrum: it needs absorbing layers on both sides of "
                      f"the box with at least {r} inner grid points before each")
    right, left = int(inside[-1]), int(inside[0])
    a_t = prop.step_vector_potential
    omegas = [p.omega for p in problem.field.pulses if math.isfinite(p.omega) and p.omega > 0]
    if not omegas:
        return None, "no surface-flux photoelectron spectrum: no pulse has a carrier frequency"
    ip = problem.ionization_potential
    top = _flux.spectrum_top_energy(float(np.max(np.abs(a_t))), ip, omegas)
    # resolve the photon energy of the softest pulse (ATI comb) and the bandwidth of a
    # one-photon line, 4 ln 2 / FWHM of the intensity for a transform-limited pulse
    scales = list(omegas)
    for p in problem.field.pulses:
        envelope = getattr(p, "envelope", None)
        if envelope is not None and p.omega > ip:
            scales.append(4 * math.log(2) / envelope.intensity_fwhm)
    momenta, block, capped = _flux.momentum_grid(top, min(scales), max_momentum=math.pi / grid.spacing)
    note = None
    if capped:
        note = (f"the surface-flux momentum grid was limited to {momenta.size} momenta: fewer than "
                f"{_flux.SAMPLES_PER_PHOTON} samples per photon energy at the top of the spectrum")
    flux = _flux.SurfaceFlux(x, right, left, momenta, block, problem.time.step, prop.vector_potential_steps(),
                             float(a_t[-1]), prop.gauge)
    return flux, note
