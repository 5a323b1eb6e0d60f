"""Harmonic emission read off the run: a Gabor time-frequency map of the dipole
acceleration (:func:`time_frequency_map`) and the quantum emission times read off it
(:func:`emission_times`: the maximum of the Gabor power inside each classical half-cycle
window, per photon energy), compared with the three-step model's branches
(:func:`branch_agreement`, :func:`branch_correlation`). Pure numerics, atomic units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..spectra.time_frequency import default_gabor_width, gabor_transform
from .photoelectrons import _parabolic_peak


#: Gabor map: window centres per optical cycle (the map is subsampled in time so the
#: extra cost at the end of a run stays small), frequency samples, and the top of the
#: frequency axis relative to the larger of the predicted and read-off cutoffs.
TF_TIMES_PER_CYCLE = 40
TF_FREQUENCIES = 320
TF_TOP = 1.4
#: the acceleration is low-pass filtered and decimated so that its Nyquist frequency
#: is this factor above the top of the map (aliasing then stays far below the map)
TF_NYQUIST_MARGIN = 2.0

# --------------------------------------------------------------------------- containers


@dataclass(frozen=True)
class TimeFrequencyMap:
    """Gabor power ``|G(t, w)|^2`` of the dipole acceleration.

    Attributes
    ----------
    time : ndarray, shape (k,)
        Window centres (a.u.).
    frequency : ndarray, shape (m,)
        Photon energies (hartree).
    power : ndarray, shape (k, m)
        Gabor power (a.u.).
    width : float
        Gaussian width sigma of the window (a.u. of time).
    """

    time: np.ndarray
    frequency: np.ndarray
    power: np.ndarray
    width: float


@dataclass(frozen=True)
class EmissionTimes:
    """Quantum emission times per photon energy beside the classical branches.

    One row per (half cycle, photon energy) with a classical return; columns are
    equal-length 1-D arrays (a.u.).

    Attributes
    ----------
    half_cycle : ndarray of int
        Index of the field half cycle (in time order) in the classical summary.
    frequency : ndarray
        Photon energy ``Ip + E_return`` (hartree).
    quantum : ndarray
        Time of the Gabor maximum inside the half cycle's window (a.u.).
    short, long : ndarray
        Classical short- and long-trajectory emission times at that energy (a.u.).
    period : float
        Optical period used to express deviations in cycles (a.u.).
    """

    half_cycle: np.ndarray
    frequency: np.ndarray
    quantum: np.ndarray
    short: np.ndarray
    long: np.ndarray
    period: float

    def deviation_cycles(self, branch="short"):
        """``(quantum - classical) / period`` for ``branch`` ``"short"`` or ``"long"``."""
        return (self.quantum - getattr(self, branch)) / self.period

    def dominant_branch(self):
        """Per row, ``"short"`` or ``"long"``: the classical branch nearer the quantum time."""
        near_short = np.abs(self.quantum - self.short) <= np.abs(self.quantum - self.long)
        return np.where(near_short, "short", "long")


# --------------------------------------------------------------------------- numerics


def _low_pass_decimate(time, signal, top_frequency):
    """Decimate a uniform series so that its Nyquist frequency is >= ``top_frequency``.

    Frequencies above the new Nyquist are removed in Fourier space first, so they do
    not alias into the band kept.
    """
    dt = time[1] - time[0]
    stride = max(1, int(math.floor(math.pi / (top_frequency * dt))))
    if stride == 1:
        return time, signal
    spectrum = np.fft.rfft(signal)
    w = 2 * np.pi * np.fft.rfftfreq(signal.size, dt)
    spectrum[w > math.pi / (stride * dt)] = 0.0
    filtered = np.fft.irfft(spectrum, signal.size)
    return time[::stride], filtered[::stride]


def time_frequency_map(time, acceleration, omega0, top_frequency, *, width=None,
                       times_per_cycle=TF_TIMES_PER_CYCLE, frequencies=TF_FREQUENCIES):
    """Gabor map of the dipole acceleration on a coarse, cheap grid.

    The signal is low-pass filtered and decimated to a Nyquist frequency
    ``TF_NYQUIST_MARGIN * top_frequency``, then transformed with
    :func:`tdse1d.spectra.gabor_transform` (Gabor, J. Inst. Electr. Eng. 93, 429
    (1946), from memory) at ``times_per_cycle`` window centres per optical cycle.

    Parameters
    ----------
    time, acceleration : array_like, shape (n,)
        Uniform times (a.u.) and the dipole acceleration (a.u.).
    omega0 : float
        Carrier frequency (a.u.), for the default width and the time sampling.
    top_frequency : float
        Top of the frequency axis (hartree).
    width : float, optional
        Gaussian width sigma (a.u.); default :func:`tdse1d.spectra.default_gabor_width`.
    times_per_cycle, frequencies : int
        Sampling of the map.

    Returns
    -------
    TimeFrequencyMap
    """
    time = np.asarray(time, dtype=float)
    acceleration = np.asarray(acceleration, dtype=float)
    if not (omega0 > 0 and top_frequency > 0):
        raise ValueError(f"omega0 and top_frequency must be positive, got {omega0}, {top_frequency}")
    sigma = default_gabor_width(omega0) if width is None else float(width)
    t, a = _low_pass_decimate(time, acceleration, TF_NYQUIST_MARGIN * top_frequency)
    period = 2 * math.pi / omega0
    centres = np.arange(t[0], t[-1], period / int(times_per_cycle))
    w = np.linspace(0.0, top_frequency, int(frequencies))
    tc, w, power = gabor_transform(t, a, w, sigma, centres)
    return TimeFrequencyMap(time=tc, frequency=w, power=power, width=sigma)


#: ways of reading the time of a Gabor column (emission_times): the parabola-refined
#: maximum, and the power-weighted centroid of the contiguous peak above half of it
EMISSION_RULES = ("maximum", "centroid")


def _column_time(t, column, rule):
    if rule == "maximum":
        return _parabolic_peak(t, column)
    i = int(np.argmax(column))
    lo = hi = i
    while lo > 0 and column[lo - 1] >= 0.5 * column[i]:
        lo -= 1
    while hi < column.size - 1 and column[hi + 1] >= 0.5 * column[i]:
        hi += 1
    s = slice(lo, hi + 1)
    return float(np.sum(t[s] * column[s]) / np.sum(column[s]))


def emission_times(tf_map, three_step, period, *, plateau=(0.2, 0.9), rule="maximum"):
    """Quantum emission times read off a Gabor map, beside the classical branches.

    For each field half cycle with classical returns and each photon energy ``w`` of
    the map in the plateau, ``Ip + plateau[0] (w_c - Ip) <= w <= Ip + plateau[1]
    (w_c - Ip)`` (``w_c`` the half cycle's classical cutoff), the classical short and
    long emission times at ``w`` are interpolated from the branches; the quantum time
    is the time of the largest Gabor power between the long time minus and the short
    time plus an eighth of a cycle (``rule="maximum"``, refined by a parabola), or the
    power-weighted centroid of the contiguous peak above half that largest power
    (``rule="centroid"``).

    Parameters
    ----------
    tf_map : TimeFrequencyMap
    three_step : tdse1d.semiclassical.three_step.ThreeStepSummary
    period : float
        Optical period (a.u.).
    plateau : (float, float)
        Fractions of the return energy range taken as the plateau.
    rule : {"maximum", "centroid"}
        How the time is read off each column (:data:`EMISSION_RULES`).

    Returns
    -------
    EmissionTimes
    """
    if rule not in EMISSION_RULES:
        raise ValueError(f"rule must be one of {EMISSION_RULES}, got {rule!r}")
    rows = {"half_cycle": [], "frequency": [], "quantum": [], "short": [], "long": []}
    margin = period / 8
    t = tf_map.time
    for k, (short, long) in enumerate(zip(three_step.short_branch, three_step.long_branch)):
        if short.shape[0] < 2 or long.shape[0] < 2:
            continue
        ip = min(short[0, 1], long[0, 1])
        top = short[-1, 1]
        lo, hi = ip + plateau[0] * (top - ip), ip + plateau[1] * (top - ip)
        chosen = np.flatnonzero((tf_map.frequency >= lo) & (tf_map.frequency <= hi))
        for j in chosen:
            w = tf_map.frequency[j]
            t_short = np.interp(w, short[:, 1], short[:, 0])
            t_long = np.interp(w, long[:, 1], long[:, 0])
            window = np.flatnonzero((t >= min(t_long, t_short) - margin) & (t <= max(t_long, t_short) + margin))
            if window.size < 3:
                continue
            column = tf_map.power[window, j]
            rows["half_cycle"].append(k)
            rows["frequency"].append(w)
            rows["quantum"].append(_column_time(t[window], column, rule))
            rows["short"].append(t_short)
            rows["long"].append(t_long)
    arrays = {k: np.asarray(v, dtype=int if k == "half_cycle" else float) for k, v in rows.items()}
    return EmissionTimes(period=float(period), **arrays)


@dataclass(frozen=True)
class BranchAgreement:
    """How far the quantum emission times beat chance on one classical branch.

    Attributes
    ----------
    branch : str
        ``"short"`` or ``"long"``.
    hits, samples : int
        Independent samples (thinned to one per frequency resolution of the map) and
        how many lie within ``band`` of the branch.
    chance : float
        Mean probability of a hit for a time drawn uniformly over each sample's search
        window (what a map without emission scores).
    p_value : float
        Binomial probability of at least ``hits`` hits by chance.
    band : float
        Half width of the band around the branch (optical cycles).
    """

    branch: str
    hits: int
    samples: int
    chance: float
    p_value: float
    band: float

    @property
    def fraction(self) -> float:
        return self.hits / self.samples if self.samples else math.nan


def branch_agreement(emission, branch, *, band=0.1, frequency_resolution=None) -> BranchAgreement:
    """Binomial test of the quantum emission times against one classical branch.

    A sample is a hit when ``|t_quantum - t_branch| <= band`` cycles. A map holding no
    emission (noise, or the real map with its time rows shuffled) puts the maximum
    anywhere in the search window of :func:`emission_times` (the two branch times
    widened by an eighth of a cycle on each side), so it hits with probability
    ``chance`` = (length of the band inside the window) / (window length). Neighbouring
    photon energies are not independent: the Gabor window of width sigma resolves
    energies only ``1 / sigma`` apart, so the samples are thinned to one per
    ``frequency_resolution`` in each half cycle before the binomial tail is taken.

    Parameters
    ----------
    emission : EmissionTimes
    branch : {"short", "long"}
    band : float
        Half width of the band (optical cycles); default 0.1, the Gabor window's time
        resolution sigma = T / 10 (:func:`tdse1d.spectra.default_gabor_width`).
    frequency_resolution : float, optional
        Energy spacing of independent samples (hartree); default one sample per row.

    Returns
    -------
    BranchAgreement
    """
    from scipy.stats import binom

    if branch not in ("short", "long"):
        raise ValueError(f"branch must be 'short' or 'long', got {branch!r}")
    em = emission
    keep = np.zeros(em.frequency.size, dtype=bool)
    keep[_thinned(em, frequency_resolution, np.arange(em.frequency.size))] = True
    t_branch = getattr(em, branch)[keep]
    margin = em.period / 8
    lo = np.minimum(em.short, em.long)[keep] - margin
    hi = np.maximum(em.short, em.long)[keep] + margin
    half_band = band * em.period
    inside = np.clip(t_branch + half_band, lo, hi) - np.clip(t_branch - half_band, lo, hi)
    chance = float(np.mean(inside / (hi - lo))) if keep.any() else math.nan
    hits = int(np.sum(np.abs(em.quantum[keep] - t_branch) <= half_band))
    n = int(keep.sum())
    p_value = float(binom.sf(hits - 1, n, chance)) if n else math.nan
    return BranchAgreement(branch, hits, n, chance, p_value, float(band))


def _thinned(em, frequency_resolution, rows):
    """``rows`` of ``em`` thinned to one per ``frequency_resolution`` in each half cycle."""
    keep = []
    for half in np.unique(em.half_cycle[rows]):
        chosen = rows[em.half_cycle[rows] == half]
        chosen = chosen[np.argsort(em.frequency[chosen])]
        last = -math.inf
        for r in chosen:
            if frequency_resolution is None or em.frequency[r] - last >= frequency_resolution:
                keep.append(r)
                last = em.frequency[r]
    return np.asarray(keep, dtype=int)


@dataclass(frozen=True)
class BranchCorrelation:
    """Correlation of the quantum emission times with one classical branch.

    Attributes
    ----------
    branch : str
    correlation : float
        Pearson r of quantum and classical times, each centred per half cycle.
    samples : int
        Independent samples used (one per frequency resolution, central half cycles).
    p_value : float
        One-sided probability of a correlation at least this large without any.
    """

    branch: str
    correlation: float
    samples: int
    p_value: float


def branch_correlation(emission, branch="long", *, frequency_resolution=None) -> BranchCorrelation:
    """Does the quantum emission time move with photon energy as a classical branch does?

    The two branches run opposite ways (the attochirp: the short-trajectory emission
    time grows with photon energy, the long one falls; Mairesse et al., Science 302,
    1540 (2003), from memory). Within each central half cycle (at least half the
    largest number of samples) the quantum and the classical times are centred on
    their means, and Pearson's r of the pooled samples is tested one-sided (r > 0) on
    samples thinned to one per frequency resolution of the map. A map without emission
    has no such correlation with the long branch; its maxima, spread over a search
    window whose centre moves with the steeper short branch, tend to correlate with
    the short one, so only the long-branch statistic separates a real map from noise
    (tests keep both null maps).

    Parameters
    ----------
    emission : EmissionTimes
    branch : {"short", "long"}
    frequency_resolution : float, optional
        Energy spacing of independent samples (hartree), ``1 / sigma`` of the map.

    Returns
    -------
    BranchCorrelation
    """
    from scipy.stats import pearsonr

    if branch not in ("short", "long"):
        raise ValueError(f"branch must be 'short' or 'long', got {branch!r}")
    em = emission
    labels, counts = np.unique(em.half_cycle, return_counts=True)
    central = np.flatnonzero(np.isin(em.half_cycle, labels[counts >= 0.5 * counts.max()])) if counts.size else np.zeros(0, int)
    rows = _thinned(em, frequency_resolution, central)
    quantum, classical_time = [], []
    for half in np.unique(em.half_cycle[rows]):
        chosen = rows[em.half_cycle[rows] == half]
        q, c = em.quantum[chosen], getattr(em, branch)[chosen]
        quantum.append(q - q.mean())
        classical_time.append(c - c.mean())
    if not rows.size or rows.size < 4:
        return BranchCorrelation(branch, math.nan, int(rows.size), math.nan)
    x, y = np.concatenate(quantum), np.concatenate(classical_time)
    r, p = pearsonr(x, y, alternative="greater")
    return BranchCorrelation(branch, float(r), int(x.size), float(p))
