"""A quantity read off a spectrum by a small family of rules, as a central value with
the range across the rules (:class:`Reading`, :func:`combine_rules`), and the family of
rules for the plateau cutoff of a harmonic spectrum (:func:`cutoff_family`: where the
plateau has fallen one decade, read on three curves from four plateau levels, on the
per-harmonic curves also as the last harmonic at or above the drop, and the knee of a
two-line fit in log power, :func:`two_line_knee`). Pure numerics on arrays,
Hartree atomic units.

Why a family: a cutoff or an edge is not a sharp feature of a computed spectrum. Each
sensible rule reads a somewhat different energy on the same fall, and the difference
between them is an uncertainty of the reading that no finer grid removes. The rules of
each family and the reason each is in it are given in ``docs/analysis.md``.

Why the cutoff family has one depth: near the classical cutoff the short and long
saddle points coalesce and the spectrum takes the Airy form of a fold caustic
(Lewenstein et al., Phys. Rev. A 49, 2117 (1994); Berry and Upstill, Progress in Optics
18, 257 (1980), from memory). On ``|Ai(x)|^2`` the classical edge x = 0 lies 0.36 decade
below the last maximum; a 1-decade drop from it is read at x = 0.80, 1.5 decades at
1.29, 2 decades at 1.71 (scipy.special.airy): deeper drops read further into the
evanescent tail on every spectrum, a bias of the rule, not an uncertainty of reading
it. The family fixes the depth at one decade ("fallen by an order of magnitude", common
practice) and spans what that definition leaves open: the curve (smoothed log power,
power per harmonic, harmonic peaks) and the plateau level (median, mean of log10,
highest, the plateau's end). The knee reads where the fall begins, at or before the
classical edge.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .cutoff import NOISE_MARGIN, noise_floor, running_mean, unresolved_reason
from .sampling import _positive

#: the drop (decades below the plateau level) of the cutoff family: one decade, the
#: common practice of "fallen by an order of magnitude" (see the module docstring for
#: why deeper drops are not in the family)
CUTOFF_DROPS = (1.0,)
#: the curves a drop is read on: the log power smoothed over one harmonic spacing, the
#: power summed over each harmonic's bin, the largest power in each bin (the peaks)
READING_CURVES = ("smoothed", "sums", "peaks")
#: the plateau levels a drop is counted from: the median and the mean of the curve's
#: log10 over the plateau, its highest value, and the median over its last END_ORDERS
PLATEAU_LEVELS = ("median", "mean", "top", "end")
#: the curves sampled only at the harmonics, on which the family reads each drop twice:
#: interpolated between the harmonics bracketing it, and as the last harmonic at or
#: above it ("the cutoff harmonic", how a comb's cutoff is named)
HARMONIC_CURVES = ("sums", "peaks")
#: suffix of the rule names that read the last harmonic instead of the interpolated crossing
LAST_HARMONIC = "last harmonic"
#: harmonic orders at the plateau's end over which the "end" level is taken (five odd
#: harmonics: longer than the beats of the short and long branches in the plateau)
END_ORDERS = 10.0
#: the knee is fitted down to where the smoothed spectrum has fallen this many decades
#: below the median level: the fall the 1-decade rules read, and one decade for its slope
KNEE_FALL = 2.0
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


def harmonic_curves(frequency, power, omega0, *, smooth_orders=1.0, floor_decades=30.0):
    """The curves a cutoff rule reads a drop on (:data:`READING_CURVES`), log10.

    * ``smoothed``: the running mean of ``log10(power)`` over ``|w' - w| <=
      smooth_orders * omega0`` on the input axis (as :func:`tdse1d.spectra.read_cutoff`);
    * ``sums``: ``log10`` of the power summed over each harmonic's bin, odd order q
      from ``(q - 1) omega0`` to ``(q + 1) omega0`` (bins inside the axis only), on the
      axis ``q omega0``;
    * ``peaks``: ``log10`` of the largest power in each such bin.

    Powers more than ``floor_decades`` below the maximum are raised to that floor
    before the logarithm (zeros would give -inf).

    Parameters
    ----------
    frequency : ndarray, shape (n,)
        Increasing photon energies (hartree).
    power : ndarray, shape (n,)
        Non-negative spectral power (any unit).
    omega0 : float
        Fundamental photon energy (hartree).
    smooth_orders, floor_decades : float
        Half width of the running mean (orders) and the floor (decades).

    Returns
    -------
    dict
        Curve name -> (axis in hartree, log10 of the curve).
    """
    w = np.asarray(frequency, dtype=float)
    pw = np.maximum(np.asarray(power, dtype=float), np.max(power) * 10.0 ** -float(floor_decades))
    out = {"smoothed": (w, running_mean(w, np.log10(pw), smooth_orders * omega0))}
    orders = np.arange(1, int(w[-1] / omega0) + 2, 2)
    lo = np.searchsorted(w, (orders - 1) * omega0, side="left")
    hi = np.searchsorted(w, (orders + 1) * omega0, side="left")
    inside = ((orders - 1) * omega0 >= w[0]) & ((orders + 1) * omega0 <= w[-1]) & (hi > lo)
    orders, lo, hi = orders[inside], lo[inside], hi[inside]
    # per-bin reductions, bin by bin (a difference of cumulative sums would lose the
    # fall's small powers to the round-off of the plateau's large ones)
    padded = np.append(pw, 0.0)
    bounds = np.column_stack((lo, hi)).ravel()
    sums = np.add.reduceat(padded, bounds)[::2] if orders.size else np.zeros(0)
    peaks = np.maximum.reduceat(padded, bounds)[::2] if orders.size else np.zeros(0)
    out["sums"] = (orders * omega0, np.log10(sums))
    out["peaks"] = (orders * omega0, np.log10(peaks))
    return out


def _plateau_level(curve, rule, axis, last, end_width):
    """Plateau level of ``curve[:last + 1]`` by ``rule`` (:data:`PLATEAU_LEVELS`)."""
    plateau = curve[: last + 1]
    if rule == "top":
        return float(np.max(curve))
    if rule == "median":
        return float(np.median(plateau))
    if rule == "mean":
        return float(np.mean(plateau))
    return float(np.median(plateau[axis[: last + 1] >= axis[last] - end_width]))


def drop_crossing(axis, curve, floor, level_rule, *, drop, start, end, end_width, beyond, margin=NOISE_MARGIN,
                  max_iterations=20, interpolate=True):
    """Where a curve has fallen ``drop`` decades below its plateau level, for good.

    The plateau runs from ``start`` to the crossing; its level (``level_rule``, one of
    :data:`PLATEAU_LEVELS`: median, mean of log10, highest value, or median over the
    last ``end_width`` before the crossing) and the crossing are found together by a
    fixed-point iteration started from the highest level (the rule of
    :func:`tdse1d.spectra.read_cutoff`). The crossing is the last sample with
    ``curve >= level - drop``, interpolated linearly in log10 to the next sample, so
    dips of the plateau do not end it. With ``interpolate=False`` the crossing is that
    last sample itself (on a curve sampled at the harmonics: the last harmonic of the
    plateau); the checks against the end of the data and the noise floor are the same.

    Parameters
    ----------
    axis, curve, floor : ndarray, shape (n,)
        Increasing photon energies (hartree), log10 of the curve and of its noise floor.
    level_rule : str
        One of :data:`PLATEAU_LEVELS`.
    drop : float
        Decades.
    start, end : float
        Plateau start and end of the search (hartree).
    end_width : float
        Width of the plateau's end for the ``"end"`` level (hartree).
    beyond : float
        The crossing must lie more than this below ``end`` (hartree), or it is at the
        end of the data.
    margin : float
        Decades the reading level ``level - drop`` must stand above the floor.
    max_iterations : int
        Cap on the fixed-point iteration.
    interpolate : bool
        Interpolate between the last sample at or above ``level - drop`` and the next
        (default), or return that last sample.

    Returns
    -------
    (float, float, float, str)
        Crossing (hartree; NaN when unresolved), plateau level, headroom above the
        floor (decades), and the reason (empty when resolved).
    """
    region = np.flatnonzero((axis >= start) & (axis <= end))
    if region.size < 2:
        return math.nan, math.nan, math.nan, "unresolved (no plateau between its start and the end of the search)"
    x, y = axis[region], curve[region]
    level = float(np.max(y))
    seen = set()
    for _ in range(int(max_iterations)):
        last = int(np.flatnonzero(y >= level - drop)[-1])
        if last in seen or level_rule == "top":
            break
        seen.add(last)
        level = _plateau_level(y, level_rule, x, last, end_width)
    threshold = level - drop
    if last + 1 >= y.size:
        return math.nan, level, math.nan, "unresolved (at or beyond the end of the data)"
    crossing = float(x[last] + (y[last] - threshold) / (y[last] - y[last + 1]) * (x[last + 1] - x[last]))
    if not x[-1] - crossing > beyond:
        return math.nan, level, math.nan, "unresolved (at or beyond the end of the data)"
    headroom = float(threshold - floor[region[last]])
    if not headroom >= margin:
        return math.nan, level, headroom, unresolved_reason(headroom)
    return (crossing if interpolate else float(x[last])), level, headroom, ""


def cutoff_family(frequency, power, omega0, ionization_potential, *, noise=None, max_frequency=None,
                  drops=CUTOFF_DROPS, smooth_orders=1.0, start_orders=2.0, noise_margin=NOISE_MARGIN):
    """The plateau cutoff of a harmonic spectrum read by the family of rules.

    Rules (``docs/analysis.md``, "The cutoff family", says why each is in it):

    * ``"CURVE LEVEL"`` for each curve of :data:`READING_CURVES` (the smoothed log
      power, the power per harmonic, the harmonic peaks; :func:`harmonic_curves`) and
      each plateau level of :data:`PLATEAU_LEVELS` (median, mean of log10, highest,
      the plateau's last :data:`END_ORDERS` orders): :func:`drop_crossing` with a drop
      of one decade (``drops``; names gain ``" drop D"`` when several are given). Each
      is checked against the noise floor taken through its own curve: the larger of
      the curve's median over the top half of the axis and the companion ``noise``
      through the same curve; its reading level must stand ``noise_margin`` decades
      above it. One decade and not more: deeper drops read the evanescent tail beyond
      the classical edge (module docstring);
    * ``"CURVE LEVEL last harmonic"`` for the curves of :data:`HARMONIC_CURVES`: the
      same drop, read as the last harmonic at or above it instead of the interpolated
      crossing (the cutoff harmonic, as a comb's cutoff is named);
    * ``"knee"``: :func:`two_line_knee` of the smoothed log power from the plateau start
      ``Ip + start_orders * omega0`` to the last energy where it is within
      :data:`KNEE_FALL` decades of the median plateau level. It counts only if the fall
      beyond the knee is :data:`KNEE_CONTRAST` times steeper than the plateau before it
      and the knee lies between the plateau start and the smoothed median reading.

    The reading is resolved only when every rule reads a value
    (:func:`combine_rules`).

    Parameters
    ----------
    frequency, power : array_like, shape (n,)
        Photon energies (hartree, strictly increasing) and spectral power (>= 0).
    omega0, ionization_potential : float
        Fundamental photon energy and Ip (hartree).
    noise : array_like or False, optional
        Companion floor on the same axis (see :func:`tdse1d.spectra.read_cutoff`);
        ``False`` skips the noise check.
    max_frequency : float, optional
        Ignore the spectrum above this photon energy (hartree).
    drops : tuple of float
        Decades of the drop rules (default one decade).
    smooth_orders, start_orders, noise_margin : float
        As in :func:`tdse1d.spectra.read_cutoff`.

    Returns
    -------
    Reading
        Photon energies in hartree; ``rules`` holds each rule's value.
    """
    w = np.asarray(frequency, dtype=float)
    pw = np.asarray(power, dtype=float)
    if w.ndim != 1 or w.shape != pw.shape or w.size < 4:
        raise ValueError(f"frequency and power must be 1-D of equal length >= 4, got {w.shape} and {pw.shape}")
    if not (np.all(np.isfinite(w)) and np.all(np.isfinite(pw))) or np.any(np.diff(w) <= 0):
        raise ValueError("frequency must be finite and strictly increasing, power finite")
    if np.any(pw < 0) or not np.any(pw > 0):
        raise ValueError("power must be non-negative and not all zero")
    omega0 = _positive(omega0, "omega0")
    ip = _positive(ionization_potential, "ionization_potential")
    drops = tuple(_positive(d, "drop") for d in drops)
    curves = harmonic_curves(w, pw, omega0, smooth_orders=smooth_orders)
    floors = _curve_floors(w, pw, omega0, curves, noise, smooth_orders)
    start = ip + float(start_orders) * omega0
    end = w[-1] if max_frequency is None else float(max_frequency)
    values, reasons, headrooms, levels = {}, {}, [], {}
    for name, (axis, curve) in curves.items():
        floor = floors[name] if floors is not None else np.full(axis.shape, -math.inf)
        for level_rule in PLATEAU_LEVELS:
            for drop in drops:
                rule = f"{name} {level_rule}" + (f" drop {drop:g}" if len(drops) > 1 else "")
                for interpolate in (True, False) if name in HARMONIC_CURVES else (True,):
                    key = rule if interpolate else f"{rule} {LAST_HARMONIC}"
                    value, level, room, why = drop_crossing(
                        axis, curve, floor, level_rule, drop=drop, start=start, end=end,
                        end_width=END_ORDERS * omega0, beyond=smooth_orders * omega0,
                        margin=noise_margin if floors is not None else -math.inf, interpolate=interpolate)
                    values[key], reasons[key], levels[key] = value, why, level
                    if floors is not None and math.isfinite(room):
                        headrooms.append(room)
    headroom = float(min(headrooms)) if headrooms else math.nan
    median_rule = "smoothed median" + (f" drop {min(drops):g}" if len(drops) > 1 else "")
    values["knee"], reasons["knee"] = _knee(w, curves["smoothed"][1], floors, omega0, start, end, values[median_rule],
                                            levels[median_rule], reasons[median_rule], noise_margin)
    step = float(np.median(np.diff(w)))
    return combine_rules(values, step, reasons, headroom)


def _curve_floors(w, pw, omega0, curves, noise, smooth_orders):
    """log10 of the noise floor of each curve, on its own axis (None for ``noise=False``)."""
    if noise is False:
        return None
    floors = {"smoothed": noise_floor(w, pw, companion=noise, half_width=smooth_orders * omega0)}
    companion = harmonic_curves(w, noise, omega0) if noise is not None else None
    for name in ("sums", "peaks"):
        axis, curve = curves[name]
        floors[name] = noise_floor(axis, 10.0 ** curve,
                                   companion=None if companion is None else 10.0 ** companion[name][1])
    return floors


def _knee(w, smoothed, floors, omega0, start, end, reading, level, reason, margin):
    """The knee rule of :func:`cutoff_family`: (value, reason)."""
    if not math.isfinite(reading):
        return math.nan, reason
    floor = floors["smoothed"] if floors is not None else np.full(w.shape, -math.inf)
    signal = np.flatnonzero((w >= start) & (w <= end) & (smoothed >= floor + margin) & (smoothed >= level - KNEE_FALL))
    if signal.size < 8:
        return math.nan, "unresolved (too few samples above the noise floor for a two-line fit)"
    span = slice(signal[0], signal[-1] + 1)
    knee, before, after = two_line_knee(w[span], smoothed[span])
    if not (math.isfinite(knee) and after < 0 and -after >= KNEE_CONTRAST * max(-before, 0.0)):
        return math.nan, "unresolved (no plateau followed by a steeper fall: a featureless spectrum)"
    if not (start <= knee <= reading):
        return math.nan, "unresolved (the two-line knee lies outside the plateau's fall)"
    return knee, ""


__all__ = ["Reading", "combine_rules", "unresolved", "two_line_knee", "cutoff_family", "harmonic_curves",
           "drop_crossing", "unresolved_reason", "CUTOFF_DROPS", "READING_CURVES", "PLATEAU_LEVELS", "END_ORDERS",
           "HARMONIC_CURVES", "LAST_HARMONIC",
           "KNEE_FALL", "KNEE_CONTRAST"]
