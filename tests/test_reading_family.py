"""The cutoff reading family on spectra with analytic edges, and on null spectra that
must give no value.

The family (``tdse1d.spectra.reading.cutoff_family``, docs/analysis.md "The cutoff
family") reads where the plateau has fallen one decade, on three curves (smoothed log
power, power per harmonic, harmonic peaks) from four plateau levels (median, mean of
log10, highest, the plateau's end), on the per-harmonic curves also as the last
harmonic at or above the drop (the cutoff harmonic), and the knee of a two-line fit.
The constructed
spectra have exact answers:

* a comb of odd harmonics on a flat plateau that ends at ``w_c`` in an exponential fall
  of ``s`` decades per order: every level is the same, and the 1-decade drop is crossed
  exactly ``1/s`` orders beyond ``w_c`` on every curve (below, why each curve reads it
  exactly), and the last harmonic at or above it is the odd order just below that
  crossing; the knee of the fall is ``w_c``;
* the same comb on a plateau that slopes down: the levels differ as their definitions
  say (a law, not a number): counted from the highest level the drop is reached first,
  from the level at the plateau's end last;
* null spectra (flat, pure noise, a power law, a straight exponential fall, a plateau
  that never falls): no value, with a reason.
"""

import math

import numpy as np
import pytest

from tdse1d.spectra.reading import (HARMONIC_CURVES, LAST_HARMONIC, PLATEAU_LEVELS, READING_CURVES, cutoff_family,
                                    harmonic_curves)

W0 = 0.057          # photon energy of the constructed driving field (hartree)
IP = 0.58           # ionization potential (hartree)
W_C = 1.7           # end of the constructed plateau (hartree), order 29.8
SLOPE = 0.5         # decades per harmonic order of the constructed fall


def _comb(rng, slope=SLOPE, w_c=W_C, plateau_slope=0.0, floor=1e-16):
    """Odd harmonics (Gaussian lines 0.1 order wide, on a background 1e-3 of their height)
    under an envelope flat (or falling ``plateau_slope`` decades per order) up to ``w_c``
    and falling ``slope`` decades per order beyond, over a random floor far below."""
    w = np.linspace(0.0, 6.0, 40001)
    order = w / W0
    comb = sum(np.exp(-0.5 * ((order - q) / 0.1) ** 2) for q in range(1, int(6.0 / W0) + 2, 2)) + 1e-3
    q_c = w_c / W0
    log_env = np.where(order <= q_c, -plateau_slope * order, -plateau_slope * q_c - slope * (order - q_c))
    return w, comb * 10.0 ** log_env + floor * rng.exponential(size=w.size)


def test_every_rule_reads_the_analytic_edge():
    r = cutoff_family(*_comb(np.random.default_rng(1)), W0, IP)
    assert r.resolved, r.reason
    last = {f"{c} {lv} {LAST_HARMONIC}" for c in HARMONIC_CURVES for lv in PLATEAU_LEVELS}
    assert set(r.rules) == {f"{c} {lv}" for c in READING_CURVES for lv in PLATEAU_LEVELS} | last | {"knee"}
    # Band, argued before the run: on the flat plateau every level is the plateau's own.
    # The smoothed curve (running mean of log power over +-1 order, one comb period)
    # follows the linear fall of log power exactly once its window is clear of the kink;
    # the 1-decade drop is crossed 1/SLOPE = 2 orders beyond w_c, clear of it. The
    # per-harmonic curves sample the envelope at the odd orders (the line's width, 0.1
    # order, changes a sum by 0.003 decade), and both harmonics bracketing the crossing
    # (orders 31 and 33 around 31.8) lie beyond w_c (29.8), where log power is linear
    # in the order, so the interpolated crossing is exact. Tolerance: a quarter order,
    # the residual ripple of the comb in the running mean.
    expected = W_C + 1.0 / SLOPE * W0
    for name, value in r.rules.items():
        if name != "knee" and not name.endswith(LAST_HARMONIC):
            assert value == pytest.approx(expected, abs=0.25 * W0), name
    # the last harmonic at or above the drop: the envelope stands 0.6 decade below the
    # plateau at order 31 and 1.6 at order 33, so every such rule reads order 31 exactly
    # (the per-harmonic curves' axis is the order times W0; the lines' width changes a
    # sum by 0.003 decade, far from either threshold)
    for name in last:
        assert r.rules[name] == pytest.approx(31 * W0, rel=1e-12), name
    # the knee: the window rounds the kink over +-1 order, so within one order of it
    assert r.rules["knee"] == pytest.approx(W_C, abs=W0)
    assert r.low == min(r.rules.values()) and r.high == max(r.rules.values())
    assert all(abs(v - r.value) <= r.half_range + 1e-15 for v in r.rules.values())


def test_every_rule_follows_the_edge_when_it_moves():
    # a law: moving the plateau end by 5 orders moves every rule by 5 orders (the
    # crossing then lies between orders 35 and 37, again both beyond the kink at 34.8);
    # a rule that names a harmonic can only move by whole harmonic spacings, from the
    # last harmonic below 31.8 (31) to the last below 36.8 (35): by 4 orders exactly
    rng = np.random.default_rng(2)
    a = cutoff_family(*_comb(rng), W0, IP)
    b = cutoff_family(*_comb(rng, w_c=W_C + 5 * W0), W0, IP)
    assert a.resolved and b.resolved
    for name in a.rules:
        moved = 4 * W0 if name.endswith(LAST_HARMONIC) else 5 * W0
        assert b.rules[name] - a.rules[name] == pytest.approx(moved, abs=0.25 * W0), name


def test_the_levels_of_a_sloping_plateau_order_as_defined():
    # a plateau falling 0.05 decade per order (0.9 decade from its start, order 12, to its
    # end): counted from the highest level (its start) the drop is reached first, from
    # the level at its end last, the median and the mean (its middle) in between; the
    # spread of the family is then wider than on the flat plateau
    rng = np.random.default_rng(3)
    r = cutoff_family(*_comb(rng, plateau_slope=0.05), W0, IP)
    flat = cutoff_family(*_comb(rng), W0, IP)
    assert r.resolved, r.reason
    for curve in READING_CURVES:
        top, median, mean, end = (r.rules[f"{curve} {lv}"] for lv in ("top", "median", "mean", "end"))
        assert top < median < end and top < mean < end, curve
    for curve in HARMONIC_CURVES:
        # a named harmonic keeps that order, but two levels may name the same harmonic;
        # and it never lies above the crossing it is the last sample before
        named = {lv: r.rules[f"{curve} {lv} {LAST_HARMONIC}"] for lv in PLATEAU_LEVELS}
        assert named["top"] <= named["median"] <= named["end"] and named["top"] <= named["mean"] <= named["end"]
        assert named["top"] < named["end"], curve
        for lv in PLATEAU_LEVELS:
            assert 0.0 <= r.rules[f"{curve} {lv}"] - named[lv] < 2 * W0, (curve, lv)

    def drop_spread(reading):
        values = [v for k, v in reading.rules.items() if k != "knee"]
        return max(values) - min(values)

    assert drop_spread(r) > 2 * drop_spread(flat)


def test_curves_of_a_clean_comb():
    # the per-harmonic curves sit on the odd orders; on the flat plateau a sum and a peak
    # are the same for every harmonic (one line each, Gaussian of 0.1 order: its sum over
    # the samples is sqrt(2 pi) 0.1 order / step)
    w, p = _comb(np.random.default_rng(4))
    curves = harmonic_curves(w, p, W0)
    axis, sums = curves["sums"]
    assert np.allclose(axis / W0 % 2, 1.0)
    plateau = (axis > IP) & (axis < W_C - 2 * W0)
    step_orders = (w[1] - w[0]) / W0
    assert np.allclose(sums[plateau], math.log10(math.sqrt(2 * math.pi) * 0.1 / step_orders + 2e-3 / step_orders),
                       atol=0.01)
    assert np.allclose(curves["peaks"][1][plateau], math.log10(1 + 1e-3), atol=1e-3)


@pytest.mark.parametrize("null", ["flat", "noise", "power law", "exponential", "no fall"])
def test_a_null_spectrum_gives_no_cutoff(null):
    rng = np.random.default_rng(5)
    w = np.linspace(0.0, 6.0, 40001)
    if null == "flat":
        power = np.ones_like(w)                                          # nothing falls
    elif null == "noise":
        power = rng.exponential(size=w.size)                             # the floor everywhere
    elif null == "power law":
        power = (w + 0.05) ** -4.0 * (1 + 0.1 * rng.standard_normal(w.size) ** 2)   # no plateau
    elif null == "exponential":
        # one straight fall over 50 decades, far above a floor: the drop rules read it,
        # the knee finds no change of slope, so the family gives no value
        power = 10.0 ** (-0.5 * w / W0) + 1e-60 * rng.exponential(size=w.size)
    else:
        power = _comb(rng, slope=0.0)[1]                                 # a plateau up to the end
    r = cutoff_family(w, power, W0, IP)
    assert not r.resolved and r.reason and math.isnan(r.value) and math.isnan(r.uncertainty)
    if null == "exponential":
        assert "featureless" in r.reason


def test_a_plateau_too_close_to_the_floor_is_unresolved():
    # the comb (line peaks 1) over noise of mean 10^-1.5: the peaks stand 1.5 decades above
    # the noise's mean, its maxima over a bin (760 samples) reach ln(760) = 6.6 times that,
    # and a line's sum over its bin is 4 times the noise's sum: every curve's reading level
    # (plateau - 1 decade) stands less than the 1-decade margin above its floor, or the
    # curve never falls a decade above it (the smoothed log power): no rule reads a value
    rng = np.random.default_rng(6)
    w, p = _comb(rng, floor=0.0)
    p = p + 10 ** -1.5 * rng.exponential(size=w.size)
    r = cutoff_family(w, p, W0, IP)
    assert not r.resolved and r.reason.startswith("unresolved")
    assert all(math.isnan(v) for v in r.rules.values())
