"""The strong-field approximation for the pulse of a run, and the numbers read off it.

:func:`sfa_spectra` assembles the SFA of :mod:`tdse1d.semiclassical.sfa_harmonic`,
:mod:`~tdse1d.semiclassical.sfa_orbits` and :mod:`~tdse1d.semiclassical.sfa_photoelectron`
for a :class:`~tdse1d.input.problem.Problem`: the same field, the same ground state on
the same grid and the same Ip as the time-dependent run. :func:`sfa_readings` reads the
cutoff, the photoelectron edges and the emission times per branch off the result with the
same rules the run's own spectra are read with (docs/sfa.md). Numerics only, no I/O.
"""

from __future__ import annotations

import math
import time as _clock
from dataclasses import dataclass

import numpy as np

from ..semiclassical import sfa_harmonic, sfa_orbits, sfa_photoelectron
from ..spectra.cutoff import read_cutoff, running_mean
from ..spectra.harmonic import HarmonicSpectrum, harmonic_spectrum
from ..spectra.reading import Reading, cutoff_family, unresolved
from .photoelectrons import photoelectron_edges
from .run_analysis import PHOTOELECTRON_METHOD_ORDER

__all__ = ["SfaSpectra", "sfa_spectra", "run_energy_axis", "SfaEmissionDeviation", "emission_deviation", "deviating_rung", "SfaReadings", "sfa_readings", "direct_edge", "ENERGY_REACH", "sfa_cutoff_family"]

#: the standalone photoelectron axis runs to this many Up: twice the 10 Up edge, so that
#: the upper half of the axis, where the edge reader takes its flat noise floor
#: (tdse1d.spectra.noise_floor), lies beyond the backscattered electrons
ENERGY_REACH = 20.0
#: points per photon energy on the standalone axis (resolves the ATI comb)
POINTS_PER_PHOTON = 6
#: momentum reach of the dipole table beyond the largest |A| (a.u.): covers the kinetic
#: momenta sqrt(2 (Omega - Ip)) of harmonics up to several times the cutoff
_TABLE_MARGIN = 4.0


@dataclass(frozen=True, eq=False)
class SfaSpectra:
    """SFA harmonic and photoelectron spectra of one pulse (atomic units).

    Attributes
    ----------
    ionization_potential, ponderomotive_energy, omega0, period : float
        Ip and Up (hartree), carrier frequency and period (a.u.) of the first pulse.
    dipole : SfaDipole
        <x>(t) of the short and long branches.
    harmonic, harmonic_short, harmonic_long : HarmonicSpectrum
        Spectra (acceleration form, the run's window) of the total dipole and of each branch.
    orbits : tuple of HalfCycleOrbits
        Quantum orbits of the central half cycles.
    photoelectrons : SfaPhotoelectrons or None
    seconds : dict
        Wall time of each part (s).
    window : str
        The spectral window of the harmonic spectra (the run's ``spectra.window``).
    """

    ionization_potential: float
    ponderomotive_energy: float
    omega0: float
    period: float
    dipole: sfa_harmonic.SfaDipole
    harmonic: HarmonicSpectrum
    harmonic_short: HarmonicSpectrum
    harmonic_long: HarmonicSpectrum
    orbits: tuple
    photoelectrons: sfa_photoelectron.SfaPhotoelectrons | None
    seconds: dict
    window: str = "hann"


def run_energy_axis(result, ponderomotive_energy):
    """The energy axis of a run's photoelectron spectrum (the first of the methods it
    has, in the order of preference of the run's analysis) up to :data:`ENERGY_REACH`
    Up, or None (hartree)."""
    spectra = getattr(result, "photoelectrons", {})
    for method in PHOTOELECTRON_METHOD_ORDER:
        if method not in spectra:
            continue
        e = np.asarray(spectra[method].energy, dtype=float)
        e = e[(e > 0) & (e <= ENERGY_REACH * ponderomotive_energy)]
        if e.size >= 8:
            return e
    return None


def sfa_spectra(problem, *, photoelectrons=True, rescattering=True, energy=None, time_step=None,
                window=None, harmonics=True) -> SfaSpectra:
    """The SFA spectra of a problem's pulse and ground state.

    Parameters
    ----------
    problem : Problem
        From :func:`tdse1d.input.problem.build_problem`; its lowest initial state is
        the ground state of the SFA.
    photoelectrons, rescattering : bool
        Compute the photoelectron spectrum, and its rescattered part.
    energy : array_like, optional
        Photoelectron energies (hartree); default :data:`POINTS_PER_PHOTON` per photon
        energy up to :data:`ENERGY_REACH` Up.
    time_step : float, optional
        SFA time step (a.u.); default :func:`~tdse1d.semiclassical.sfa_harmonic.sfa_time_step`.
    window : ExcursionWindow, optional
        Excursion window of the harmonic dipole.
    harmonics : bool
        Compute the harmonic dipole and the quantum orbits.

    Returns
    -------
    SfaSpectra
    """
    field = problem.field
    if not field.pulses:
        raise ValueError("the SFA needs a laser field; the input has none")
    state = min(problem.config.atom.initial_state)
    ip = -float(problem.states.energies[state])
    if not ip > 0:
        raise ValueError(f"the initial state is not bound (E = {-ip:.4g} hartree): no SFA")
    omega0 = float(field.omega)
    period = 2 * math.pi / omega0
    start, end = problem.time.start, problem.time.end
    probe = np.linspace(field.start, field.end, 20001)
    a_max = float(np.max(np.abs(field.vector_potential(probe))))
    # Up of the first pulse, as everywhere in the report (E0^2 / (4 w^2))
    up = float(problem.pulse_estimates[0].ponderomotive_energy)
    dt = float(time_step) if time_step is not None else sfa_harmonic.sfa_time_step(ip, up)
    count = int(math.ceil((end - start) / dt))
    t = start + dt * np.arange(count + 1)
    sampled = sfa_harmonic.sample_field(t, field.electric(t), field.vector_potential(t))
    grid = problem.grid
    table = sfa_harmonic.dipole_table(grid.x, problem.states.wavefunctions[state],
                                      2 * a_max + math.sqrt(2 * ENERGY_REACH * up) + _TABLE_MARGIN)
    seconds = {}
    win = problem.config.spectra.window
    spectra = (None, None, None)
    dipole, orbits = None, ()
    if harmonics:
        clock = _clock.perf_counter()
        dipole = sfa_harmonic.sfa_dipole(sampled, table, ip, period, window)
        spectra = tuple(harmonic_spectrum(t, s, omega0, win, form="dipole")
                        for s in (dipole.total, dipole.short, dipole.long))
        seconds["harmonic"] = _clock.perf_counter() - clock
        clock = _clock.perf_counter()
        orbits = sfa_orbits.pulse_orbits(t, sampled.electric, sampled.vector_potential, omega0, ip)
        seconds["orbits"] = _clock.perf_counter() - clock
    pe = None
    if photoelectrons:
        clock = _clock.perf_counter()
        if energy is None:
            step = omega0 / POINTS_PER_PHOTON
            energy = step * np.arange(1, int(math.ceil(ENERGY_REACH * up / step)) + 1)
        energy = np.asarray(energy, dtype=float)
        # the amplitudes are complete once the field is over: integrate to its end
        last = int(np.searchsorted(t, field.end)) + 2
        short = sfa_harmonic.sample_field(t[:last], sampled.electric[:last], sampled.vector_potential[:last])
        potential = sfa_photoelectron.potential_table(
            grid.x, problem.potential.value(grid.x), float(np.max(np.sqrt(2 * energy))) + a_max + 1.0)
        pe = sfa_photoelectron.sfa_photoelectrons(short, table, potential, ip, period, energy,
                                                  rescattering=rescattering)
        seconds["photoelectrons"] = _clock.perf_counter() - clock
    return SfaSpectra(ip, up, omega0, period, dipole, *spectra, orbits, pe, seconds, win)


#: decades below its peak at which the direct SFA spectrum is taken to have ended
#: (a convention of ours: the direct spectrum has no plateau to fall to, so the rule of
#: the run's edges, which needs one, does not apply; 3 decades lies past the 2 Up knee
#: where the fall steepens from about 1 to about 3 decades per Up)
DIRECT_DROP = 3.0


def direct_edge(energy, density, photon_energy, drop=DIRECT_DROP) -> float:
    """Last energy where the direct spectrum, log10 smoothed over one photon energy,
    stands within ``drop`` decades of its peak (hartree; the range E >= hbar w / 2)."""
    e = np.asarray(energy, dtype=float)
    d = np.asarray(density, dtype=float)
    use = (e >= 0.5 * photon_energy) & np.isfinite(d) & (d > 0)
    if use.sum() < 8:
        return math.nan
    s = running_mean(e[use], np.log10(d[use]), 0.5 * photon_energy)
    return float(e[use][np.flatnonzero(s >= s.max() - drop)[-1]])


def reading_reach(spectra: SfaSpectra) -> float:
    """Top of the photon-energy axis the SFA cutoff is read on (hartree): twice
    1.32 Ip + 3.17 Up plus 10 orders. Above it the SFA spectrum holds the round-off of
    the dipole amplified by w^4 (the acceleration form), rising with w, which the
    reading rule would take for its noise floor (the run's spectrum has a flat floor up
    to its Nyquist energy); below it the spectrum has fallen exponentially from the
    cutoff, so the upper half of this axis is the SFA's floor."""
    return _reach(spectra.ionization_potential, spectra.ponderomotive_energy, spectra.omega0)


def _reach(ionization_potential, ponderomotive_energy, omega0):
    return 2 * (1.32 * ionization_potential + 3.17 * ponderomotive_energy) + 10 * omega0


def _reading_axis(frequency, power, omega0, ionization_potential, ponderomotive_energy):
    """The SFA harmonic spectrum on the axis its cutoff is read on (0 < w <= the reach)."""
    w = np.asarray(frequency, dtype=float)
    keep = (w > 0) & (w <= _reach(ionization_potential, ponderomotive_energy, omega0))
    return w[keep], np.asarray(power, dtype=float)[keep]


def sfa_cutoff_family(frequency, power, omega0, ionization_potential, ponderomotive_energy) -> Reading:
    """The SFA harmonic cutoff read by the run's family of rules
    (:func:`tdse1d.spectra.reading.cutoff_family`), on the axis up to
    :func:`reading_reach`: the reading the report lays beside the run's own cutoff,
    which is read by the same family.

    Parameters
    ----------
    frequency, power : ndarray
        The SFA harmonic spectrum (hartree, any unit of power).
    omega0, ionization_potential, ponderomotive_energy : float
        Photon energy, Ip and Up (hartree).

    Returns
    -------
    Reading
        Photon energies in hartree.
    """
    w, p = _reading_axis(frequency, power, omega0, ionization_potential, ponderomotive_energy)
    try:
        return cutoff_family(w, p, omega0, ionization_potential)
    except ValueError as exc:
        return unresolved(f"unresolved: {exc}")


@dataclass(frozen=True)
class SfaReadings:
    """Numbers read off the SFA spectra, for the report's SFA column (atomic units).

    Attributes
    ----------
    cutoff : float
        Harmonic cutoff read off the SFA spectrum by :func:`tdse1d.spectra.read_cutoff`
        (hartree; NaN when unresolved, see ``cutoff_reason``).
    cutoff_uncertainty : float
        Half width of that reading (hartree): the rule smooths over +-1 order, so
        one order omega0.
    orbit_cutoff : float
        Quantum-orbit cutoff of the strongest half cycle (hartree), the branch point.
    direct_edge : float
        Edge of the direct SFA spectrum (both sides summed) by :func:`direct_edge`
        (hartree; NaN when not computed).
    backscattered_edge : float
        Edge of the rescattered SFA spectrum (both sides summed) read by the run's rule,
        :func:`tdse1d.analysis.photoelectrons.photoelectron_edges` (hartree; NaN when not
        computed or unresolved).
    emission_energy : ndarray
        Photon energies (hartree) of the emission times below.
    emission_short, emission_long : ndarray
        Quantum-orbit emission times (``Re t`` of the return, a.u.) of the strongest
        half cycle, per branch; NaN beyond the cutoff.
    crest_time : float
        Crest of that half cycle (a.u.).
    cutoff_reason : str
        Empty when the cutoff was read.
    cutoff_family : Reading, optional
        The cutoff read by the run's family of rules (:func:`sfa_cutoff_family`), the
        reading the report's SFA column shows beside the run's cutoff; ``cutoff``
        above is the single rule of the validation case and of scans.
    """

    cutoff: float
    cutoff_uncertainty: float
    orbit_cutoff: float
    direct_edge: float
    backscattered_edge: float
    emission_energy: np.ndarray
    emission_short: np.ndarray
    emission_long: np.ndarray
    crest_time: float
    cutoff_reason: str = ""
    cutoff_family: Reading | None = None


def sfa_readings(spectra: SfaSpectra) -> SfaReadings:
    """Read the cutoff, edges and emission times per branch off :class:`SfaSpectra`."""
    nan = math.nan
    cutoff, reason, family = nan, "no harmonic spectrum", None
    if spectra.harmonic is not None:
        h = spectra.harmonic
        w, p = _reading_axis(h.frequency, h.power, spectra.omega0, spectra.ionization_potential,
                             spectra.ponderomotive_energy)
        est = read_cutoff(w, p, spectra.omega0, spectra.ionization_potential)
        cutoff, reason = est.frequency, est.reason
        family = sfa_cutoff_family(h.frequency, h.power, spectra.omega0, spectra.ionization_potential,
                                   spectra.ponderomotive_energy)
    direct = back = nan
    pe = spectra.photoelectrons
    if pe is not None:
        # each edge off the amplitude that makes it (the SFA keeps them apart): the
        # forward-scattered part of the rescattered amplitude would otherwise hide the
        # direct electrons' knee
        direct = direct_edge(pe.energy, pe.direct_left + pe.direct_right, spectra.omega0)
        if np.any(pe.rescattered_left > 0):
            try:
                back = photoelectron_edges(pe.energy, pe.rescattered_left + pe.rescattered_right,
                                           spectra.omega0).backscattered
            except ValueError:
                pass
    orbit_cutoff = crest = nan
    energy = short = long_ = np.zeros(0)
    if spectra.orbits:
        best = max(spectra.orbits, key=lambda o: o.ponderomotive_energy)
        orbit_cutoff, crest = best.cutoff, best.crest_time
        energy, short, long_ = best.energy, best.emission_short, best.emission_long
    return SfaReadings(float(cutoff), spectra.omega0, float(orbit_cutoff), float(direct), float(back),
                       energy, short, long_, float(crest), reason, family)


@dataclass(frozen=True)
class SfaEmissionDeviation:
    """Run emission times (Gabor maxima) against the SFA quantum orbits, per branch.

    Attributes
    ----------
    short, long : float
        Median over the run's plateau samples of (run time - quantum-orbit time of that
        branch at the same photon energy, in the half cycle whose orbit lies nearest),
        in optical cycles; NaN when no sample meets an orbit.
    samples : int
        Samples compared.
    """

    short: float
    long: float
    samples: int


def emission_deviation(emission, orbits, period) -> SfaEmissionDeviation:
    """Compare the run's emission times with the SFA quantum orbits of every half cycle.

    Parameters
    ----------
    emission : tdse1d.analysis.EmissionTimes
        ``frequency`` (hartree) and ``quantum`` (a.u.) of the run's Gabor maxima.
    orbits : dict
        ``energy`` (E,), ``emission_short`` and ``emission_long`` (H, E), a.u., as
        stored under ``sfa/orbits`` (:func:`tdse1d.io.sfa_file.read_sfa`), or a tuple of
        :class:`~tdse1d.semiclassical.sfa_orbits.HalfCycleOrbits`.
    period : float
        Optical period (a.u.).
    """
    if not isinstance(orbits, dict):
        orbits = {"energy": orbits[0].energy if orbits else np.zeros(0),
                  "emission_short": np.array([o.emission_short for o in orbits]),
                  "emission_long": np.array([o.emission_long for o in orbits])}
    energy = np.asarray(orbits["energy"], dtype=float)
    out, count = {}, 0
    for branch in ("short", "long"):
        table = np.asarray(orbits[f"emission_{branch}"], dtype=float).reshape(-1, energy.size)
        deviations = []
        for f, t in zip(np.asarray(emission.frequency, float), np.asarray(emission.quantum, float)):
            if table.size == 0 or not energy[0] <= f <= energy[-1]:
                continue
            at = np.array([np.interp(f, energy, row, left=np.nan, right=np.nan) for row in table])
            if not np.any(np.isfinite(at)):
                continue
            k = int(np.nanargmin(np.abs(at - t)))
            if abs(at[k] - t) <= 0.5 * period:
                deviations.append((t - at[k]) / period)
        out[branch] = float(np.median(deviations)) if deviations else math.nan
        count = max(count, len(deviations))
    return SfaEmissionDeviation(out["short"], out["long"], count)


def deviating_rung(run, run_uncertainty, sfa, sfa_uncertainty, classical, classical_uncertainty=0.0) -> str:
    """Which rung of the ladder disagrees, for one quantity (any unit, all the same).

    Two values agree when they differ by no more than the sum of their half widths
    (their intervals overlap). Returns ``"none"`` (all three agree), ``"classical"``
    (run and SFA agree, the classical model does not), ``"sfa"`` (run and classical
    agree, the SFA does not), ``"run"`` (SFA and classical agree, the run does not),
    ``"all"`` (no two agree), ``"unclear"`` (the run agrees with both models, which
    disagree with each other: it lies between them) or ``"unknown"`` (a value is NaN).
    """
    values = (run, sfa, classical)
    if not all(math.isfinite(v) for v in values):
        return "unknown"

    def agree(a, ua, b, ub):
        return abs(a - b) <= ua + ub

    rs = agree(run, run_uncertainty, sfa, sfa_uncertainty)
    rc = agree(run, run_uncertainty, classical, classical_uncertainty)
    sc = agree(sfa, sfa_uncertainty, classical, classical_uncertainty)
    if rs and rc and sc:
        return "none"
    if rs and not rc and not sc:
        return "classical"
    if rc and not rs and not sc:
        return "sfa"
    if sc and not rs and not rc:
        return "run"
    return "all" if not (rs or rc or sc) else "unclear"
