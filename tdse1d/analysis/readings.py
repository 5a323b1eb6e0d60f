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


#: independent samples a branch needs for its quantum median: with n samples the range
#: [min, max] covers the median of the distribution with probability 1 - 2^(1 - n)
#: (order statistics; Conover, Practical Nonparametric Statistics, from memory), at
#: least 95 % only from n = 6: with fewer, no distribution-free interval says anything
MIN_BRANCH_SAMPLES = 6
#: one-sided p-value below which the times assigned to a branch count as concentrated
#: rather than spread at random over the part of the search window nearest that branch
#: (the threshold of branch_correlation, set before any run)
CONCENTRATION_P = 0.01
#: draws of the Monte Carlo null of that test (p resolved to 1/2001, far below the
#: threshold) and its fixed seed
CONCENTRATION_DRAWS = 2000
CONCENTRATION_SEED = 20261202


@dataclass(frozen=True)
class BranchTiming:
    """Emission times of one classical branch beside the quantum times assigned to it,
    relative to the crest of the field in the half cycle where the electrons were born
    (optical cycles).

    Attributes
    ----------
    branch : str
        ``"short"`` or ``"long"``.
    classical : float
        Median of the classical emission time over the samples assigned to the branch
        (over every plateau sample when none is).
    quantum : Reading
        Median of the quantum emission times assigned to this branch, read by each
        rule of :data:`tdse1d.analysis.emission.EMISSION_RULES`; unresolved (with the
        reason) when a rule has fewer than :data:`MIN_BRANCH_SAMPLES` independent
        samples or its times are no more concentrated than times at random.
    spread : float
        Half the interquartile range of the assigned quantum times (central rule; NaN
        when unresolved).
    statistical : float
        Standard error of the quantum median: sqrt(pi/2) sigma / sqrt(n), sigma the
        scatter of the assigned times' deviations from the branch and n the
        independent samples assigned.
    separation : float
        Median distance between the short and the long branch (the effect a reading
        must resolve to tell them apart).
    samples : int
        Independent samples assigned to the branch (central rule).
    period : float
        Optical period (a.u.).
    concentration_p : float
        Probability of times at least this concentrated about one offset from the
        branch if they were spread at random over the branch's part of the search
        window (central rule; Monte Carlo, :func:`_concentration`).
    """

    branch: str
    classical: float
    quantum: Reading
    spread: float
    statistical: float
    separation: float
    samples: int
    period: float
    concentration_p: float = math.nan


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


def branch_cells(em, rows, branch):
    """Where a time assigned to ``branch`` can lie: the part of the search window of
    :func:`tdse1d.analysis.emission_times` (the two classical times widened by an
    eighth of a cycle) nearer ``branch`` than the other one, per row (a.u.).

    Returns
    -------
    (ndarray, ndarray)
        Lower and upper end of the cell of each row.
    """
    mine, other = getattr(em, branch)[rows], getattr(em, "long" if branch == "short" else "short")[rows]
    middle, margin = 0.5 * (mine + other), em.period / 8
    return np.where(mine <= other, mine - margin, middle), np.where(mine <= other, middle, mine + margin)


def _assigned(em, rows, branch):
    """``rows`` whose quantum time lies nearer ``branch`` than the other branch."""
    return rows[em.dominant_branch()[rows] == branch]


def central_samples(em, crests=None):
    """Rows of ``em`` in the central half cycles (those holding at least half the largest
    number of samples of a half cycle), and with a finite crest when ``crests`` (a.u.,
    per half cycle) is given: the samples the emission-time rows are read over."""
    labels, counts = np.unique(em.half_cycle, return_counts=True)
    if not counts.size:
        return np.zeros(0, dtype=int)
    rows = np.flatnonzero(np.isin(em.half_cycle, labels[counts >= 0.5 * counts.max()]))
    if crests is not None:
        rows = rows[np.isfinite(np.asarray(crests, float)[em.half_cycle[rows]])]
    return rows


def branch_samples(em, branch, crests=None):
    """The samples a branch's row compares: the central samples (:func:`central_samples`)
    whose quantum time lies nearer ``branch``, or every central sample when none does.
    The classical median of the row is taken over them, and so is the SFA value beside
    it (:mod:`tdse1d.analysis.report_sfa`), so that all three columns share one set of
    photon energies and half cycles.

    Returns
    -------
    EmissionTimes
        ``em`` restricted to those rows.
    """
    from dataclasses import replace

    central = central_samples(em, crests)
    rows = _assigned(em, central, branch)
    rows = rows if rows.size else central
    return replace(em, **{name: getattr(em, name)[rows] for name in ("half_cycle", "frequency", "quantum", "short",
                                                                     "long")})


def _concentration(em, rows, branch):
    """Probability that times at random in the branch's cells lie at least as tightly
    around one offset from the branch as the assigned times do (Monte Carlo, NaN with
    fewer than 2 rows).

    The statistic is the median absolute deviation of ``t_quantum - t_branch`` from its
    median: small when the quantum times follow the branch at any constant offset, as
    large as the cells allow for times at random. The null draws each row's time
    uniformly over its cell (:func:`branch_cells`), :data:`CONCENTRATION_DRAWS` times
    with a fixed seed (the p-value is reproducible); ``p = (1 + k) / (1 + draws)`` with
    k the draws at least as concentrated (Davison and Hinkley, Bootstrap Methods and
    their Application (1997), ch. 4, from memory).
    """
    if rows.size < 2:
        return math.nan
    lo, hi = branch_cells(em, rows, branch)
    t_branch = getattr(em, branch)[rows]

    def spread(d):
        return np.median(np.abs(d - np.median(d, axis=-1, keepdims=True)), axis=-1)

    observed = spread(em.quantum[rows] - t_branch)
    null = np.random.default_rng(CONCENTRATION_SEED).uniform(lo, hi, size=(CONCENTRATION_DRAWS, rows.size))
    k = int(np.count_nonzero(spread(null - t_branch) <= observed))
    return (1 + k) / (1 + CONCENTRATION_DRAWS)


def emission_timing(emissions, crests, frequency_resolution=None):
    """Each classical branch's emission times beside the quantum times assigned to it.

    Over the plateau samples of the central half cycles (those holding at least half
    the largest number of samples of a half cycle), each quantum time is assigned to
    the branch whose classical time at that photon energy, in that half cycle, is
    nearer (:meth:`tdse1d.analysis.EmissionTimes.dominant_branch`); times are taken
    after the crest of the birth half cycle (:func:`field_crests`). Per branch and per
    rule, the samples thinned to one per ``frequency_resolution`` in each half cycle
    (independent samples) give:

    * unresolved when fewer than :data:`MIN_BRANCH_SAMPLES` are assigned;
    * unresolved when the assigned times are no more concentrated than times at
      random: a time drawn uniformly over the search window and assigned by
      nearness lies uniformly in the part of the window nearer the branch
      (:func:`branch_cells`); the spread of the assigned times' deviations from the
      branch is compared with that of such random times (:func:`_concentration`), and
      a p-value of :data:`CONCENTRATION_P` or more leaves the branch unresolved.
      Assignment by nearness alone would put the median of random times within a few
      hundredths of a cycle of each branch, so without this test a map without
      emission would "agree";
    * otherwise the median of the assigned times (all assigned samples, not only the
      independent ones, as the row's value; the rules' medians make the reading).

    Parameters
    ----------
    emissions : dict
        Rule name -> :class:`tdse1d.analysis.EmissionTimes` (the first is the central rule).
    crests : ndarray
        Crest time per half cycle (a.u., :func:`field_crests`).
    frequency_resolution : float, optional
        Photon-energy spacing of independent samples (hartree), ``1 / sigma`` of the map.

    Returns
    -------
    dict
        ``"short"`` and ``"long"`` -> :class:`BranchTiming`; empty when fewer than 4
        samples lie in the central half cycles.
    """
    from .emission import _thinned

    crests = np.asarray(crests, float)
    em = emissions[next(iter(emissions))]
    central = central_samples(em, crests)
    if central.size < 4:
        return {}
    period = em.period

    def relative(times, rows, e=em):
        return (times[rows] - crests[e.half_cycle[rows]]) / period

    separation = float(np.median(np.abs(em.long[central] - em.short[central]))) / period
    step = _map_step(em) / period
    out = {}
    for branch in ("short", "long"):
        medians, reasons, found = {}, {}, {}
        for rule, e in emissions.items():
            rows = _assigned(e, central, branch)
            independent = _assigned(e, _thinned(e, frequency_resolution, central), branch)
            p = _concentration(e, independent, branch)
            found[rule] = (rows, independent, p)
            medians[rule], reasons[rule] = math.nan, ""
            if independent.size < MIN_BRANCH_SAMPLES:
                reasons[rule] = (f"unresolved ({independent.size} independent quantum times assigned to the {branch} "
                                 f"branch; a median needs {MIN_BRANCH_SAMPLES})")
            elif not p < CONCENTRATION_P:
                reasons[rule] = (f"unresolved (the quantum times assigned to the {branch} branch are no more "
                                 f"concentrated than times at random: p = {p:.2g})")
            else:
                medians[rule] = float(np.median(relative(e.quantum, rows, e)))
        quantum = combine_rules(medians, step, reasons)
        rows, independent, p = found[next(iter(emissions))]
        n = int(independent.size)
        on = branch_samples(em, branch, crests)
        classical = float(np.median((getattr(on, branch) - crests[on.half_cycle]) / period))
        spread = statistical = math.nan
        if quantum.resolved:
            spread = 0.5 * float(np.subtract(*np.percentile(relative(em.quantum, rows), [75, 25])))
            deviations = (em.quantum[independent] - getattr(em, branch)[independent]) / period
            statistical = math.sqrt(math.pi / 2) * float(np.std(deviations, ddof=1)) / math.sqrt(n)
        out[branch] = BranchTiming(branch, classical, quantum, spread, statistical, separation, n, period, p)
    return out


def _map_step(em):
    """The time step of the Gabor map the emission times were read from (a.u.)."""
    from .emission import TF_TIMES_PER_CYCLE

    return em.period / TF_TIMES_PER_CYCLE
