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
from ..spectra.reading import Reading, cutoff_family
from ..spectra.time_frequency import default_gabor_width
from .emission import EmissionTimes, TF_TOP, TimeFrequencyMap, emission_times, time_frequency_map
from .photoelectrons import (PhotoelectronEdges, PonderomotiveShift, StreakingShift, _companion_on, field_free_floor,
                             ponderomotive_shift)
from .readings import edge_family, emission_timing, field_crests, streaking_family
from .sidebands import WRAP_ABOVE, DressedLine, dressed_line


#: photoelectron spectra in order of preference: the surface flux method counts the
#: absorbed electrons too, so it is complete on a small box; "mask" is read from files
#: written before it replaced the mask method
PHOTOELECTRON_METHOD_ORDER = ("surface_flux", "mask", "plane_wave")
#: the three-step rows need a plateau: the largest return energy must span more than
#: this many photons of the driving field, twice the 2-photon-wide window over which
#: the cutoff rules smooth the spectrum, or no plateau can be told from its fall
PLATEAU_PHOTONS = 4.0
#: an XUV pulse inside an infrared field: the streaking picture needs A_IR nearly
#: constant over the XUV burst, an infrared phase advance of at most pi/2 over its
#: intensity FWHM (FWHM <= T_IR / 4); the sidebands are resolved when the XUV line is
#: narrower than half the infrared photon energy, 4 ln2 / FWHM <= w_IR / 2 for a
#: Gaussian pulse, i.e. FWHM >= 0.88 T_IR (one cycle taken)
STREAKING_MAX_CYCLES = 0.25
SIDEBAND_MIN_CYCLES = 1.0

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
    #: an XUV pulse inside an infrared field: "streaking", "sidebands" or "" (neither)
    regime: str = ""
    #: whether the three-step rows fit the run (a driving field below Ip with a
    #: plateau, PLATEAU_PHOTONS), and why not
    three_step_applies: bool = False
    three_step_reason: str = ""
    #: readings by the families of rules (tdse1d.spectra.reading.Reading)
    cutoff_reading: Reading | None = None
    direct_reading: Reading | None = None
    backscattered_reading: Reading | None = None
    streaking_reading: Reading | None = None
    photoelectric_reading: Reading | None = None
    #: spectral FWHM of the XUV pulse (hartree): the width within which Einstein's
    #: relation places the photoelectric line
    xuv_bandwidth: float = math.nan
    #: the XUV line dressed by the infrared field, and the infrared Up averaged over the
    #: XUV pulse's intensity (hartree)
    dressed: DressedLine | None = None
    dressing_up: float = math.nan
    #: the ATI comb of a driving field with Up below its photon energy, read like the
    #: dressed line (its shift from n hbar w - Ip, and the spacing of its peaks)
    ati: DressedLine | None = None
    #: "short"/"long" -> tdse1d.analysis.readings.BranchTiming
    timing: dict = field(default_factory=dict)

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
    pulses: tuple  # (omega, peak_field, centre time, A(t) callable, E(t) callable, intensity FWHM) per pulse
    photoelectrons: dict  # method -> (momentum, left, right, energy, energy density)
    estimate: dict  # first pulse's PulseEstimate as a dict
    potential: object = None
    photoelectron_floor: tuple | None = None  # (energy, dP/dE) of the field-free companion


def _xuv_pulse(inputs, ip):
    """Index of the XUV pulse (photon energy above Ip) if there is also a field below Ip."""
    above = [i for i, p in enumerate(inputs.pulses) if p[0] > ip]
    below = [i for i, p in enumerate(inputs.pulses) if p[0] <= ip]
    return above[0] if above and below else None


def _driving_field(inputs, xuv):
    """E(t), A(t) of the classical model: the whole field, or without the XUV pulse."""
    if xuv is None:
        return inputs.electric, inputs.vector_potential
    t = inputs.time
    rest = [q for i, q in enumerate(inputs.pulses) if i != xuv]
    return sum(q[4](t) for q in rest), sum(q[3](t) for q in rest)


def _analyse(inputs: _Inputs) -> RunAnalysis:
    notes = []
    e0 = float(inputs.energies[inputs.initial_state])
    ip = -e0
    est = dict(inputs.estimate)
    have_field = bool(inputs.pulses) and ip > 0 and np.any(inputs.vector_potential != 0)
    xuv = _xuv_pulse(inputs, ip) if have_field else None
    if xuv is not None and float(est.get("photon_energy", math.nan)) > ip:
        # the first pulse is the XUV: the semiclassical numbers are the driving field's
        first = next(q for i, q in enumerate(inputs.pulses) if i != xuv)
        est.update(photon_energy=first[0], peak_field=first[1], ponderomotive_energy=first[1] ** 2 / (4 * first[0] ** 2))
        est["keldysh_parameter"] = math.sqrt(ip / (2 * est["ponderomotive_energy"]))
    omega0 = float(est.get("photon_energy", math.nan))
    up = float(est.get("ponderomotive_energy", math.nan))
    electric, vector = _driving_field(inputs, xuv) if have_field else (inputs.electric, inputs.vector_potential)

    three = traj = None
    if have_field:
        try:
            traj = three_step.trajectories(inputs.time, electric, vector)
            three = three_step.summary(traj, ip)
        except ValueError as exc:
            notes.append(f"three-step model not evaluated: {exc}")

    # an XUV pulse (hbar w > Ip) ionizes by one photon: neither the quasi-static
    # tunnelling picture nor returns in its field apply, so both are left out
    if xuv is not None or (have_field and omega0 > ip):
        notes.append("a pulse with photon energy above Ip: tunnelling estimate and emission times not evaluated")
    quasi_static = have_field and xuv is None and not omega0 > ip
    applies, why_not = _three_step_applies(three, omega0, ip, up)
    regime, bandwidth = "", math.nan
    if xuv is not None:
        regime, bandwidth, text = _xuv_regime(inputs.pulses[xuv], omega0)
        if text:
            notes.append(text)
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

    cutoff, floor_log10, cutoff_reading = None, None, None
    if have_field and omega0 > 0 and inputs.harmonic_power.size:
        # the rule of the run (runner): the field's spectrum through the same window is
        # the companion floor of the acceleration spectrum
        leakage = harmonic_spectrum(inputs.time, inputs.electric, omega0, window=inputs.window).power
        try:
            cutoff = read_cutoff(inputs.harmonic_frequency, inputs.harmonic_power, omega0, ip, noise=leakage)
            floor_log10 = noise_floor(inputs.harmonic_frequency, inputs.harmonic_power, companion=leakage,
                                      half_width=omega0)
            if applies:
                # below the XUV pulse's own spectrum in a two-colour run
                top = inputs.pulses[xuv][0] - 2 * bandwidth if xuv is not None else None
                cutoff_reading = cutoff_family(inputs.harmonic_frequency, inputs.harmonic_power, omega0, ip,
                                               noise=leakage, max_frequency=top)
        except ValueError as exc:
            notes.append(f"harmonic cutoff not read: {exc}")
    harmonic_cutoff = cutoff.frequency if cutoff is not None else math.nan

    tf = emission = None
    timing = {}
    if have_field and omega0 > 0:
        predicted = three.cutoff_energy if three is not None else float(est.get("cutoff_energy", ip))
        read = harmonic_cutoff if math.isfinite(harmonic_cutoff) else 0.0
        try:
            tf = time_frequency_map(inputs.time, inputs.acceleration, omega0, TF_TOP * max(predicted, read))
            if quasi_static and three is not None and three.short_branch:
                period = 2 * math.pi / omega0
                emission = emission_times(tf, three, period)
                if applies:
                    family = {"maximum": emission, "centroid": emission_times(tf, three, period, rule="centroid")}
                    timing = emission_timing(family, field_crests(inputs.time, electric, three, period),
                                             1.0 / default_gabor_width(omega0))
        except ValueError as exc:
            notes.append(f"time-frequency map not evaluated: {exc}")

    method = next((m for m in PHOTOELECTRON_METHOD_ORDER if m in inputs.photoelectrons), None)
    edges = pond = streak = dressed = ati = None
    readings = {}
    dressing_up = math.nan
    if method is not None and have_field:
        p, left, right, energy, density = inputs.photoelectrons[method]
        companion = _companion_on(energy, *(inputs.photoelectron_floor or (None, None)))
        if not np.any(np.nan_to_num(left + right) > 0):
            notes.append("the photoelectron spectrum is empty")
        elif xuv is None:
            reach = 2 * three.max_backscattered_energy if three is not None else None
            readings["direct"], readings["backscattered"], edges = edge_family(
                energy, density, omega0, max_energy=reach, noise=companion)
            pond = ponderomotive_shift(energy, density, omega0, ip, up, noise=companion)
            if up < (1 - WRAP_ABOVE) * omega0:
                # the comb fixes the shift modulo the photon energy: read while Up is below it
                first = math.ceil(ip / omega0) * omega0
                ati = dressed_line(energy, density, first, ip, omega0, max(2 * up, 4 * omega0), noise=companion)
        else:
            omega_x, t_x = inputs.pulses[xuv][0], inputs.pulses[xuv][2]
            if regime == "streaking":
                a_ir = sum(float(q[3](np.array([t_x]))[0]) for i, q in enumerate(inputs.pulses) if i != xuv)
                readings["streaking"], readings["photoelectric"], streak = streaking_family(
                    p, left, right, t_x, omega_x, ip, a_ir)
            elif regime == "sidebands":
                dressing_up = _up_over_xuv(inputs, xuv, vector, omega0)
                width = 2 * math.sqrt(2 * (omega_x - ip)) * 2 * math.sqrt(dressing_up) + dressing_up + 2 * omega0
                dressed = dressed_line(energy, density, omega_x, ip, omega0, width, noise=companion)
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
        regime=regime,
        three_step_applies=applies,
        three_step_reason=why_not,
        cutoff_reading=cutoff_reading,
        direct_reading=readings.get("direct"),
        backscattered_reading=readings.get("backscattered"),
        streaking_reading=readings.get("streaking"),
        photoelectric_reading=readings.get("photoelectric"),
        xuv_bandwidth=bandwidth,
        dressed=dressed,
        dressing_up=dressing_up,
        timing=timing,
        ati=ati,
    )


def _three_step_applies(three, omega0, ip, up):
    """(whether the three-step rows fit the run, why not)."""
    if three is None or not (omega0 > 0 and math.isfinite(up)):
        return False, "no driving field below Ip"
    if not omega0 < ip:
        return False, "the photon energy is above Ip: one-photon ionization, no tunnelling or returns"
    if not three.max_return_energy > PLATEAU_PHOTONS * omega0:
        return False, (f"no plateau: the largest return energy {three.max_return_energy / omega0:.2g} photons "
                       f"is below {PLATEAU_PHOTONS:g} photons of the driving field "
                       f"(Keldysh parameter {math.sqrt(ip / (2 * up)):.3g})")
    return True, ""


def _xuv_regime(xuv_row, omega_ir):
    """("streaking" | "sidebands" | "", spectral FWHM of the XUV pulse, note)."""
    fwhm = float(xuv_row[5])
    # spectral intensity FWHM of a Gaussian pulse of intensity FWHM tau: 4 ln2 / tau
    # (Fourier pair); taken for the other envelopes as well
    bandwidth = 4 * math.log(2) / fwhm if fwhm > 0 else math.nan
    cycles = fwhm * omega_ir / (2 * math.pi)
    if cycles <= STREAKING_MAX_CYCLES:
        return "streaking", bandwidth, ""
    if cycles >= SIDEBAND_MIN_CYCLES:
        return "sidebands", bandwidth, ""
    return "", bandwidth, (f"the XUV pulse lasts {cycles:.2g} infrared cycles (FWHM): too long for streaking "
                           f"(<= {STREAKING_MAX_CYCLES:g}), too short for resolved sidebands "
                           f"(>= {SIDEBAND_MIN_CYCLES:g}); neither is read")


def _up_over_xuv(inputs, xuv, vector, omega_ir):
    """The infrared Up = <A^2>/2 (cycle average), averaged over the XUV pulse's intensity (hartree)."""
    t = inputs.time
    dt = t[1] - t[0]
    half = max(1, int(round(math.pi / omega_ir / dt)))
    kernel = np.ones(2 * half + 1) / (2 * half + 1)
    up_t = 0.5 * np.convolve(np.asarray(vector, float) ** 2, kernel, mode="same")
    weight = inputs.pulses[xuv][4](t) ** 2
    return float(np.sum(up_t * weight) / np.sum(weight))


def _pulse_rows(field_):
    return tuple(
        (float(p.omega), float(getattr(p, "peak_field", math.nan)),
         float(getattr(p, "delay", 0.5 * (p.start + p.end))), p.vector_potential, p.electric,
         float(p.envelope.intensity_fwhm) if hasattr(p, "envelope") else float(p.end - p.start))
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
