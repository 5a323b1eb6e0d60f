"""The semiclassical picture beside the quantum result of one run.

For the run's own field this module evaluates the classical three-step model
(:mod:`tdse1d.semiclassical.classical`), the quasi-static tunnelling yield for the model's own
potential, a Gabor time-frequency map of the dipole acceleration with the quantum
emission times read off it, the photoelectron edges read off the spectrum, the
ponderomotive shift of the ATI comb where it can be measured, and, for a run with an
XUV pulse and an IR field, the streaking shift of the photoelectron peak. Nothing here
prints; everything is in atomic units.

Entry points
------------
:func:`analyse_run`
    From a :class:`~tdse1d.input.problem.Problem` and a :class:`~tdse1d.run.runner.RunResult`
    (used at the end of a run); gives a :class:`RunAnalysis`.
:func:`analyse_file`
    From an open result file (h5py.File). The tunnelling estimate needs the
    potential, which the file does not hold; it is read from ``/classical/tunnelling``
    if the run stored it, and left out (NaN) otherwise.
:func:`write_analysis`
    Store a :class:`RunAnalysis` in a result file under ``/classical``,
    ``/spectra/time_frequency``, ``/spectra/photoelectron/edges`` and ``/streaking``
    (every dataset has a ``units`` attribute). :func:`analyse_file` recomputes the
    rest from the stored arrays and takes the tunnelling curve from
    ``/classical/tunnelling`` when the run stored it.

Rules (also in ``docs/analysis.md``)
------------------------------------
Photoelectron edges
    :func:`photoelectron_edges`: a plateau-level fixed point on the smoothed
    log-spectrum; the direct edge is where the spectrum first comes down to half a
    decade above the rescattering plateau, the backscattered edge where it last stays
    within ``drop`` decades of it.
Quantum emission times
    :func:`emission_times`: the maximum of the Gabor power inside each classical
    half-cycle window, per photon energy.
Streaking
    :func:`streaking_shift`: the centroids of the left and right photoelectron peaks,
    ``p_right = p0 - A_IR(t_x)`` and ``|p_left| = p0 + A_IR(t_x)``, so the measured
    shift is ``(|p_left| - p_right) / 2``, which cancels any common shift of both.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from .semiclassical import classical
from .spectra.cutoff import NOISE_MARGIN, CutoffEstimate, noise_floor, read_cutoff, running_mean, unresolved_reason
from .spectra.time_frequency import default_gabor_width, gabor_transform
from .spectra.harmonic import harmonic_spectrum
from .io.store import write_dataset

__all__ = [
    "TimeFrequencyMap",
    "EmissionTimes",
    "PhotoelectronEdges",
    "PonderomotiveShift",
    "StreakingShift",
    "RunAnalysis",
    "time_frequency_map",
    "emission_times",
    "BranchAgreement",
    "branch_agreement",
    "BranchCorrelation",
    "branch_correlation",
    "photoelectron_edges",
    "ponderomotive_shift",
    "peak_centroid",
    "streaking_shift",
    "field_free_floor",
    "analyse_run",
    "analyse_file",
    "write_analysis",
    "PHOTOELECTRON_METHOD_ORDER",
]

#: Gabor map: window centres per optical cycle (the map is subsampled in time so the
#: extra cost at the end of a run stays small), frequency samples, and the top of the
#: frequency axis relative to the larger of the predicted and read-off cutoffs.
TF_TIMES_PER_CYCLE = 40
TF_FREQUENCIES = 320
TF_TOP = 1.4
#: the acceleration is low-pass filtered and decimated so that its Nyquist frequency
#: is this factor above the top of the map (aliasing then stays far below the map)
TF_NYQUIST_MARGIN = 2.0

#: photoelectron spectra in order of preference: the surface flux method counts the
#: absorbed electrons too, so it is complete on a small box; "mask" is read from files
#: written before it replaced the mask method
PHOTOELECTRON_METHOD_ORDER = ("surface_flux", "mask", "plane_wave")

#: decades by which the smoothed spectrum falls below the direct level at the direct
#: edge (and may stay above the plateau where the plateau starts), and falls below
#: the plateau level at the backscattered edge (see photoelectron_edges)
DIRECT_RISE = 0.5
BACKSCATTER_DROP = 1.5

#: minimum contrast of the ATI comb (first Fourier coefficient of dP/dE at period
#: hbar*w over the direct region, relative to the mean) for its offset to count
ATI_CONTRAST = 0.1


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


@dataclass(frozen=True)
class PhotoelectronEdges:
    """Edges read off a photoelectron energy spectrum by :func:`photoelectron_edges`.

    Attributes
    ----------
    direct, backscattered : float
        Kinetic energies of the direct and backscattered edges (hartree); NaN when
        the spectrum has no plateau to read them from.
    plateau_log10 : float
        Level of the rescattering plateau, median of the smoothed log10 dP/dE.
    peak_log10 : float
        Largest smoothed log10 dP/dE (the direct peak).
    smoothed_log10 : ndarray
        The smoothed log10 dP/dE on the input energy axis (for plotting).
    noise_floor_log10 : ndarray
        Noise floor of the spectrum on the input energy axis, log10 dP/dE
        (:func:`tdse1d.spectra.noise_floor`; NaN where the spectrum is not used).
    direct_reason, backscattered_reason : str
        Empty for an edge read; otherwise why the edge is NaN, e.g.
        ``"unresolved (within 0.4 decades of the noise floor)"``.
    """

    direct: float
    backscattered: float
    plateau_log10: float
    peak_log10: float
    smoothed_log10: np.ndarray
    noise_floor_log10: np.ndarray | None = None
    direct_reason: str = ""
    backscattered_reason: str = ""


@dataclass(frozen=True)
class PonderomotiveShift:
    """Offset of the ATI comb and the ponderomotive shift it implies.

    Attributes
    ----------
    measurable : bool
    reason : str
        Why the shift is or is not measurable.
    measured : float
        ``(n hbar w - Ip - E_n) mod hbar w`` from the comb offset (hartree), NaN if not
        measurable (also when the comb lies within the noise margin of the floor).
    predicted : float
        Up of the peak field (hartree).
    """

    measurable: bool
    reason: str
    measured: float
    predicted: float


@dataclass(frozen=True)
class StreakingShift:
    """Photoelectron peak of an XUV pulse streaked by an IR field (a.u.).

    Attributes
    ----------
    xuv_time : float
        Centre of the XUV pulse.
    xuv_photon_energy : float
    initial_momentum : float
        ``p0 = sqrt(2 (hbar w_X - Ip))``.
    vector_potential : float
        ``A_IR(t_X)``, the vector potential of the other pulses at the XUV centre.
    peak_right, peak_left : float
        Centroids of the photoelectron peak on each side (momentum magnitudes).
    measured : float
        ``(peak_left - peak_right) / 2``; the classical prediction is ``A_IR(t_X)``.
    photoelectric_energy : float
        ``(peak_left + peak_right)^2 / 8``, the peak energy without the streaking
        shift; Einstein's relation predicts ``hbar w_X - Ip``.
    reason : str
        Empty when the peaks stand clear of the noise floor; otherwise why
        ``measured`` and ``photoelectric_energy`` are NaN.
    """

    xuv_time: float
    xuv_photon_energy: float
    initial_momentum: float
    vector_potential: float
    peak_right: float
    peak_left: float
    measured: float
    photoelectric_energy: float
    reason: str = ""

    @property
    def predicted(self):
        return self.vector_potential


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
    three_step: classical.ThreeStepSummary | None
    trajectories: classical.ClassicalTrajectories | None
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


def emission_times(tf_map, three_step, period, *, plateau=(0.2, 0.9)):
    """Quantum emission times read off a Gabor map, beside the classical branches.

    For each field half cycle with classical returns and each photon energy ``w`` of
    the map in the plateau, ``Ip + plateau[0] (w_c - Ip) <= w <= Ip + plateau[1]
    (w_c - Ip)`` (``w_c`` the half cycle's classical cutoff), the classical short and
    long emission times at ``w`` are interpolated from the branches; the quantum time
    is the time of the largest Gabor power between the long time minus and the short
    time plus an eighth of a cycle.

    Parameters
    ----------
    tf_map : TimeFrequencyMap
    three_step : tdse1d.semiclassical.classical.ThreeStepSummary
    period : float
        Optical period (a.u.).
    plateau : (float, float)
        Fractions of the return energy range taken as the plateau.

    Returns
    -------
    EmissionTimes
    """
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
            rows["quantum"].append(_parabolic_peak(t[window], column))
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


def _parabolic_peak(x, y):
    """Abscissa of the maximum of sampled ``y(x)``, refined by a parabola through three points."""
    i = int(np.argmax(y))
    if 0 < i < y.size - 1:
        denom = y[i - 1] - 2 * y[i] + y[i + 1]
        if denom < 0:
            return float(x[i] + 0.5 * (y[i - 1] - y[i + 1]) / denom * (x[1] - x[0]))
    return float(x[i])


def photoelectron_edges(energy, energy_density, photon_energy, *, rise=DIRECT_RISE,
                        drop=BACKSCATTER_DROP, noise_margin=NOISE_MARGIN, max_energy=None,
                        floor_decades=30.0, max_iterations=30, noise=None):
    """Direct and backscattered edges of a photoelectron energy spectrum.

    The rule (energies in hartree):

    1. ``S(E)`` = running mean of ``log10(dP/dE)`` over ``|E' - E| <= hbar w / 2``
       (one ATI spacing, which levels the comb of ATI peaks), values more than
       ``floor_decades`` below the maximum raised to that floor. Only ``E >= hbar w /
       2`` is used (dP/dE diverges as 1/p at p = 0). The largest S is the direct peak.
    2. Noise floor ``N(E)`` (:func:`tdse1d.spectra.noise_floor`): the larger of the
       median of log10 dP/dE over the upper half of the energy axis and, if given,
       the companion ``noise`` smoothed like S (the analysis of a run passes the
       spectrum of the same numerics with no field, :func:`field_free_floor`); the
       search region runs from the peak to the last energy with ``S >= N +
       noise_margin``, and at most to ``max_energy``. The analysis of a run passes
       twice the classical backscattered cutoff: beyond it a 1-D spectrum holds only
       a slowly falling quantum tail, which would otherwise pass for a plateau.
    3. Plateau level ``P``: fixed point, starting from the median of S over the
       region, of: ``E_1`` = first energy with ``S <= P + rise`` (the direct electrons
       have come down to the plateau), ``E_b`` = last energy with ``S >= P - drop``,
       ``P`` = median of S over ``[E_1, E_b]``. ``E_b`` is the backscattered edge:
       beyond it S stays more than ``drop`` decades below the plateau. Only the last
       crossing counts, so dips inside the plateau do not end it.
    4. The direct edge ``E_d`` is the first energy above the peak where S has fallen
       ``rise`` decades below the direct level (median of S between the peak and
       ``E_1``): the knee where the direct electrons' distribution starts its steep
       fall to the plateau.
    5. Noise: an edge counts only if its reading level (``P - drop`` for the
       backscattered edge, the direct level minus ``rise`` for the direct one)
       stands at least ``noise_margin`` decades above ``N``; otherwise it is NaN and
       its reason says "unresolved (within X decades of the noise floor)".

    Classically direct electrons end below ``2 Up`` and backscattered ones below
    ``10 Up`` (Paulus et al., J. Phys. B 27, L703 (1994), from memory). The rule does
    not use Up, so the comparison is not built into it.

    Parameters
    ----------
    energy : array_like, shape (n,)
        Increasing kinetic energies (hartree), e.g. ``p**2 / 2`` on a uniform |p| axis.
    energy_density : array_like, shape (n,)
        dP/dE (1/hartree), both sides together; NaN or non-positive values are ignored.
    photon_energy : float
        ``hbar w`` of the driving field (hartree).
    rise, drop, noise_margin : float
        Decades (see above); ``noise_margin`` defaults to
        :data:`tdse1d.spectra.NOISE_MARGIN`.
    max_energy : float, optional
        End of the search region (hartree); default the end of the axis.
    noise : array_like, optional
        Companion floor dP/dE on the same energy axis (1/hartree).

    Returns
    -------
    PhotoelectronEdges
        NaN edges when the spectrum has no plateau above its noise floor.
    """
    e = np.asarray(energy, dtype=float)
    d = np.asarray(energy_density, dtype=float)
    if e.ndim != 1 or e.shape != d.shape or e.size < 8:
        raise ValueError(f"energy and energy_density must be 1-D of equal length >= 8, got {e.shape}, {d.shape}")
    if not photon_energy > 0:
        raise ValueError(f"photon_energy must be positive, got {photon_energy}")
    usable = np.isfinite(d) & (d > 0) & (e >= 0.5 * photon_energy)
    smoothed = np.full(e.shape, np.nan)
    if usable.sum() < 8:
        return PhotoelectronEdges(math.nan, math.nan, math.nan, math.nan, smoothed)
    ee, dd = e[usable], d[usable]
    log_d = np.log10(np.maximum(dd, dd.max() * 10.0**-floor_decades))
    s = running_mean(ee, log_d, 0.5 * photon_energy)
    smoothed[usable] = s
    start = int(np.argmax(s))
    peak = float(s[start])
    companion = None if noise is None else np.asarray(noise, dtype=float)[usable]
    floor = noise_floor(ee, dd, companion=companion, half_width=0.5 * photon_energy)
    floor_all = np.full(e.shape, np.nan)
    floor_all[usable] = floor
    inside = ee <= (np.inf if max_energy is None else float(max_energy))
    signal = np.flatnonzero((s >= floor + noise_margin) & inside)
    if peak - floor[start] < noise_margin:
        why = unresolved_reason(peak - floor[start])
        return PhotoelectronEdges(math.nan, math.nan, math.nan, peak, smoothed, floor_all, why, why)
    no_plateau = f"unresolved (no plateau {noise_margin:g} decade above the noise floor)"
    failed = PhotoelectronEdges(math.nan, math.nan, math.nan, peak, smoothed, floor_all, no_plateau, no_plateau)
    if signal.size == 0 or signal[-1] <= start + 2:
        return failed
    tail = s[start : signal[-1] + 1]
    level = float(np.median(tail))
    seen = set()
    for _ in range(int(max_iterations)):
        below = np.flatnonzero(tail <= level + rise)
        above = np.flatnonzero(tail >= level - drop)
        if below.size == 0 or above.size == 0:
            return failed
        i_1, i_b = int(below[0]), int(above[-1])
        if i_b <= i_1:
            return failed
        if (i_1, i_b) in seen:
            break
        seen.add((i_1, i_b))
        level = float(np.median(tail[i_1 : i_b + 1]))
    direct_level = float(np.median(tail[: i_1 + 1]))
    fallen = np.flatnonzero(tail[: i_1 + 1] <= direct_level - rise)
    # a direct part that never stands out from the plateau ends where the plateau starts
    i_d = int(fallen[0]) if fallen.size else i_1
    direct, back = float(ee[start + i_d]), float(ee[start + i_b])
    direct_why = back_why = ""
    if direct_level - rise - floor[start + i_d] < noise_margin:
        direct, direct_why = math.nan, unresolved_reason(direct_level - rise - floor[start + i_d])
    if level - drop - floor[start + i_b] < noise_margin:
        back, back_why = math.nan, unresolved_reason(level - drop - floor[start + i_b])
    return PhotoelectronEdges(direct, back, level, peak, smoothed, floor_all, direct_why, back_why)


def field_free_floor(problem, *, duration=None):
    """Photoelectron spectrum of the same numerics with no field: the method's floor.

    The initial state is propagated with the run's grid, potential, time step, scheme
    and absorber but no field, its bound components are projected out
    (:func:`tdse1d.spectra.project_out_bound`) and the rest is projected on plane waves
    (:func:`tdse1d.spectra.plane_wave_spectrum`). What remains is what the numerics
    alone put into the continuum: the split-operator propagator's eigenvectors differ
    from the grid Hamiltonian's by O(dt^2), so part of the initial state is continuum
    for the projection. That part is stationary once its components have dephased,
    after a time 2 pi / E for energy E: one optical period of the first pulse covers
    E >= hbar w, where edges are read (docs/analysis.md shows it unchanged between 1
    and 8 cycles). A run at vanishing intensity gives the same spectrum.

    Parameters
    ----------
    problem : tdse1d.input.problem.Problem
    duration : float, optional
        Propagation time (a.u.); default one period of the first pulse, at most the run.

    Returns
    -------
    tdse1d.spectra.PhotoelectronSpectrum
    """
    from .physics.absorbers import ABSORBERS
    from .physics.propagation import Propagator, scheme_for_order
    from .physics.pulses import Field
    from .spectra.photoelectron import plane_wave_spectrum, project_out_bound
    from .physics.states import initial_wavefunction

    cfg, grid = problem.config, problem.grid
    times = problem.time.times
    period = 2 * math.pi / problem.field.omega if problem.field.pulses else times[-1] - times[0]
    span = period if duration is None else float(duration)
    steps = int(min(times.size - 1, max(1, math.ceil(span / problem.time.step))))
    atom = cfg.atom
    psi0 = initial_wavefunction(problem.states, atom.initial_state, atom.initial_amplitudes, atom.initial_phases)
    absorber = ABSORBERS[cfg.absorber.type](cfg.absorber.exponent, cfg.absorber.strength)
    mask = absorber.step_factor(grid, problem.absorber_width, problem.time.step)
    prop = Propagator(grid, problem.potential, Field([]), times[: steps + 1],
                      scheme=scheme_for_order(cfg.propagation.order), absorber_factor=mask, reference=psi0,
                      fft_effort="FFTW_ESTIMATE")
    prop.start(psi0)
    prop.advance(steps)
    prop.finish()
    continuum = project_out_bound(prop.length_gauge_state(), problem.states.wavefunctions, grid.spacing)
    return plane_wave_spectrum(grid.x, continuum, split="momentum")


def _companion_on(energy, floor_energy, floor_density):
    """A floor spectrum interpolated (in log) onto another energy axis."""
    if floor_energy is None:
        return None
    log_f = np.log10(np.maximum(np.nan_to_num(np.asarray(floor_density, float)), 1e-300))
    return 10.0 ** np.interp(energy, floor_energy, log_f)


def ponderomotive_shift(energy, energy_density, photon_energy, ionization_potential, up, *,
                        upper=None, noise_margin=NOISE_MARGIN, noise=None):
    """Ponderomotive shift from the offset of the ATI comb, where it is measurable.

    ATI peaks lie at ``E_n = n hbar w - Ip - Up`` (common practice; the shift of the
    ionization threshold by Up), so the offset of the comb gives Up modulo ``hbar w``.
    The offset is the phase of the first Fourier coefficient of dP/dE at period
    ``hbar w`` over ``[hbar w / 2, upper]`` (default ``2 Up``, at least ``4 hbar w``).
    The shift counts as measurable only if ``Up < hbar w`` (otherwise the comb fixes it
    only modulo hbar w), the comb contrast exceeds :data:`ATI_CONTRAST`, and the
    median of log10 dP/dE over the range stands ``noise_margin`` decades above the
    spectrum's noise floor (:func:`tdse1d.spectra.noise_floor`).

    Parameters
    ----------
    energy, energy_density : array_like
        Energy axis (hartree) and dP/dE (1/hartree).
    photon_energy, ionization_potential, up : float
        ``hbar w``, Ip and Up of the driving field (hartree).
    upper : float, optional
        Top of the energy range used (hartree).
    noise_margin : float
        Decades (see above).
    noise : array_like, optional
        Companion floor dP/dE on the same axis (see :func:`photoelectron_edges`).

    Returns
    -------
    PonderomotiveShift
    """
    if not up < photon_energy:
        return PonderomotiveShift(
            False, f"Up = {up:.3g} Eh exceeds the photon energy {photon_energy:.3g} Eh: the ATI comb fixes "
            "the shift only modulo hbar*w", math.nan, up)
    e = np.asarray(energy, dtype=float)
    d = np.asarray(energy_density, dtype=float)
    top = max(2 * up, 4 * photon_energy) if upper is None else upper
    chosen = np.isfinite(d) & (e >= 0.5 * photon_energy) & (e <= top)
    if chosen.sum() < 16:
        return PonderomotiveShift(False, "too few spectrum samples below the direct edge", math.nan, up)
    ee, dd = e[chosen], d[chosen]
    positive = np.isfinite(d) & (d > 0) & (e > 0)
    if positive.sum() >= 8 and np.any(dd > 0):
        companion = None if noise is None else np.asarray(noise, float)[positive]
        floor = noise_floor(e[positive], d[positive], companion=companion)
        floor_here = np.interp(ee, e[positive], floor)
        headroom = float(np.median(np.log10(np.maximum(dd, 1e-300)) - floor_here))
        if headroom < noise_margin:
            return PonderomotiveShift(False, f"ATI comb {unresolved_reason(headroom)}", math.nan, up)
    weights = np.gradient(ee)
    mean = np.sum(dd * weights)
    coefficient = np.sum(dd * weights * np.exp(-2j * np.pi * ee / photon_energy))
    contrast = 2 * abs(coefficient) / mean if mean > 0 else 0.0
    if contrast < ATI_CONTRAST:
        return PonderomotiveShift(
            False, f"no resolved ATI comb (contrast {contrast:.2g} < {ATI_CONTRAST})", math.nan, up)
    offset = (-np.angle(coefficient) / (2 * np.pi) * photon_energy) % photon_energy
    measured = float((-ionization_potential - offset) % photon_energy)
    return PonderomotiveShift(True, f"ATI comb contrast {contrast:.2g}", measured, up)


def peak_centroid(momentum, density, *, level=0.5):
    """Centroid of the peak of ``density`` around its maximum, above ``level`` of it.

    The contiguous region around the maximum where ``density >= level * max`` is the
    peak; its first moment in momentum is returned (sub-grid precision).

    Parameters
    ----------
    momentum, density : array_like, shape (n,)
    level : float
        Fraction of the maximum that bounds the peak.

    Returns
    -------
    float
    """
    p = np.asarray(momentum, dtype=float)
    d = np.nan_to_num(np.asarray(density, dtype=float))
    i = int(np.argmax(d))
    threshold = level * d[i]
    lo = i
    while lo > 0 and d[lo - 1] >= threshold:
        lo -= 1
    hi = i
    while hi < d.size - 1 and d[hi + 1] >= threshold:
        hi += 1
    window = slice(lo, hi + 1)
    return float(np.sum(p[window] * d[window]) / np.sum(d[window]))


def streaking_shift(momentum, density_left, density_right, xuv_time, xuv_photon_energy,
                    ionization_potential, ir_vector_potential, *, noise_margin=NOISE_MARGIN):
    """Streaking shift of the XUV photoelectron peak and its classical prediction.

    An electron released at ``t_X`` with momentum ``+-p0``, ``p0 = sqrt(2 (hbar w_X -
    Ip))`` (Einstein's photoelectric relation), ends with ``+-p0 - A_IR(t_X)``
    (charge -1, E = -dA/dt; Itatani et al., Phys. Rev. Lett. 88, 173903 (2002), from
    memory). So ``p_right = p0 - A`` and ``|p_left| = p0 + A``, and
    ``A = (|p_left| - p_right) / 2``.

    Parameters
    ----------
    momentum : array_like
        |p| axis (a.u.).
    density_left, density_right : array_like
        dP/d|p| of electrons with p < 0 and p > 0.
    xuv_time, xuv_photon_energy, ionization_potential : float
        Centre of the XUV pulse (a.u.), its photon energy and Ip (hartree).
    ir_vector_potential : float
        ``A_IR(t_X)`` of the other pulses (a.u.).
    noise_margin : float
        Decades by which the lower of the two peaks must stand above the noise floor
        of the momentum density (:func:`tdse1d.spectra.noise_floor`); otherwise the
        shift is NaN and ``reason`` says why.

    Returns
    -------
    StreakingShift
    """
    excess = xuv_photon_energy - ionization_potential
    if not excess > 0:
        raise ValueError(f"the XUV photon energy {xuv_photon_energy} does not exceed Ip {ionization_potential}")
    p0 = math.sqrt(2 * excess)
    right = peak_centroid(momentum, density_right)
    left = peak_centroid(momentum, density_left)
    p = np.asarray(momentum, dtype=float)
    both = np.nan_to_num(np.asarray(density_left, float)) + np.nan_to_num(np.asarray(density_right, float))
    positive = (p > 0) & (both > 0)
    reason = ""
    if positive.sum() >= 8:
        # the floor on the energy axis (dP/dE = dP/dp / p): the top half of the
        # energy axis lies beyond the line, the top half of the momentum axis need not
        energy = 0.5 * p[positive] ** 2
        floor = float(noise_floor(energy, both[positive] / p[positive])[0])
        lower = min(np.nanmax(density_left / np.where(p > 0, p, np.inf)),
                    np.nanmax(density_right / np.where(p > 0, p, np.inf)))
        headroom = math.log10(lower) - floor if lower > 0 else -math.inf
        if headroom < noise_margin:
            reason = unresolved_reason(headroom)
            right = left = math.nan
    return StreakingShift(
        xuv_time=float(xuv_time), xuv_photon_energy=float(xuv_photon_energy), initial_momentum=p0,
        vector_potential=float(ir_vector_potential), peak_right=right, peak_left=left,
        measured=0.5 * (left - right), photoelectric_energy=0.125 * (left + right) ** 2, reason=reason,
    )


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
            traj = classical.trajectories(inputs.time, inputs.electric, inputs.vector_potential)
            three = classical.summary(traj, ip)
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
            p_full = classical.tunnelling_yield(inputs.time, inputs.electric, inputs.potential, e0)
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
    result : tdse1d.run.runner.RunResult

    Returns
    -------
    RunAnalysis
    """
    from .semiclassical.estimates import as_attributes

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


def _file_pulses(h5file):
    """Per-pulse rows rebuilt from the stored input (cheap: no bound states)."""
    from pathlib import Path

    from .input.schema import InputError, parse_input, tomllib
    from .input.problem import build_field

    source = str(h5file.attrs.get("input_source", "<string>"))
    try:
        config = parse_input(tomllib.loads(h5file.attrs["input"]), source, Path(source).parent)
        return _pulse_rows(build_field(config)), min(config.atom.initial_state)
    except (InputError, KeyError, tomllib.TOMLDecodeError):
        return (), 0


def _stored_floor(f):
    """The field-free companion stored by :func:`write_analysis`, None if absent."""
    key = "spectra/photoelectron/field_free"
    if key not in f:
        return None
    return f[f"{key}/energy"][()], f[f"{key}/energy_density"][()]


def analyse_file(h5file) -> RunAnalysis:
    """Analysis of a result file, from its stored arrays.

    Everything is recomputed except the tunnelling curve, which needs the potential
    and is taken from ``/classical/tunnelling`` (empty when the run did not store it).

    Parameters
    ----------
    h5file : h5py.File
        An open, complete result file.

    Returns
    -------
    RunAnalysis
    """
    f = h5file
    pulses, initial = _file_pulses(f)
    photo = {}
    for name in PHOTOELECTRON_METHOD_ORDER:
        key = f"spectra/photoelectron/{name}"
        if key in f:
            g = f[key]
            photo[name] = (g["momentum"][()], g["density_left"][()], g["density_right"][()], g["energy"][()],
                           g["energy_density_left"][()] + g["energy_density_right"][()])
    h = f["spectra/harmonic"] if "spectra/harmonic" in f else None
    analysis = _analyse(_Inputs(
        time=f["field/time"][()], electric=f["field/electric"][()],
        vector_potential=f["field/vector_potential"][()], acceleration=f["observables/acceleration"][()],
        energies=f["states/energy"][()], initial_state=initial,
        ionization_probability=float(f["ionization/probability"][()]),
        harmonic_frequency=h["frequency"][()] if h is not None else np.zeros(0),
        harmonic_power=h["power"][()] if h is not None else np.zeros(0),
        window=str(h.attrs.get("window", "hann")) if h is not None else "hann",
        pulses=pulses, photoelectrons=photo,
        estimate={k: float(v) for k, v in f["estimates"].attrs.items() if k != "units"},
        photoelectron_floor=_stored_floor(f),
    ))
    if "classical/tunnelling" in f:
        analysis = replace(analysis, tunnelling_time=f["classical/tunnelling/time"][()],
                           tunnelling_probability=f["classical/tunnelling/probability"][()])
    return analysis


# --------------------------------------------------------------------------- HDF5



#: scalar results stored under /classical: attribute of RunAnalysis or of its
#: three-step summary -> (units, description)
_CLASSICAL_SCALARS = {
    "ionization_potential": ("hartree", "Ip of the initial state"),
    "ponderomotive_energy": ("hartree", "Up of the first pulse's peak field"),
    "keldysh_parameter": ("1", "sqrt(Ip / 2 Up)"),
    "barrier_suppression_field": ("atomic_unit_of_electric_field", "field at which the barrier top reaches E0"),
    "peak_field": ("atomic_unit_of_electric_field", "peak field of the first pulse"),
    "tunnelling_yield": ("1", "quasi-static WKB tunnelling probability at the end"),
}
_SUMMARY_SCALARS = {
    "max_return_energy": ("hartree", "largest return kinetic energy, three-step model"),
    "cutoff_energy": ("hartree", "Ip + largest return energy"),
    "cutoff_birth_time": ("atomic_unit_of_time", "birth time of the cutoff trajectory"),
    "cutoff_return_time": ("atomic_unit_of_time", "return time of the cutoff trajectory"),
    "max_direct_energy": ("hartree", "largest drift energy of direct electrons (2 Up)"),
    "max_backscattered_energy": ("hartree", "largest drift energy of backscattered electrons (10 Up)"),
}


def write_analysis(h5file, analysis: RunAnalysis) -> None:
    """Store a :class:`RunAnalysis` in an open result file (groups listed in the module docstring)."""
    f = h5file
    c = f.create_group("classical")
    c.attrs["notes"] = "\n".join(analysis.notes)
    for name, (units, text) in _CLASSICAL_SCALARS.items():
        write_dataset(c, name, float(getattr(analysis, name)), units, description=text)
    s = analysis.three_step
    if s is not None:
        for name, (units, text) in _SUMMARY_SCALARS.items():
            write_dataset(c, name, float(getattr(s, name)), units, description=text)
        tr = analysis.trajectories
        g = c.create_group("trajectories")
        write_dataset(g, "birth_time", tr.birth_time, "atomic_unit_of_time")
        write_dataset(g, "return_time", tr.return_time, "atomic_unit_of_time", description="shape (birth, return)")
        write_dataset(g, "return_energy", tr.return_energy, "hartree")
        write_dataset(g, "drift_momentum", tr.drift_momentum, "atomic_unit_of_momentum", description="-A(t0)")
        write_dataset(g, "backscattered_momentum", tr.backscattered_momentum, "atomic_unit_of_momentum",
             description="A(t0) - 2 A(t_r)")
        b = c.create_group("branches")
        for branch in ("short", "long"):
            tables = getattr(s, f"{branch}_branch")
            stacked = np.concatenate(tables) if tables else np.zeros((0, 2))
            labels = np.concatenate([np.full(len(t), k) for k, t in enumerate(tables)]) if tables else np.zeros(0)
            write_dataset(b, f"{branch}_time", stacked[:, 0], "atomic_unit_of_time", description="emission (first return) time")
            write_dataset(b, f"{branch}_energy", stacked[:, 1], "hartree", description="photon energy Ip + E_return")
            write_dataset(b, f"{branch}_half_cycle", labels.astype(int), "1", description="field half cycle index")
    if analysis.tunnelling_time.size:
        g = c.create_group("tunnelling")
        write_dataset(g, "time", analysis.tunnelling_time, "atomic_unit_of_time")
        write_dataset(g, "probability", analysis.tunnelling_probability, "1")
    cut = analysis.cutoff
    if cut is not None and analysis.harmonic_floor_log10 is not None:
        h = f.require_group("spectra/harmonic")
        write_dataset(h, "noise_floor_log10", analysis.harmonic_floor_log10, "log10(atomic_units)",
                      description="log10 of the noise floor of power: the larger of the median of the top half "
                                  "of the axis and the field's own spectrum through the same window")
        write_dataset(h, "cutoff_headroom", cut.headroom, "decades",
                      description="reading level (plateau - drop) above the noise floor at the cutoff",
                      resolved=bool(cut.resolved), reason=cut.reason)
    tf = analysis.time_frequency
    if tf is not None:
        g = f.create_group("spectra/time_frequency")
        g.attrs["window"] = "gaussian"
        write_dataset(g, "time", tf.time, "atomic_unit_of_time")
        write_dataset(g, "frequency", tf.frequency, "hartree", description="photon energy")
        write_dataset(g, "power", tf.power, "atomic_units", description="|Gabor transform of the acceleration|^2")
        write_dataset(g, "width", tf.width, "atomic_unit_of_time", description="Gaussian window sigma")
        em = analysis.emission
        if em is not None:
            e = g.create_group("emission")
            write_dataset(e, "half_cycle", em.half_cycle, "1")
            write_dataset(e, "frequency", em.frequency, "hartree")
            write_dataset(e, "quantum", em.quantum, "atomic_unit_of_time", description="time of the Gabor maximum")
            write_dataset(e, "short", em.short, "atomic_unit_of_time", description="classical short trajectory")
            write_dataset(e, "long", em.long, "atomic_unit_of_time", description="classical long trajectory")
            write_dataset(e, "period", em.period, "atomic_unit_of_time")
    if analysis.edges is not None or analysis.ponderomotive is not None:
        g = f.create_group("spectra/photoelectron/edges")
        g.attrs["method"] = analysis.photoelectron_method or ""
        if analysis.edges is not None:
            ed = analysis.edges
            write_dataset(g, "direct", ed.direct, "hartree", description="direct-electron edge read off (NaN: see reason)",
                          reason=ed.direct_reason)
            write_dataset(g, "backscattered", ed.backscattered, "hartree",
                          description="backscattered-electron edge read off (NaN: see reason)",
                          reason=ed.backscattered_reason)
            write_dataset(g, "plateau_log10", ed.plateau_log10, "log10(1/hartree)")
            write_dataset(g, "noise_floor_log10", ed.noise_floor_log10, "log10(1/hartree)",
                          description="noise floor of dP/dE on the energy axis of the spectrum read "
                                      f"({analysis.photoelectron_method}): the larger of the median of log10 over the "
                                      "top half of the axis and the field-free companion (docs/analysis.md)")
        pond = analysis.ponderomotive
        if pond is not None:
            write_dataset(g, "ponderomotive_shift", pond.measured, "hartree", measurable=pond.measurable, reason=pond.reason)
    if analysis.photoelectron_floor is not None:
        g = f.create_group("spectra/photoelectron/field_free")
        g.attrs["description"] = ("the same numerics with no field for one optical period: the method's floor "
                                  "(tdse1d.analysis.field_free_floor)")
        write_dataset(g, "energy", analysis.photoelectron_floor[0], "hartree")
        write_dataset(g, "energy_density", analysis.photoelectron_floor[1], "1/hartree", description="both sides")
    st = analysis.streaking
    if st is not None:
        g = f.create_group("streaking")
        for name in ("xuv_time",):
            write_dataset(g, name, st.xuv_time, "atomic_unit_of_time")
        write_dataset(g, "xuv_photon_energy", st.xuv_photon_energy, "hartree")
        write_dataset(g, "photoelectric_energy", st.photoelectric_energy, "hartree",
             description="peak energy without the streaking shift")
        for name in ("initial_momentum", "vector_potential", "peak_right", "peak_left", "measured"):
            write_dataset(g, name, getattr(st, name), "atomic_unit_of_momentum")
        g.attrs["reason"] = st.reason
