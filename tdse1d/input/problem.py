"""Assemble the physics objects of a run from a validated :class:`~tdse1d.input.schema.RunConfig`.

This is the one layer between the input and the physics core: it reads a tabulated
field file if the input names one, resolves every ``"auto"`` (grid, time step,
field-free time, absorber width) from the semiclassical estimates, fits the softening
to an ionization potential on the run's own grid, and finds the bound states. The
physics modules it hands these objects to never read files.

Order of resolution (the grid needs Ip, and the fit needs the grid): a provisional Ip
(the input's, or the ground state of the model on a fine provisional grid) gives the
estimates; they give the grid; the softening is then fitted on that grid.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace
from functools import cached_property

import numpy as np

from .. import units
from .schema import MAX_NORMALISED_VECTOR_POTENTIAL, RunConfig
from .spec import InputError
from ..semiclassical.estimates import GridAdvice, PulseEstimate, pulse_estimate, recommend_grid
from ..physics.grid import MAX_POINTS, Grid, fast_fft_size
from ..physics.potentials import POTENTIALS, Potential
from ..physics.pulses import ENVELOPES, AnalyticPulse, Field, TabulatedPulse
from ..physics.states import BoundStates, SofteningFitError, bound_states, fit_softening, ground_state_energy

__all__ = ["Problem", "build_problem", "build_field", "model_estimates", "check_absorber"]

#: provisional grid for a first look at the ground state before the real grid is known
_PROVISIONAL = Grid(1024, 0.1)
#: most time steps a run may take
MAX_STEPS = 1e9
#: largest |t| of a run, in time steps: the propagator requires the steps t_n+1 - t_n to
#: be equal to 1e-9, and float64 times carry an error of 2.2e-16 |t| each, so |t| must
#: stay below about 2e-9 / 2.2e-16 / 2 = 4.5e6 steps; half of it leaves a margin
MAX_TIME_IN_STEPS = 2e6
#: largest share of the initial state the absorbing layers may remove with no field
#: over the run: beyond it the state reaches into the layers and the "ionization" of
#: the run is the absorber's, at the percent level
MAX_ABSORBED_AT_REST = 1e-2
#: highest initial-state index accepted
MAX_INITIAL_STATE = 30
#: default field-free time after the pulses, in optical cycles of the first pulse
AFTER_PULSE_CYCLES = 2.0
#: field-free run length when there is no pulse at all (a.u.)
FIELD_FREE_DURATION = 100.0


@dataclass(frozen=True)
class TimeAxis:
    """Uniform time steps from ``start`` to ``end`` (a.u.)."""

    start: float
    end: float
    steps: int

    @property
    def step(self) -> float:
        return (self.end - self.start) / self.steps

    @property
    def times(self) -> np.ndarray:
        return self.start + self.step * np.arange(self.steps + 1)


@dataclass(frozen=True)
class Problem:
    """Everything a run needs, in atomic units.

    Attributes
    ----------
    config : RunConfig
    grid : Grid
    potential : Potential
        With the softening fitted when the input asked for an ionization potential.
    field : Field
    time : TimeAxis
    states : BoundStates
    pulse_estimates : tuple of PulseEstimate
    advice : GridAdvice
    warnings : tuple of str
        Things the user should know (non-zero field area, a grid coarser than advised).
    """

    config: RunConfig
    grid: Grid
    potential: Potential
    field: Field
    time: TimeAxis
    states: BoundStates
    pulse_estimates: tuple[PulseEstimate, ...]
    advice: GridAdvice
    warnings: tuple[str, ...] = ()

    @property
    def ionization_potential(self) -> float:
        """-E of the (lowest listed) initial state (Hartree)."""
        return -float(self.states.energies[min(self.config.atom.initial_state)])

    @cached_property
    def absorber_width(self) -> float:
        width = self.config.absorber.width
        return self.advice.absorber_width if width is None else width


def _read_field_table(config: RunConfig, index: int, laser):
    path = config.resolve_path(laser.field_file)
    key = f"laser.{index}.field_file"
    try:
        data = np.loadtxt(path, comments="#", delimiter=None, ndmin=2)
    except OSError:
        raise InputError(f"cannot read the field file {str(path)!r}", key, config.source) from None
    except UnicodeDecodeError as exc:
        raise InputError(f"the field file {str(path)!r} is not text: byte {exc.start} is not UTF-8", key,
                         config.source) from None
    except ValueError as exc:
        # numpy's message quotes the offending text; say where it is, never what (the
        # file may be anything, and its contents do not belong in logs)
        where = re.search(r"at row \d+(, column \d+)?", str(exc))
        raise InputError(
            f"the field file {str(path)!r} is malformed: not a table of numbers in two columns (time, field)"
            + (f"; unreadable {where.group(0)}" if where else ""),
            key, config.source) from None
    if data.shape[1] != 2 or data.shape[0] < 4:
        raise InputError(
            f"the field file {str(path)!r} must have two columns (time, field) and at least 4 rows, "
            f"got shape {data.shape}",
            key,
            config.source,
        )
    if not np.all(np.isfinite(data)):
        raise InputError(f"the field file {str(path)!r} holds non-finite values", key, config.source)
    for name, dim in (("time_unit", "time"), ("field_unit", "electric_field")):
        try:
            scale = units.to_atomic(f"1 {getattr(laser, name)}", dim)
        except units.UnitError as exc:
            raise InputError(str(exc), f"laser.{index}.{name}", config.source) from None
        if name == "time_unit":
            t = data[:, 0] * scale
        else:
            e = data[:, 1] * scale
    if np.any(np.diff(t) <= 0):
        raise InputError(f"the times in {str(path)!r} must increase strictly", key, config.source)
    # the relativistic bound of analytic pulses (config.MAX_NORMALISED_VECTOR_POTENTIAL),
    # on the largest |A| = |int E dt| of the table (trapezoid rule)
    a_max = float(np.max(np.abs(np.concatenate([[0.0], np.cumsum(0.5 * (e[1:] + e[:-1]) * np.diff(t))]))))
    if not a_max < MAX_NORMALISED_VECTOR_POTENTIAL * units.SPEED_OF_LIGHT_AU:
        raise InputError(
            f"relativistic: the vector potential of the field in {str(path)!r} reaches {a_max:.3g} a.u., "
            f"{a_max / units.SPEED_OF_LIGHT_AU:.3g} m c / e, outside the non-relativistic Schrodinger equation",
            key, config.source)
    return t, e


def _dominant_frequency(t, e):
    tt = np.linspace(t[0], t[-1], 4 * len(t))
    ee = np.interp(tt, t, e)
    power = np.abs(np.fft.rfft(ee)) ** 2
    freq = 2 * np.pi * np.fft.rfftfreq(len(tt), tt[1] - tt[0])
    return float(freq[1 + np.argmax(power[1:])])


def build_field(config: RunConfig) -> Field:
    """The run's total field from its ``[[laser]]`` tables."""
    pulses = []
    for i, laser in enumerate(config.lasers):
        if laser.field_file is not None:
            t, e = _read_field_table(config, i, laser)
            omega = laser.omega if laser.omega is not None else _dominant_frequency(t, e)
            pulses.append(TabulatedPulse(t, e, omega, delay=laser.delay))
        else:
            envelope = ENVELOPES[laser.envelope].from_config(laser, laser.omega)
            pulses.append(AnalyticPulse(envelope, laser.omega, laser.amplitude, laser.cep, laser.delay, laser.chirp))
    return Field(pulses)


#: results of the fit and the bound states kept per process, keyed by their arguments
#: (atom, grid, Ip): the points of a scan on one worker share them (a worker runs
#: many points of one atom on one grid); each costs a dense solve of up to 4096 points
_MEMO: dict = {}
_MEMO_SIZE = 16
#: the store that keeps these results between processes, installed by the command layer
#: (:func:`tdse1d.io.problem_store.problem_store`), or None: ``load(name, args, kwargs)``
#: returns the value or None, ``save(name, args, kwargs, value)`` keeps it
_STORE = None


def use_store(store):
    """Install ``store`` (or None) for :func:`_memo`; returns the store it replaces."""
    global _STORE
    previous, _STORE = _STORE, store
    return previous


def _memo(function, *args, **kwargs):
    """``function(*args, **kwargs)``, computed once per process for hashable arguments,
    and read from the installed store (:func:`use_store`) before it is computed.

    A cached :class:`BoundStates` has read-only arrays (shared by the runs that use
    it). Arguments that cannot be hashed (a potential holding an array) are not cached.
    """
    try:
        key = (function.__name__, args, tuple(sorted(kwargs.items())))
        hash(key)
    except TypeError:
        return function(*args, **kwargs)
    if key not in _MEMO:
        name = f"{function.__module__}.{function.__qualname__}"
        value = None if _STORE is None else _STORE.load(name, key[1], key[2])
        if value is None:
            value = function(*args, **kwargs)
            if _STORE is not None:
                _STORE.save(name, key[1], key[2], value)
        if isinstance(value, BoundStates):
            for array in (value.energies, value.wavefunctions, value.residuals):
                if isinstance(array, np.ndarray):
                    array.setflags(write=False)
        if len(_MEMO) >= _MEMO_SIZE:
            _MEMO.pop(next(iter(_MEMO)))
        _MEMO[key] = value
    return _MEMO[key]


def _potential(config: RunConfig) -> Potential:
    atom = config.atom
    cls = POTENTIALS[atom.model]
    if atom.fit_softening:
        if not cls.fittable:
            raise InputError(f"the {atom.model} model has no softening to fit (it is not fittable)",
                             "atom.ionization_potential", config.source)
        # a placeholder softening, replaced by the fit
        atom = atom.with_softening(1.0)
    return cls.from_config(atom)


def model_estimates(potential: Potential, field: Field, ionization_potential: float, propagation=None,
                    with_step: bool = True, with_barrier: bool = True):
    """Semiclassical estimates for each pulse of ``field`` and the grid they call for.

    The time step is the largest whose splitting error, estimated on the model's core
    (:mod:`tdse1d.semiclassical.step_error`), is within ``propagation.tolerance`` for
    ``propagation``'s scheme (the default scheme and tolerance without it); with
    ``with_step`` False the step is not estimated (the sampling limit only). With
    ``with_barrier`` False the barrier-suppression field is not solved (NaN in the
    pulses' estimates; the grid does not depend on it): for a scan's cost of a point,
    which would otherwise load the tunnelling module's scipy parts before the scan starts."""
    bsi = _memo(barrier_field, potential, -ionization_potential) if with_barrier else math.nan
    pulses = [pulse_estimate(p.omega, p.peak_field, ionization_potential, bsi) for p in field.pulses]
    depth = -float(np.min(potential.value(np.linspace(-20, 20, 4001))))
    step_error = _step_error(potential, propagation) if with_step else None
    return pulses, recommend_grid(pulses, ionization_potential, max(depth, 0.0), step_error)


def barrier_field(potential: Potential, energy: float) -> float:
    """The barrier-suppression field (a.u.) of a state of ``energy`` (Hartree), NaN for a
    confining trap (harmonic oscillator), which has no barrier to suppress."""
    from ..semiclassical.tunnelling import barrier_suppression_field

    try:
        return barrier_suppression_field(potential, energy)
    except ValueError:
        return math.nan


def _step_error(potential: Potential, propagation):
    """``(momentum, largest) -> StepError`` for the run's scheme and tolerance."""
    from ..physics.schemes import DEFAULT_SCHEME_FOR_ORDER, SCHEMES
    from ..semiclassical.step_error import DEFAULT_TOLERANCE, step_for_tolerance

    name = propagation.scheme_name if propagation is not None else DEFAULT_SCHEME_FOR_ORDER[2]
    tolerance = getattr(propagation, "tolerance", None) or DEFAULT_TOLERANCE
    scheme = SCHEMES[name]

    def step_error(momentum, largest):
        return _memo(step_for_tolerance, potential, momentum, tuple(scheme.weights), scheme.order, tolerance,
                     first=largest, largest=largest)

    return step_error


def build_problem(config: RunConfig, with_states: bool = True) -> Problem:
    """Resolve a configuration into a :class:`Problem`.

    Parameters
    ----------
    config : RunConfig
    with_states : bool
        Compute all bound states (otherwise only what the fit and estimates need).

    Raises
    ------
    InputError
        For a field file that cannot be read, an unreachable ionization potential, or
        an initial state that does not exist.
    """
    atom = config.atom
    if getattr(POTENTIALS[atom.model], "dimensions", 1) != 1:
        # its states and its run: tdse1d.input.pair_problem, tdse1d.runs.pair_runner
        raise InputError(f"the {atom.model} model's wavefunction has two coordinates: 'tdse1d states' and "
                         "'tdse1d run' take it, this command does not yet", "atom.model", config.source)
    field = build_field(config)
    potential = _potential(config)
    notes = []
    initial = min(atom.initial_state)

    # provisional Ip, for the estimates that fix the grid
    if atom.fit_softening:
        ip = atom.ionization_potential
        try:
            provisional_softening = _memo(fit_softening, _PROVISIONAL, potential, ip)
            potential = potential.with_softening(provisional_softening)
        except SofteningFitError as exc:
            raise InputError(str(exc), "atom.ionization_potential", config.source) from None
    if max(atom.initial_state) >= MAX_INITIAL_STATE:
        raise InputError(
            f"state {max(atom.initial_state)} requested; the bound states are counted from 0 and at most "
            f"{MAX_INITIAL_STATE} are looked for",
            "atom.initial_state",
            config.source,
        )
    if initial == 0:
        ip = -_memo(ground_state_energy, _PROVISIONAL, potential)
    else:
        ip = -float(bound_states(_PROVISIONAL, potential, count=initial + 1).energies[initial])
    if not ip > 0:
        ip = 1.0  # a trap without continuum: estimates only size the box
    pulses, advice = model_estimates(potential, field, ip, config.propagation,
                                     with_step=config.propagation.time_step is None)

    grid_cfg = config.grid
    spacing = grid_cfg.spacing if grid_cfg.spacing is not None else advice.spacing
    if grid_cfg.points is not None:
        points = grid_cfg.points
    else:
        needed = 2 * advice.half_width / spacing
        if needed > MAX_POINTS:
            raise InputError(
                f"the pulses call for a box of +-{advice.half_width:.4g} bohr at a spacing of {spacing:.3g} bohr, "
                f"{needed:.3g} points, more than the {MAX_POINTS} a run can hold; check the wavelength and "
                "intensity, or set grid.points and grid.spacing yourself",
                "grid.points",
                config.source,
            )
        points = fast_fft_size(int(math.ceil(needed)))
    if points > MAX_POINTS:
        raise InputError(f"at most {MAX_POINTS} points, got {points}", "grid.points", config.source)
    if points % 2:
        raise InputError(f"must be even for the Fourier grid, got {points}", "grid.points", config.source)
    grid = Grid(points, spacing)
    if grid.half_width < advice.half_width * 0.75:
        notes.append(
            f"the box half-width {grid.half_width:.1f} bohr is well below the advised {advice.half_width:.1f} bohr "
            "(quiver excursion plus absorber)"
        )
    if grid.max_momentum < advice.max_momentum / 1.5:
        notes.append(
            f"the grid's largest momentum {grid.max_momentum:.2f} a.u. is below the {advice.max_momentum / 1.5:.2f} a.u. "
            "the pulse can give an electron"
        )

    if atom.fit_softening:
        try:
            # the provisional fit is close (the grids differ in spacing only): Newton from it
            a = _memo(fit_softening, grid, potential, atom.ionization_potential, guess=provisional_softening)
        except SofteningFitError as exc:
            raise InputError(str(exc), "atom.ionization_potential", config.source) from None
        potential = potential.with_softening(a)

    count = atom.bound_states
    if count is not None:
        count = max(count, max(atom.initial_state) + 1)
    if not with_states:
        count = max(atom.initial_state) + 1
    states = _memo(bound_states, grid, potential, count=count)
    if max(atom.initial_state) >= len(states):
        raise InputError(
            f"state {max(atom.initial_state)} requested but the model has {len(states)} bound states on this grid",
            "atom.initial_state",
            config.source,
        )
    ip = -float(states.energies[initial])
    if ip > 0:
        pulses, _ = model_estimates(potential, field, ip, with_step=False)

    prop = config.propagation
    dt = prop.time_step if prop.time_step is not None else advice.time_step
    if prop.after_pulse is not None:
        after = prop.after_pulse
    elif field.pulses:
        after = AFTER_PULSE_CYCLES * 2 * math.pi / field.omega
    else:
        after = FIELD_FREE_DURATION
    start = field.start
    end = field.end + after
    n_steps = (end - start) / dt
    if not n_steps <= MAX_STEPS:
        raise InputError(
            f"the run lasts {end - start:.4g} a.u., {n_steps:.3g} steps of {dt:.3g} a.u.: more than the {MAX_STEPS:.0e} "
            "a run may take; check the pulse lengths, after_pulse and the time step",
            "propagation.time_step",
            config.source,
        )
    steps = max(1, int(math.ceil(n_steps - 1e-9)))
    reach = max(abs(start), abs(end)) / dt
    if reach > MAX_TIME_IN_STEPS:
        i = max(range(len(field.pulses)), key=lambda k: max(abs(field.pulses[k].start), abs(field.pulses[k].end)),
                default=None)
        key = "propagation.after_pulse"
        if i is not None:
            laser = config.lasers[i]
            half = 0.5 * (field.pulses[i].end - field.pulses[i].start)
            if laser.field_file is not None:
                key = f"laser.{i}.field_file"
            elif abs(laser.delay) > half:
                key = f"laser.{i}.delay"
            else:
                key = f"laser.{i}.{'cycles' if laser.cycles is not None else 'fwhm'}"
        raise InputError(
            f"the run reaches |t| = {max(abs(start), abs(end)):.4g} a.u., {reach:.3g} steps of {dt:.3g} a.u. from "
            f"t = 0: more than the {MAX_TIME_IN_STEPS:.0e} at which double-precision times still give equal "
            "steps; shorten the pulses or their delays, or lengthen propagation.time_step",
            key, config.source)
    quiver = max((p.quiver_amplitude for p in pulses), default=0.0)
    inner = grid.half_width - (config.absorber.width if config.absorber.width is not None else advice.absorber_width)
    if config.absorber.type != "none" and 0 < inner < quiver:
        notes.append(
            f"the unabsorbed region +-{inner:.1f} bohr is smaller than the quiver amplitude {quiver:.1f} bohr: "
            "electrons are absorbed before they can return to the core (no recollision)")
    for p in field.pulses:
        if isinstance(p, TabulatedPulse) and abs(p.area) > 1e-6 * max(p.peak_field, 1e-300) * (p.end - p.start):
            notes.append(
                f"the tabulated field has a non-zero area, int E dt = {p.area:.3e} a.u., so A = {-p.area:.3e} a.u. "
                "remains after the pulse"
            )
    return Problem(
        config=config,
        grid=grid,
        potential=potential,
        field=field,
        time=TimeAxis(start, end, steps),
        states=states,
        pulse_estimates=tuple(pulses),
        advice=advice,
        warnings=tuple(notes),
    )


def check_absorber(problem: Problem) -> None:
    """Refuse absorbing layers that leave no room for the atom (before a run; the bound
    states of the same input are found on any box, so :func:`build_problem` does not
    refuse them, and only warns when the layers leave no room for the quiver motion).

    The layers of ``absorber.width`` on each side must leave an unabsorbed region, and
    the initial state must fit in it: with no field at all, the layers remove from a
    stationary state a share 2 <W> dt per step (the first-order decay rate of a state
    under a weak absorbing potential; here 1 - sum M^2 |phi|^2 dx for the step factor
    M), which over the run must stay below :data:`MAX_ABSORBED_AT_REST`. An inner
    region smaller than the quiver amplitude E0/w^2 is allowed (absorbing electrons
    before they return is a way to remove recollisions), but said.

    Raises
    ------
    InputError
        Naming ``absorber.width``.
    """
    from ..physics.absorbers import ABSORBERS

    config, grid, states = problem.config, problem.grid, problem.states
    cfg = config.absorber
    if cfg.type == "none":
        return
    width = problem.absorber_width
    given = "" if cfg.width is not None else " (the automatic width)"
    inner = grid.half_width - width
    box = f"a box of +-{grid.half_width:.4g} bohr ({grid.points} points of {grid.spacing:.4g} bohr)"
    if inner <= 0:
        raise InputError(
            f"absorbing layers of {width:.4g} bohr{given} on each side leave no unabsorbed region in {box}; "
            "narrow the absorber or enlarge the grid (grid.points)", "absorber.width", config.source)
    factor = ABSORBERS[cfg.type](cfg.exponent, cfg.strength).step_factor(grid, width, problem.time.step)
    density = states.wavefunctions[list(config.atom.initial_state)] ** 2 * grid.spacing
    per_step = float(np.max(np.sum((1.0 - factor**2) * density, axis=1)))
    at_rest = -math.expm1(problem.time.steps * math.log1p(-min(per_step, 1.0 - 1e-16)))
    if at_rest > MAX_ABSORBED_AT_REST:
        raise InputError(
            f"the initial state reaches into the absorbing layers ({width:.4g} bohr{given} of {box}, "
            f"unabsorbed +-{inner:.4g} bohr): with no field they would remove {at_rest:.3g} of it over the run; "
            "narrow the absorber or enlarge the grid (grid.points)", "absorber.width", config.source)
