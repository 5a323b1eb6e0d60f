"""A quantity read off a spectrum by a small family of rules, as a central value with
the range across the rules (:class:`Reading`, :func:`combine_rules`), and the family of
rules for the plateau cutoff of a harmonic spectrum (:func:`cutoff_family`: the plateau
falls 1, 1.5 and 2 decades, and the knee of a two-line fit in log power,
:func:`two_line_knee`). Pure numerics on arrays, Hartree atomic units.

Why a family: a cutoff or an edge is not a sharp feature of a computed spectrum. Each
sensible rule reads a somewhat different energy on the same fall, and the difference
between them is an uncertainty of the reading that no finer grid removes. The rules of
each family and the reason each is in it are given in ``docs/analysis.md``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .cutoff import NOISE_MARGIN, noise_floor, read_cutoff, unresolved_reason

#: the drops (decades below the plateau level) of the cutoff family
CUTOFF_DROPS = (1.0, 1.5, 2.0)
#: the plateau levels the drops are counted from (see read_cutoff: the fixed-point
#: median of the plateau, and its highest level)
CUTOFF_PLATEAUS = ("median", "top")
#: a knee counts only if the fitted fall beyond it is this many times steeper (in
#: decades per photon energy) than the fitted plateau before it; a power law or a
#: flat spectrum has no such change of slope (see two_line_knee)
KNEE_CONTRAST = 3.0


@dataclass(frozen=True)
class Reading:
    """A quantity read off a spectrum by a family of rules.

    Attributes
    ----------
    value : float
        Central value: the middle of the range of the rules' values (unit of the
        axis), so that ``value +- half_range`` covers every rule; NaN when unresolved.
    low, high : float
        Smallest and largest value over the rules (NaN when unresolved).
    rules : dict
        Rule name -> the value it read (NaN for a rule that could not read one).
    resolution : float
        Sampling step of the axis at the reading (unit of the axis).
    reason : str
        Empty for a resolved reading; otherwise why there is no value, e.g.
        ``"unresolved (within 0.3 decades of the noise floor)"``.
    headroom : float
        Decades by which the lowest reading level of the family stands above the
        noise floor (NaN where no floor applies).
    """

    value: float
    low: float
    high: float
    rules: dict = field(default_factory=dict)
    resolution: float = 0.0
    reason: str = ""
    headroom: float = math.nan

    @property
    def resolved(self) -> bool:
        return not self.reason and math.isfinite(self.value)

    @property
    def half_range(self) -> float:
        """Half the spread of the rules (unit of the axis; NaN when unresolved)."""
        return 0.5 * (self.high - self.low) if self.resolved else math.nan

    @property
    def uncertainty(self) -> float:
        """Uncertainty of the reading: the half range of the rules and the sampling step,
        in quadrature.

        The half range is taken whole (not divided by sqrt(3) as for a rectangular
        distribution, GUM JCGM 100:2008 4.3.7), so that the value plus or minus it
        covers every rule of the family; the step contributes ``step / sqrt(12)``,
        the standard deviation of a reading spread evenly over one sample (GUM 4.3.7).
        """
        if not self.resolved:
            return math.nan
        return math.hypot(self.half_range, self.resolution / math.sqrt(12.0))


def unresolved(reason: str, rules=None, headroom=math.nan) -> Reading:
    """A reading with no value, and why."""
    return Reading(math.nan, math.nan, math.nan, dict(rules or {}), 0.0, reason, headroom)


def combine_rules(values: dict, resolution: float, reasons: dict | None = None,
                  headroom: float = math.nan) -> Reading:
    """One reading from the values of a family of rules.

    The reading is resolved only when every rule of the family read a value: a rule
    that cannot read (its level sinks into the noise floor, or it finds no feature)
    means the spectrum does not fix the quantity as the family defines it, and
    reporting the other rules alone would narrow the range by choice.

    Parameters
    ----------
    values : dict
        Rule name -> value read (NaN where the rule could not read one).
    resolution : float
        Sampling step of the axis at the reading (same unit).
    reasons : dict, optional
        Rule name -> why it could not read (used for the reason of the result).
    headroom : float
        Decades above the noise floor of the lowest reading level (NaN if none).

    Returns
    -------
    Reading
    """
    if not values:
        raise ValueError("a family needs at least one rule")
    reasons = reasons or {}
    missing = [name for name, v in values.items() if not math.isfinite(v)]
    if missing:
        why = next((reasons[m] for m in missing if reasons.get(m)), f"unresolved (rule {missing[0]} read no value)")
        return unresolved(why, values, headroom)
    v = np.array(list(values.values()), dtype=float)
    return Reading(float(0.5 * (v.min() + v.max())), float(v.min()), float(v.max()), dict(values),
                   float(abs(resolution)), "", headroom)


def two_line_knee(axis, log_values, *, minimum_points=4):
    """Knee of a continuous two-line fit of ``log_values`` against ``axis``.

    For every sample ``b`` the best continuous broken line (one slope before ``b``,
    another after, joined at ``b``) is fitted by least squares; the knee is the ``b``
    of the smallest residual. Returns ``(knee, slope_before, slope_after)``, NaNs when
    there are fewer than ``2 * minimum_points`` samples.

    Parameters
    ----------
    axis, log_values : array_like, shape (n,)
        Increasing abscissae and the (smoothed) log10 of the spectrum.
    minimum_points : int
        Samples each line must span at least.
    """
    x = np.asarray(axis, dtype=float)
    y = np.asarray(log_values, dtype=float)
    n = x.size
    if n < 2 * minimum_points:
        return math.nan, math.nan, math.nan
    best = (math.inf, math.nan, math.nan, math.nan)
    candidates = range(minimum_points, n - minimum_points)
    # at most ~200 trial knees: the fit is smooth in b, a coarse search then a fine one
    stride = max(1, len(candidates) // 200)
    for sweep in (list(candidates)[::stride], None):
        if sweep is None:
            if stride == 1 or not math.isfinite(best[1]):
                break
            centre = int(np.searchsorted(x, best[1]))
            sweep = range(max(minimum_points, centre - stride), min(n - minimum_points, centre + stride + 1))
        for b in sweep:
            # y = c + s1 * min(x - xb, 0) + s2 * max(x - xb, 0)
            d = x - x[b]
            design = np.column_stack((np.ones(n), np.minimum(d, 0.0), np.maximum(d, 0.0)))
            coef, *_ = np.linalg.lstsq(design, y, rcond=None)
            residual = float(np.sum((design @ coef - y) ** 2))
            if residual < best[0]:
                best = (residual, float(x[b]), float(coef[1]), float(coef[2]))
    return best[1], best[2], best[3]


def cutoff_family(frequency, power, omega0, ionization_potential, *, noise=None, max_frequency=None,
                  drops=CUTOFF_DROPS, smooth_orders=1.0, start_orders=2.0, noise_margin=NOISE_MARGIN):
    """The plateau cutoff of a harmonic spectrum read by the family of rules.

    Rules (``docs/analysis.md`` says why each is in the family):

    * ``median drop D`` and ``top drop D`` for D in ``drops`` (1, 1.5 and 2 decades):
      :func:`tdse1d.spectra.read_cutoff`, the last photon energy where the smoothed
      log power is within D decades of the plateau level, the level being the
      fixed-point median of the plateau or its highest level; each checked against
      the noise floor (its reading level must stand ``noise_margin`` decades above);
    * ``knee``: :func:`two_line_knee` of the smoothed log power from the plateau start
      ``Ip + start_orders * omega0`` to the last energy where it is within
      ``max(drops) + 1`` decades of the median plateau level (the fall the drop rules
      read, not the slow tail beyond it). It counts only if the fall beyond the knee
      is :data:`KNEE_CONTRAST` times steeper than the plateau before it and the knee
      lies between the plateau start and the deepest median-drop reading.

    Parameters
    ----------
    frequency, power : array_like, shape (n,)
        Photon energies (hartree, increasing) and spectral power.
    omega0, ionization_potential : float
        Fundamental photon energy and Ip (hartree).
    noise : array_like or False, optional
        Companion floor on the same axis (see :func:`tdse1d.spectra.read_cutoff`).
    max_frequency : float, optional
        Ignore the spectrum above this photon energy (hartree).
    drops : tuple of float
        Decades of the drop rules.
    smooth_orders, start_orders, noise_margin : float
        As in :func:`tdse1d.spectra.read_cutoff`.

    Returns
    -------
    Reading
        Photon energies in hartree; ``rules`` holds each rule's value.
    """
    w = np.asarray(frequency, dtype=float)
    values, reasons, headrooms = {}, {}, []
    estimates = {}
    for plateau in CUTOFF_PLATEAUS:
        for drop in drops:
            name = f"{plateau} drop {drop:g}"
            est = read_cutoff(w, power, omega0, ionization_potential, drop=drop, smooth_orders=smooth_orders,
                              start_orders=start_orders, max_frequency=max_frequency, noise=noise,
                              noise_margin=noise_margin, plateau=plateau)
            estimates[name] = est
            values[name] = est.frequency if est.resolved else math.nan
            reasons[name] = est.reason
            headrooms.append(est.headroom)
    headroom = float(np.nanmin(headrooms)) if np.any(np.isfinite(headrooms)) else math.nan
    values["knee"], reasons["knee"] = _knee(w, power, omega0, ionization_potential, estimates, noise,
                                            smooth_orders, start_orders, noise_margin, max_frequency)
    step = float(np.median(np.diff(w))) if w.size > 1 else 0.0
    return combine_rules(values, step, reasons, headroom)


def _knee(w, power, omega0, ip, estimates, noise, smooth_orders, start_orders, margin, max_frequency):
    """The knee rule of :func:`cutoff_family`: (value, reason)."""
    deepest = estimates[f"median drop {max(float(k.split()[-1]) for k in estimates):g}"]
    if not deepest.resolved:
        return math.nan, deepest.reason
    pw = np.asarray(power, dtype=float)
    smoothed = deepest.smoothed_log10
    floor = noise_floor(w, pw, companion=None if noise is False else noise, half_width=smooth_orders * omega0)
    top = w[-1] if max_frequency is None else float(max_frequency)
    start = ip + start_orders * omega0
    fall = max(float(k.split()[-1]) for k in estimates) + 1.0
    signal = np.flatnonzero((w >= start) & (w <= top) & (smoothed >= floor + margin)
                            & (smoothed >= deepest.plateau_log10 - fall))
    if signal.size < 8:
        return math.nan, "unresolved (too few samples above the noise floor for a two-line fit)"
    span = slice(signal[0], signal[-1] + 1)
    knee, before, after = two_line_knee(w[span], smoothed[span])
    if not (math.isfinite(knee) and after < 0 and -after >= KNEE_CONTRAST * max(-before, 0.0)):
        return math.nan, "unresolved (no plateau followed by a steeper fall: a featureless spectrum)"
    if not (start <= knee <= deepest.frequency):
        return math.nan, "unresolved (the two-line knee lies outside the plateau's fall)"
    return knee, ""


__all__ = ["Reading", "combine_rules", "unresolved", "two_line_knee", "cutoff_family",
           "unresolved_reason", "CUTOFF_DROPS", "CUTOFF_PLATEAUS", "KNEE_CONTRAST"]
