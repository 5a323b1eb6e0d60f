"""Families of reading rules for the quantities read off a run's photoelectron spectrum
and time-frequency map: the photoelectron edges (:func:`edge_family`), the streaked
photoelectron line (:func:`streaking_family`) and the emission times of the short and
long branches relative to the field crest (:func:`emission_timing`). Each gives a
:class:`tdse1d.spectra.reading.Reading`: the middle of the range of the rules and the
range (``docs/analysis.md`` says why each rule is in its family). Pure numerics,
atomic units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..spectra.reading import Reading, combine_rules, unresolved
from .photoelectrons import _parabolic_peak, peak_centroid, photoelectron_edges, streaking_shift

#: the backscattered edge: decades below the plateau level (the rule's 1.5, one half
#: decade either side); the direct edge: decades below the direct level (0.5, and
#: 0.2 either side)
BACKSCATTER_DROPS = (1.0, 1.5, 2.0)
DIRECT_RISES = (0.3, 0.5, 0.7)
#: fractions of the peak height above which the streaked line's centroid is taken
STREAK_LEVELS = (0.25, 0.5, 0.75)


def _step_at(axis, value):
    """Sampling step of ``axis`` near ``value`` (0 for a NaN value)."""
    axis = np.asarray(axis, float)
    if not math.isfinite(value) or axis.size < 2:
        return 0.0
    i = int(np.clip(np.searchsorted(axis, value), 1, axis.size - 1))
    return float(axis[i] - axis[i - 1])


def edge_family(energy, energy_density, photon_energy, *, max_energy=None, noise=None):
    """The direct and backscattered edges of a photoelectron spectrum read by the family.

    Rules: :func:`tdse1d.analysis.photoelectron_edges` with the backscattered edge where
    the plateau has fallen ``BACKSCATTER_DROPS`` decades (1, 1.5, 2) and the direct
    edge where the direct distribution has fallen ``DIRECT_RISES`` decades (0.3, 0.5,
    0.7); each rule is checked against the noise floor as that function does.

    Parameters
    ----------
    energy, energy_density : array_like
        Kinetic energy (hartree) and dP/dE (1/hartree), both sides together.
    photon_energy : float
        Photon energy of the driving field (hartree).
    max_energy : float, optional
        End of the search (hartree).
    noise : array_like, optional
        Companion floor dP/dE on the same axis.

    Returns
    -------
    (Reading, Reading, PhotoelectronEdges)
        Direct edge, backscattered edge (hartree), and the reading of the central rule.
    """
    def read(rise, drop):
        return photoelectron_edges(energy, energy_density, photon_energy, rise=rise, drop=drop,
                                   max_energy=max_energy, noise=noise)

    central = read(DIRECT_RISES[1], BACKSCATTER_DROPS[1])
    back = {f"drop {d:g}": read(DIRECT_RISES[1], d) for d in BACKSCATTER_DROPS}
    direct = {f"fall {r:g}": read(r, BACKSCATTER_DROPS[1]) for r in DIRECT_RISES}
    e = np.asarray(energy, float)
    direct_reading = combine_rules({k: v.direct for k, v in direct.items()},
                                   _step_at(e, central.direct), {k: v.direct_reason for k, v in direct.items()})
    back_reading = combine_rules({k: v.backscattered for k, v in back.items()},
                                 _step_at(e, central.backscattered),
                                 {k: v.backscattered_reason for k, v in back.items()})
    return direct_reading, back_reading, central


def streaking_family(momentum, density_left, density_right, xuv_time, xuv_photon_energy, ionization_potential,
                     ir_vector_potential):
    """The streaking shift and the photoelectric line read by the family of peak rules.

    Rules: the centroid of each side's momentum peak over the contiguous region above
    ``STREAK_LEVELS`` (1/4, 1/2, 3/4) of its height, and the parabola-refined maximum;
    each gives ``(|p_left| - p_right) / 2`` and ``(|p_left| + p_right)^2 / 8``
    (:func:`tdse1d.analysis.streaking_shift`, whose noise check decides whether the
    peaks are resolved at all).

    Returns
    -------
    (Reading, Reading, StreakingShift)
        Streaking shift (a.u. of momentum), photoelectric line (hartree), and the
        reading of the central rule.
    """
    base = streaking_shift(momentum, density_left, density_right, xuv_time, xuv_photon_energy,
                           ionization_potential, ir_vector_potential)
    if base.reason:
        return unresolved(base.reason), unresolved(base.reason), base
    p = np.asarray(momentum, float)
    left, right = np.nan_to_num(np.asarray(density_left, float)), np.nan_to_num(np.asarray(density_right, float))
    sides = {f"centroid {lv:g}": (peak_centroid(p, left, level=lv), peak_centroid(p, right, level=lv))
             for lv in STREAK_LEVELS}
    sides["maximum"] = (_parabolic_peak(p, left), _parabolic_peak(p, right))
    dp = float(np.median(np.diff(p)))
    shift = combine_rules({k: 0.5 * (pl - pr) for k, (pl, pr) in sides.items()}, dp)
    line = combine_rules({k: 0.125 * (pl + pr) ** 2 for k, (pl, pr) in sides.items()},
                         0.5 * (base.peak_left + base.peak_right) * dp)
    return shift, line, base


@dataclass(frozen=True)
class BranchTiming:
    """Emission times of one classical branch beside the quantum ones, relative to the
    crest of the field in the half cycle where the electrons were born (optical cycles).

    Attributes
    ----------
    branch : str
        ``"short"`` or ``"long"``.
    classical : float
        Median over the plateau samples of the classical emission time.
    quantum : Reading
        Median of the quantum emission times, read by each rule of
        :data:`tdse1d.analysis.emission.EMISSION_RULES`.
    spread : float
        Half the interquartile range of the quantum times (central rule).
    statistical : float
        Standard error of the quantum median against the branch: sqrt(pi/2) sigma /
        sqrt(n), sigma the scatter of the per-energy deviations from the branch and n
        the independent samples.
    separation : float
        Median distance between the short and the long branch (the effect a reading
        must resolve to tell them apart).
    samples : int
        Independent samples.
    period : float
        Optical period (a.u.).
    """

    branch: str
    classical: float
    quantum: Reading
    spread: float
    statistical: float
    separation: float
    samples: int
    period: float


def field_crests(time, electric, three_step, period):
    """Time of the field crest of the birth half cycle of each branch pair (a.u.).

    The cutoff trajectory of a half cycle returns about 0.7 cycle after the crest it
    was born near (0.05 cycle after it; Corkum 1993), so the crest is the local maximum
    of |E| nearest the cutoff return time minus 0.7 cycle (crests are half a cycle
    apart, so the choice is not ambiguous). NaN where a half cycle has no branch.
    """
    t = np.asarray(time, float)
    e = np.abs(np.asarray(electric, float))
    peaks = np.flatnonzero((e[1:-1] >= e[:-2]) & (e[1:-1] >= e[2:]) & (e[1:-1] > 0)) + 1
    out = []
    for short in three_step.short_branch:
        if short.shape[0] == 0 or not peaks.size:
            out.append(math.nan)
            continue
        guess = float(short[-1, 0]) - 0.7 * period
        nearest = peaks[np.argmin(np.abs(t[peaks] - guess))]
        out.append(float(t[nearest]) if abs(t[nearest] - guess) <= 0.25 * period else math.nan)
    return np.asarray(out)


def emission_timing(emissions, crests, frequency_resolution=None):
    """The short and long branches' emission times beside the quantum ones.

    Parameters
    ----------
    emissions : dict
        Rule name -> :class:`tdse1d.analysis.EmissionTimes` (the first is the central rule).
    crests : ndarray
        Crest time per half cycle (:func:`field_crests`).
    frequency_resolution : float, optional
        Photon-energy spacing of independent samples (hartree), ``1 / sigma`` of the map.

    Returns
    -------
    dict
        ``"short"`` and ``"long"`` -> :class:`BranchTiming`; empty when no sample lies in
        a central half cycle.
    """
    from .emission import _thinned

    central_rule = next(iter(emissions))
    em = emissions[central_rule]
    labels, counts = np.unique(em.half_cycle, return_counts=True)
    if not counts.size:
        return {}
    central = np.flatnonzero(np.isin(em.half_cycle, labels[counts >= 0.5 * counts.max()]))
    central = central[np.isfinite(crests[em.half_cycle[central]])]
    if central.size < 4:
        return {}
    independent = _thinned(em, frequency_resolution, central)
    period = em.period

    def relative(times, rows, e=em):
        return (times[rows] - crests[e.half_cycle[rows]]) / period

    quantum_medians = {rule: float(np.median(relative(e.quantum, central, e))) for rule, e in emissions.items()}
    q_central = relative(em.quantum, central)
    quantum = combine_rules(quantum_medians, _map_step(em) / period)
    spread = 0.5 * float(np.subtract(*np.percentile(q_central, [75, 25])))
    separation = float(np.median(np.abs(em.long[central] - em.short[central]))) / period
    out = {}
    for branch in ("short", "long"):
        deviations = (em.quantum[independent] - getattr(em, branch)[independent]) / period
        n = int(independent.size)
        sigma = float(np.std(deviations, ddof=1)) if n > 1 else math.nan
        out[branch] = BranchTiming(branch, float(np.median(relative(getattr(em, branch), central))), quantum, spread,
                                   math.sqrt(math.pi / 2) * sigma / math.sqrt(n) if n > 1 else math.nan,
                                   separation, n, period)
    return out


def _map_step(em):
    """The time step of the Gabor map the emission times were read from (a.u.)."""
    from .emission import TF_TIMES_PER_CYCLE

    return em.period / TF_TIMES_PER_CYCLE
