"""The semiclassical picture beside the quantum result of one run, assembled.

For the run's own field :func:`analyse_run` evaluates the classical three-step model
(:mod:`tdse1d.semiclassical.three_step`), the quasi-static tunnelling yield for the
model's own potential, the Gabor map and emission times (:mod:`.emission`), the
photoelectron edges, the ponderomotive shift and the streaking shift
(:mod:`.photoelectrons`), and gives a :class:`RunAnalysis`. Nothing here reads a file
or prints (a result file is analysed by :mod:`tdse1d.io.analysis_file`); everything is
in atomic units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..semiclassical import three_step, tunnelling
from ..spectra.cutoff import CutoffEstimate, noise_floor, read_cutoff
from ..spectra.harmonic import harmonic_spectrum
from .emission import EmissionTimes, TF_TOP, TimeFrequencyMap, emission_times, time_frequency_map
from .photoelectrons import (PhotoelectronEdges, PonderomotiveShift, StreakingShift, _companion_on, field_free_floor,
                             photoelectron_edges, ponderomotive_shift, streaking_shift)


#: photoelectron spectra in order of preference: the surface flux method counts the
#: absorbed electrons too, so it is complete on a small box; "mask" is read from files
#: written before it replaced the mask method
PHOTOELECTRON_METHOD_ORDER = ("surface_flux", "mask", "plane_wave")

@dataclass(frozen=True)
class RunAnalysis:
    """Semiclassical predictions and the quantum results they are compared with.

    Energies in hartree, times in a.u.; NaN where a quantity does not apply.
    """

    ground_state_energy: float
    ionization_potential: float
    omega0: float
    ponderomotive_energy: float
    keldysh_parameter: float
    barrier_suppression_field: float
    peak_field: float
    three_step: three_step.ThreeStepSummary | None
    trajectories: three_step.ClassicalTrajectories | None
    tunnelling_time: np.ndarray
    tunnelling_probability: np.ndarray
    ionization_probability: float
    harmonic_cutoff: float
    time_frequency: TimeFrequencyMap | None
    emission: EmissionTimes | None
    photoelectron_method: str | None
    edges: PhotoelectronEdges | None
    ponderomotive: PonderomotiveShift | None
    streaking: StreakingShift | None
    notes: tuple = field(default_factory=tuple)
    #: the harmonic cutoff reading (NaN frequency and a reason when unresolved)
    cutoff: CutoffEstimate | None = None
    #: log10 of the harmonic spectrum's noise floor on its frequency axis (a.u.)
    harmonic_floor_log10: np.ndarray | None = None
    #: (energy, dP/dE) of the field-free companion (:func:`field_free_floor`)
    photoelectron_floor: tuple | None = None

    @property
    def tunnelling_yield(self) -> float:
        """Tunnelling ionization probability at the end of the pulse (NaN if not computed)."""
        p = self.tunnelling_probability
        return float(p[-1]) if p.size else math.nan


# --------------------------------------------------------------------------- assembly


@dataclass(frozen=True)
class _Inputs:
    """What the analysis needs of a run, whichever way it was obtained (a.u.)."""

    time: np.ndarray
    electric: np.ndarray
    vector_potential: np.ndarray
    acceleration: np.ndarray
    energies: np.ndarray
    initial_state: int
    ionization_probability: float
    harmonic_frequency: np.ndarray
    harmonic_power: np.ndarray
    window: str
    pulses: tuple  # (omega, peak_field, centre time, A(t) callable) per pulse
    photoelectrons: dict  # method -> (momentum, left, right, energy, energy density)
    estimate: dict  # first pulse's PulseEstimate as a dict
    potential: object = None
    photoelectron_floor: tuple | None = None  # (energy, dP/dE) of the field-free companion


def _xuv_pulse(inputs, ip):
    """Index of the XUV pulse (photon energy above Ip) if there is also a field below Ip."""
    above = [i for i, p in enumerate(inputs.pulses) if p[0] > ip]
    below = [i for i, p in enumerate(inputs.pulses) if p[0] <= ip]
    return above[0] if above and below else None


def _analyse(inputs: _Inputs) -> RunAnalysis:
    notes = []
    e0 = float(inputs.energies[inputs.initial_state])
    ip = -e0
    est = inputs.estimate
    omega0 = float(est.get("photon_energy", math.nan))
    up = float(est.get("ponderomotive_energy", math.nan))
    have_field = bool(inputs.pulses) and ip > 0 and np.any(inputs.vector_potential != 0)

    three = traj = None
    if have_field:
        try:
            traj = three_step.trajectories(inputs.time, inputs.electric, inputs.vector_potential)
            three = three_step.summary(traj, ip)
        except ValueError as exc:
            notes.append(f"three-step model not evaluated: {exc}")

    # an XUV pulse (hbar w > Ip) ionizes by one photon: neither the quasi-static
    # tunnelling picture nor returns in its field apply, so both are left out
    xuv = _xuv_pulse(inputs, ip) if have_field else None
    if xuv is not None or (have_field and omega0 > ip):
        notes.append("a pulse with photon energy above Ip: tunnelling estimate and emission times not evaluated")
    quasi_static = have_field and xuv is None and not omega0 > ip
    t_tun = p_tun = np.zeros(0)
    if quasi_static and inputs.potential is not None:
        try:
            p_full = tunnelling.tunnelling_yield(inputs.time, inputs.electric, inputs.potential, e0)
            stride = max(1, inputs.time.size // 2000)
            t_tun, p_tun = inputs.time[::stride], p_full[::stride]
            if t_tun[-1] != inputs.time[-1]:
                t_tun, p_tun = np.append(t_tun, inputs.time[-1]), np.append(p_tun, p_full[-1])
        except ValueError as exc:
            notes.append(f"tunnelling estimate not evaluated: {exc}")

    cutoff, floor_log10 = None, None
    if have_field and omega0 > 0 and inputs.harmonic_power.size:
        # the rule of the run (runner): the field's spectrum through the same window is
        # the companion floor of the acceleration spectrum
        leakage = harmonic_spectrum(inputs.time, inputs.electric, omega0, window=inputs.window).power
        try:
            cutoff = read_cutoff(inputs.harmonic_frequency, inputs.harmonic_power, omega0, ip, noise=leakage)
            floor_log10 = noise_floor(inputs.harmonic_frequency, inputs.harmonic_power, companion=leakage,
                                      half_width=omega0)
        except ValueError as exc:
            notes.append(f"harmonic cutoff not read: {exc}")
    harmonic_cutoff = cutoff.frequency if cutoff is not None else math.nan

    tf = emission = None
    if have_field and omega0 > 0:
        predicted = three.cutoff_energy if three is not None else float(est.get("cutoff_energy", ip))
        read = harmonic_cutoff if math.isfinite(harmonic_cutoff) else 0.0
        try:
            tf = time_frequency_map(inputs.time, inputs.acceleration, omega0, TF_TOP * max(predicted, read))
            if quasi_static and three is not None and three.short_branch:
                emission = emission_times(tf, three, 2 * math.pi / omega0)
        except ValueError as exc:
            notes.append(f"time-frequency map not evaluated: {exc}")

    method = next((m for m in PHOTOELECTRON_METHOD_ORDER if m in inputs.photoelectrons), None)
    edges = pond = streak = None
    if method is not None and have_field:
        p, left, right, energy, density = inputs.photoelectrons[method]
        if not np.any(np.nan_to_num(left + right) > 0):
            notes.append("the photoelectron spectrum is empty")
        elif xuv is None:
            reach = 2 * three.max_backscattered_energy if three is not None else None
            companion = _companion_on(energy, *(inputs.photoelectron_floor or (None, None)))
            edges = photoelectron_edges(energy, density, omega0, max_energy=reach, noise=companion)
            pond = ponderomotive_shift(energy, density, omega0, ip, up, noise=companion)
        else:
            omega_x, _, t_x, _ = inputs.pulses[xuv]
            a_ir = sum(float(q[3](np.array([t_x]))[0]) for i, q in enumerate(inputs.pulses) if i != xuv)
            streak = streaking_shift(p, left, right, t_x, omega_x, ip, a_ir)
            pond = PonderomotiveShift(False, "an XUV pulse ionizes in one photon: no ATI comb of the IR field",
                                      math.nan, up)
    return RunAnalysis(
        ground_state_energy=float(inputs.energies[0]),
        ionization_potential=ip,
        omega0=omega0,
        ponderomotive_energy=up,
        keldysh_parameter=float(est.get("keldysh_parameter", math.nan)),
        barrier_suppression_field=float(est.get("barrier_suppression_field", math.nan)),
        peak_field=float(est.get("peak_field", math.nan)),
        three_step=three,
        trajectories=traj,
        tunnelling_time=t_tun,
        tunnelling_probability=p_tun,
        ionization_probability=float(inputs.ionization_probability),
        harmonic_cutoff=float(harmonic_cutoff),
        time_frequency=tf,
        emission=emission,
        photoelectron_method=method,
        edges=edges,
        ponderomotive=pond,
        streaking=streak,
        notes=tuple(notes),
        cutoff=cutoff,
        harmonic_floor_log10=floor_log10,
        photoelectron_floor=inputs.photoelectron_floor,
    )


def _pulse_rows(field_):
    return tuple(
        (float(p.omega), float(getattr(p, "peak_field", math.nan)),
         float(getattr(p, "delay", 0.5 * (p.start + p.end))), p.vector_potential)
        for p in field_.pulses
    )


def analyse_run(problem, result) -> RunAnalysis:
    """Analysis of a finished run from its Problem and RunResult.

    Parameters
    ----------
    problem : tdse1d.input.problem.Problem
    result : tdse1d.runs.runner.RunResult

    Returns
    -------
    RunAnalysis
    """
    from ..semiclassical.estimates import as_attributes

    obs = result.observables
    photo = {
        name: (s.momentum, s.density_left, s.density_right, s.energy, s.energy_density)
        for name, s in result.photoelectrons.items()
    }
    return _analyse(_Inputs(
        time=np.asarray(obs.time), electric=np.asarray(obs.electric),
        vector_potential=np.asarray(obs.vector_potential), acceleration=np.asarray(obs.acceleration),
        energies=np.asarray(problem.states.energies), initial_state=min(problem.config.atom.initial_state),
        ionization_probability=result.ionization_probability,
        harmonic_frequency=np.asarray(result.harmonic.frequency), harmonic_power=np.asarray(result.harmonic.power),
        window=problem.config.spectra.window,
        pulses=_pulse_rows(problem.field), photoelectrons=photo,
        estimate=as_attributes(problem.pulse_estimates[0]) if problem.pulse_estimates else {},
        potential=problem.potential,
        photoelectron_floor=_floor_of(problem),
    ))


def _floor_of(problem):
    """(energy, dP/dE) of :func:`field_free_floor`, None for a run without a field."""
    if not problem.field.pulses:
        return None
    spec = field_free_floor(problem)
    return spec.energy, spec.energy_density
