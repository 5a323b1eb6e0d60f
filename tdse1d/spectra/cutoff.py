"""Reading the plateau cutoff off a harmonic spectrum (:func:`read_cutoff`, with the rule
given in its docstring) above the spectrum's noise floor (:func:`noise_floor`). Pure
numerics on arrays, Hartree atomic units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .sampling import _positive


# --------------------------------------------------------------------------- cutoff


@dataclass(frozen=True, eq=False)
class CutoffEstimate:
    """Plateau cutoff read off a harmonic spectrum by :func:`read_cutoff`.

    Attributes
    ----------
    frequency : float
        Cutoff photon energy (a.u.).
    order : float
        ``frequency / omega0``.
    plateau_log10 : float
        Plateau level: median of the smoothed log10(power) over the plateau.
    plateau_start : float
        Lowest photon energy of the plateau region used (a.u.).
    smoothed_log10 : ndarray
        The smoothed log10(power) on the input frequency axis (for plotting).
    resolved : bool
        False when the spectrum has not fallen by ``drop`` decades before the end of
        the searched range (the cutoff lies at or beyond the end of the data), or when
        the reading level stands less than the noise margin above the noise floor.
    noise_floor_log10 : float
        log10 of the noise floor at the reading (NaN if no floor was estimated).
    headroom : float
        Decades by which the reading level ``plateau_log10 - drop`` stands above the
        noise floor at the reading.
    reason : str
        Empty for a resolved cutoff; otherwise why it is not, e.g.
        ``"unresolved (within 0.3 decades of the noise floor)"``. ``frequency`` and
        ``order`` are NaN when the reading is within the noise margin.
    """

    frequency: float
    order: float
    plateau_log10: float
    plateau_start: float
    smoothed_log10: np.ndarray
    resolved: bool
    noise_floor_log10: float = math.nan
    headroom: float = math.nan
    reason: str = ""


#: decades above the noise floor a reading level must stand for the reading to count.
#: The smoothed log-spectrum of pure noise scatters by about 0.56 / sqrt(n) decades
#: (std of log10 of an exponentially distributed power, pi / (sqrt(6) ln 10), over n
#: independent samples in the smoothing window, n >= 8 for the windows used here), so
#: one decade is more than five standard deviations of the noise.
NOISE_MARGIN = 1.0
#: the flat part of the floor is the median over the axis above this fraction of its end
NOISE_FROM = 0.5


def noise_floor(axis, values, *, companion=None, half_width=None) -> np.ndarray:
    """Numerical noise floor of a spectrum, log10, on its own axis.

    Two parts, the larger one counts at each point:

    * flat: the median of log10(values) over the top half of the axis. Far beyond
      any physical feature a computed spectrum holds only numerical noise (round-off
      of the dipole acceleration, the split-operator and projection error of a
      photoelectron spectrum); a run's harmonic spectrum reaches the Nyquist frequency
      pi / dt (60 hartree at dt = 0.05 a.u.) and its photoelectron spectrum
      (pi / dx)^2 / 2, both far above any cutoff. The median ignores a few lines that
      reach into the top half.
    * companion: a spectrum of the same signal path with no emission in it, given by
      the caller on the same axis, smoothed like the spectrum (running mean of its
      log10 over ``half_width``). For a harmonic spectrum this is the spectrum of the
      driving field E(t) through the same window: the Ehrenfest acceleration holds
      the term -E(t) N(t), and far above the bound-state resonances the linear
      response of any bound electron tends to the free one, -E(t) (Thomas-Reiche-Kuhn
      sum rule), so a run at vanishing intensity gives exactly this spectrum there
      (checked in the tests). It is the leakage of the fundamental line through the
      pulse envelope and the window, which falls as a power of the frequency and is
      far above round-off.

    Parameters
    ----------
    axis : array_like, shape (n,)
        Increasing abscissae (photon or kinetic energy).
    values : array_like, shape (n,)
        Spectral density (any unit); non-positive or non-finite values are skipped.
    companion : array_like, shape (n,), optional
        Floor spectrum on the same axis, same unit as ``values``.
    half_width : float, optional
        Half width of the running mean of log10(companion) (unit of ``axis``); none
        if not given.

    Returns
    -------
    ndarray, shape (n,)
        log10 of the floor.
    """
    x = np.asarray(axis, dtype=float)
    y = np.asarray(values, dtype=float)
    if x.ndim != 1 or x.shape != y.shape:
        raise ValueError(f"axis and values must be 1-D of equal length, got {x.shape} and {y.shape}")
    keep = (x >= NOISE_FROM * x[-1]) & np.isfinite(y) & (y > 0)
    if keep.sum() < 4:
        raise ValueError("fewer than 4 positive samples in the top half of the axis: no noise floor can be estimated")
    floor = np.full(x.shape, float(np.median(np.log10(y[keep]))))
    if companion is not None:
        c = np.asarray(companion, dtype=float)
        if c.shape != x.shape:
            raise ValueError(f"companion must have the shape of the axis {x.shape}, got {c.shape}")
        log_c = np.log10(np.maximum(np.nan_to_num(c), 1e-300))
        if half_width:
            log_c = running_mean(x, log_c, float(half_width))
        floor = np.maximum(floor, log_c)
    return floor


def unresolved_reason(headroom: float) -> str:
    """The words a reading within the noise margin is reported with.

    Parameters
    ----------
    headroom : float
        Decades by which the reading level stands above the noise floor (may be < 0).
    """
    if not headroom > 0:
        return "unresolved (at or below the noise floor)"
    return f"unresolved (within {headroom:.1f} decades of the noise floor)"


def running_mean(axis, values, half_width):
    """Mean of ``values`` over ``|axis' - axis| <= half_width`` (window shrinks at the edges)."""
    csum = np.concatenate(([0.0], np.cumsum(values)))
    lo = np.searchsorted(axis, axis - half_width, side="left")
    hi = np.searchsorted(axis, axis + half_width, side="right")
    return (csum[hi] - csum[lo]) / (hi - lo)


def read_cutoff(
    frequency,
    power,
    omega0,
    ionization_potential,
    *,
    drop=1.5,
    smooth_orders=1.0,
    start_orders=2.0,
    max_frequency=None,
    floor_decades=30.0,
    max_iterations=20,
    noise=None,
    noise_margin=NOISE_MARGIN,
    plateau="median",
) -> CutoffEstimate:
    """Read the plateau cutoff off a harmonic spectrum.

    The rule (all energies are photon energies w, a.u.):

    1. ``L(w) = log10(max(power, floor))`` with ``floor = max(power) * 10**-floor_decades``;
       then ``S(w)`` = running mean of L over ``|w' - w| <= smooth_orders * omega0``
       (the window shrinks at the ends of the axis). Averaging in log space over one
       harmonic spacing (2 omega0 for the default) levels the comb of odd harmonics
       and its deep minima into one smooth curve.
    2. The plateau region starts at ``w_start = Ip + start_orders * omega0``, above
       the bound-bound and near-threshold structure; the search ends at
       ``max_frequency`` (default: the end of the axis).
    3. Start with the level ``P = max S`` over ``[w_start, w_end]``. Repeat: the
       cutoff ``w_c`` is the highest w in ``[w_start, w_end]`` with
       ``S(w) >= P - drop``, so S stays below ``P - drop`` everywhere above it; then
       ``P`` = median of S over ``[w_start, w_c]``. Stop when ``w_c`` repeats a
       previous value (at most ``max_iterations`` times). With ``plateau="top"`` the
       level stays ``P = max S`` (no iteration): the drop is then counted from the
       plateau's highest level, which reads a plateau that slopes down earlier.

    4. Noise: the reading level ``P - drop`` must stand at least ``noise_margin``
       decades above the noise floor at ``w_c`` (:func:`noise_floor` of the input and
       of the companion ``noise`` if given); otherwise the cutoff is
       unresolved, ``frequency`` is NaN and ``reason`` says so. A plateau must thus
       stand ``drop + noise_margin`` decades (2.5 by default) above the floor.

    Because only the *last* crossing counts, dips of the plateau deeper than ``drop``
    (interference minima) do not end it. For a plateau that ends at order ``q_k`` in
    an exponential fall of ``s`` decades per order, the rule returns about
    ``q_k + drop / s``: the estimate lies slightly beyond the knee, by less than two
    orders for falls steeper than about one decade per order.

    Parameters
    ----------
    frequency : array_like, shape (n,)
        Increasing photon energies (a.u.), e.g. ``HarmonicSpectrum.frequency``.
    power : array_like, shape (n,)
        Non-negative spectral power at those energies.
    omega0 : float
        Fundamental angular frequency (a.u.).
    ionization_potential : float
        Ip of the target (a.u., positive).
    drop : float
        Decades below the plateau level that define its end. Default 1.5.
    smooth_orders : float
        Half width of the log-space running mean in harmonic orders. Default 1.
    start_orders : float
        Plateau region starts this many orders above Ip. Default 2.
    max_frequency : float, optional
        Ignore the spectrum above this energy (a.u.), e.g. a numerical noise floor.
    floor_decades : float
        Powers more than this many decades below the maximum are raised to that floor
        before the logarithm (zeros would give -inf).
    max_iterations : int
        Cap on the fixed-point iteration of step 3.
    noise : array_like or False, optional
        A floor spectrum on the same axis (same unit as ``power``), e.g. the spectrum
        of the driving field through the same window; it is combined with the flat
        floor of the input by :func:`noise_floor`. Default: the flat floor alone;
        ``False`` skips step 4.
    noise_margin : float
        Decades (step 4). Default :data:`NOISE_MARGIN`.
    plateau : {"median", "top"}
        Plateau level of step 3: the fixed-point median (default) or the highest level.

    Returns
    -------
    CutoffEstimate
    """
    w = np.asarray(frequency, dtype=float)
    pw = np.asarray(power, dtype=float)
    if w.ndim != 1 or w.shape != pw.shape or w.size < 4:
        raise ValueError(
            f"frequency and power must be 1-D of equal length >= 4, got {w.shape} and {pw.shape}"
        )
    if not (np.all(np.isfinite(w)) and np.all(np.isfinite(pw))):
        raise ValueError("frequency and power must be finite")
    if np.any(np.diff(w) <= 0):
        raise ValueError("frequency must be strictly increasing")
    if np.any(pw < 0) or not np.any(pw > 0):
        raise ValueError("power must be non-negative and not all zero")
    omega0 = _positive(omega0, "omega0")
    ip = _positive(ionization_potential, "ionization_potential")
    drop = _positive(drop, "drop")
    smooth_orders = _positive(smooth_orders, "smooth_orders")
    floor_decades = _positive(floor_decades, "floor_decades")
    if float(start_orders) < 0:
        raise ValueError(f"start_orders must be >= 0, got {start_orders}")
    if plateau not in ("median", "top"):
        raise ValueError(f"plateau must be 'median' or 'top', got {plateau!r}")

    log_power = np.log10(np.maximum(pw, pw.max() * 10.0**-floor_decades))
    smoothed = running_mean(w, log_power, smooth_orders * omega0)

    w_start = ip + float(start_orders) * omega0
    w_end = w[-1] if max_frequency is None else float(max_frequency)
    region = np.flatnonzero((w >= w_start) & (w <= w_end))
    if region.size < 2:
        raise ValueError(
            f"no spectrum between the plateau start Ip + {start_orders} omega0 = {w_start:.4g} "
            f"a.u. and {w_end:.4g} a.u.; extend the frequency axis or lower start_orders"
        )
    s_region = smoothed[region]
    level = float(np.max(s_region))
    seen = set()
    for _ in range(int(max_iterations) if plateau == "median" else 1):
        last = int(np.flatnonzero(s_region >= level - drop)[-1])
        if last in seen or plateau == "top":
            break
        seen.add(last)
        level = float(np.median(s_region[: last + 1]))
    cutoff = float(w[region[last]])
    resolved = bool(w[region[-1]] - cutoff > smooth_orders * omega0)
    reason = "" if resolved else "at or beyond the end of the data"
    floor_at = headroom = math.nan
    if noise is not False:
        try:
            floor = noise_floor(w, pw, companion=noise, half_width=smooth_orders * omega0)
        except ValueError as exc:
            # e.g. a short measured spectrum: with no floor, no reading can be certified
            resolved, reason, cutoff = False, f"unresolved: {exc}", math.nan
        else:
            floor_at = float(floor[region[last]])
            headroom = level - drop - floor_at
            if not headroom >= noise_margin:
                resolved, reason, cutoff = False, unresolved_reason(headroom), math.nan
    return CutoffEstimate(
        frequency=cutoff,
        order=cutoff / omega0,
        plateau_log10=level,
        plateau_start=float(w[region[0]]),
        smoothed_log10=smoothed,
        resolved=resolved,
        noise_floor_log10=floor_at,
        headroom=headroom,
        reason=reason,
    )
