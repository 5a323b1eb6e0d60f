"""Readings by a family of rules, and the verdicts built on them, on constructed spectra
with known answers, and on null spectra that must come out unresolved.

* The cutoff family on a harmonic comb whose plateau ends at a known photon energy
  in an exponential fall of known slope: each drop rule must read where the analytic
  fall crosses its level, the knee the end of the plateau (exact answers of the
  construction).
* Null spectra (random power on a flat level, a featureless power law, a plateau that
  never falls) must give no value, with a reason.
* The verdict on constructed numbers (agrees, deviates, unresolved) and the quadrature
  sum of the uncertainty parts (GUM, JCGM 100:2008, 5.1.2).
* The dressed line on a constructed comb E_n = E0 - U + n w (known shift and spacing),
  on a single line (no sidebands) and on noise.
"""

import math

import numpy as np
import pytest

from tdse1d.analysis import report as report_rows
from tdse1d.analysis.sidebands import dressed_line, wrap_shift
from tdse1d.analysis.verdict import AGREE_WITHIN, combined_uncertainty, verdict
from tdse1d.spectra.reading import Reading, combine_rules, cutoff_family, two_line_knee

W0 = 0.057          # photon energy of the constructed driving field (hartree)
IP = 0.58           # ionization potential (hartree)
W_C = 1.7           # end of the constructed plateau (hartree)
SLOPE = 0.5         # decades per harmonic order of the constructed fall


def _harmonic_comb(rng, slope=SLOPE, w_c=W_C, floor=1e-16):
    """Odd harmonics (Gaussian lines 0.1 order wide) on a flat plateau that ends at w_c
    and falls by ``slope`` decades per order beyond, over a random floor far below."""
    w = np.linspace(0.0, 6.0, 40001)
    order = w / W0
    comb = sum(np.exp(-0.5 * ((order - q) / 0.1) ** 2) for q in range(1, int(6.0 / W0) + 2, 2)) + 1e-3
    envelope = np.where(w <= w_c, 1.0, 10.0 ** (-slope * (w - w_c) / W0))
    return w, comb * envelope + floor * rng.exponential(size=w.size)


def test_cutoff_family_reads_the_analytic_edge():
    w, power = _harmonic_comb(np.random.default_rng(1))
    r = cutoff_family(w, power, W0, IP)
    assert r.resolved, r.reason
    # the running mean over +-1 order levels the comb (one period, 2 orders) to a
    # constant on the plateau and follows the linear fall of log power exactly once
    # the window is clear of the kink; a drop of D decades is then crossed D / SLOPE
    # orders beyond w_c (2, 3 and 4 orders here, all beyond the 1-order window): the
    # tolerance is a quarter order, the comb's residual ripple in the running mean
    for drop in (1.0, 1.5, 2.0):
        for plateau in ("median", "top"):
            assert r.rules[f"{plateau} drop {drop:g}"] == pytest.approx(W_C + drop / SLOPE * W0, abs=0.25 * W0)
    # the knee of the two-line fit: the kink is rounded over +-1 order by the window,
    # so the fitted knee lies within that order of it
    assert r.rules["knee"] == pytest.approx(W_C, abs=W0)
    # the central value +- the half range covers every rule, and the range is the rules'
    assert r.low == min(r.rules.values()) and r.high == max(r.rules.values())
    assert all(abs(v - r.value) <= r.half_range + 1e-15 for v in r.rules.values())
    assert r.uncertainty >= r.half_range


def test_cutoff_family_follows_the_edge_when_it_moves():
    # a law, not a number: moving the constructed plateau end by 5 orders moves every
    # rule by 5 orders (within the quarter-order ripple)
    rng = np.random.default_rng(2)
    a = cutoff_family(*_harmonic_comb(rng), W0, IP)
    b = cutoff_family(*_harmonic_comb(rng, w_c=W_C + 5 * W0), W0, IP)
    for name in a.rules:
        assert b.rules[name] - a.rules[name] == pytest.approx(5 * W0, abs=0.25 * W0)


@pytest.mark.parametrize("null", ["random", "power law", "exponential", "no fall"])
def test_cutoff_family_gives_no_value_on_a_null_spectrum(null):
    rng = np.random.default_rng(3)
    w = np.linspace(0.0, 6.0, 40001)
    if null == "random":
        power = rng.exponential(size=w.size)                         # featureless noise
    elif null == "power law":
        power = (w + 0.05) ** -4.0 * (1 + 0.1 * rng.standard_normal(w.size) ** 2)   # no plateau
    elif null == "exponential":
        # one straight fall in log power over 50 decades, far above a floor: the drop
        # rules read it, the knee finds no change of slope, so the family gives no value
        power = 10.0 ** (-0.5 * w / W0) + 1e-60 * rng.exponential(size=w.size)
    else:
        power = _harmonic_comb(rng, slope=0.0)[1]                     # a plateau up to the end
    r = cutoff_family(w, power, W0, IP)
    assert not r.resolved and r.reason and math.isnan(r.value) and math.isnan(r.uncertainty)
    if null == "exponential":
        assert "featureless" in r.reason


def test_two_line_knee_of_a_broken_line():
    x = np.linspace(0.0, 10.0, 201)
    y = np.where(x < 6.3, -0.1 * x, -0.63 - 2.0 * (x - 6.3))
    knee, before, after = two_line_knee(x, y)
    assert knee == pytest.approx(6.3, abs=0.05)   # one sample of the axis
    assert before == pytest.approx(-0.1, abs=1e-6) and after == pytest.approx(-2.0, abs=1e-6)


def test_a_family_with_a_failed_rule_is_unresolved():
    r = combine_rules({"a": 1.0, "b": math.nan}, 0.01, {"b": "unresolved (at or below the noise floor)"})
    assert not r.resolved and r.reason == "unresolved (at or below the noise floor)"
    ok = combine_rules({"a": 1.0, "b": 1.4, "c": 1.1}, 0.0)
    assert ok.value == pytest.approx(1.2) and ok.half_range == pytest.approx(0.2)
    # the sampling step enters as a rectangular distribution over one sample, step / sqrt(12)
    assert combine_rules({"a": 2.0}, 0.12).uncertainty == pytest.approx(0.12 / math.sqrt(12))


# --------------------------------------------------------------------------- verdicts


@pytest.mark.parametrize("prediction, quantum, u, word", [
    (10.0, 10.5, 0.5, "agrees"),       # z = 1
    (10.0, 11.0, 0.5, "agrees"),       # z = 2, on the boundary
    (10.0, 12.0, 0.5, "deviates"),     # z = 4
    (10.0, 7.0, 1.0, "deviates"),      # z = -3
    (1.0, 1.2, 1.5, "unresolved"),     # u larger than the effect (prediction and value)
    (1e-6, 0.1, 0.01, "deviates"),     # a tiny prediction, a value well above its u
    (10.0, 10.2, math.nan, "unresolved"),
    (10.0, math.nan, 0.5, "unresolved"),
    (math.nan, 3.0, 0.5, ""),          # nothing to compare with
])
def test_verdict_on_constructed_numbers(prediction, quantum, u, word):
    v = verdict(prediction, quantum, u)
    assert v.word == word
    if word in ("agrees", "deviates"):
        assert v.z == pytest.approx((quantum - prediction) / u)
        assert (abs(v.z) <= AGREE_WITHIN) == (word == "agrees")
    else:
        assert math.isnan(v.z)


def test_verdict_is_unresolved_below_the_noise_floor_whatever_the_numbers():
    v = verdict(10.0, 10.0, 0.1, unresolved="unresolved (within 0.3 decades of the noise floor)")
    assert v.word == "unresolved" and "noise floor" in v.reason
    # an effect given explicitly: a time difference of 0.05 cycle read to 0.2 cycle
    assert verdict(0.55, 0.60, 0.2, effect=0.1).word == "unresolved"
    assert verdict(0.55, 0.60, 0.02, effect=0.3).word == "deviates"


def test_uncertainty_parts_add_in_quadrature():
    assert combined_uncertainty(3.0, 4.0) == pytest.approx(5.0)
    assert combined_uncertainty(3.0, math.nan, None, 4.0) == pytest.approx(5.0)
    assert math.isnan(combined_uncertainty(math.nan, None))


def test_row_builder_takes_numerical_spread_and_not_converged():
    b = report_rows._Builder({"harmonic_cutoff": 0.4}, {"ionization_probability": "not converged: enlarge grid.points"})
    reading = Reading(10.0, 9.7, 10.3, {"a": 9.7, "b": 10.3}, 0.0)
    b.add("harmonic cutoff", "harmonic_cutoff", 9.0, "law", math.nan, "photon", reading=reading, effect=8.0)
    b.add("ionization probability", "ionization_probability", 0.2, "model", 0.21, "probability", reading_u=0.01)
    cut, ion = b.rows
    assert cut.uncertainty == pytest.approx(0.5)            # 0.3 reading, 0.4 numerical
    assert cut.z == pytest.approx(2.0) and cut.verdict == "agrees"
    assert dict(cut.parts) == pytest.approx({"reading": 0.3, "numerical": 0.4})
    assert ion.verdict == "unresolved" and math.isnan(ion.quantum) and "enlarge grid.points" in ion.reason
    # not a value, but the range a converged value is expected in: value +- uncertainty;
    # a row below the noise floor gets no range (it has no value to widen), the converged
    # cut-off row none either
    assert ion.unconverged_range == pytest.approx((0.20, 0.22)) and cut.unconverged_range == ()
    b.add("backscattered edge", "backscattered_edge", 1.0, "law", 1.1, "energy", reading_u=0.05,
          reason="unresolved (within 0.4 decades of the noise floor)")
    assert b.rows[-1].unconverged_range == () and b.rows[-1].verdict == "unresolved"


# --------------------------------------------------------------------------- dressed line


def _comb_spectrum(shift, spacing, e0=0.235, width=0.002, lines=range(-4, 5), rng=None):
    e = np.linspace(0.0, 1.0, 20001)
    d = sum(np.exp(-0.5 * ((e - (e0 + shift + n * spacing)) / width) ** 2) * math.exp(-0.1 * n * n)
            for n in lines) + 1e-12
    if rng is not None:
        d = d + 1e-12 * rng.exponential(size=e.size)
    return e, d


def test_dressed_line_reads_a_known_comb():
    w, up = 0.057, 0.044                     # an 800 nm photon and the Up of 2e13 W/cm^2
    e, d = _comb_spectrum(-up, w, rng=np.random.default_rng(4))
    line = dressed_line(e, d, 0.735, 0.5, w, 0.5)
    # the construction puts every line exactly E0 - Up + n w: each rule within one
    # sample of the axis (5e-5 hartree) of it
    assert line.shift.value == pytest.approx(-up, abs=1e-4)
    assert line.below.value == pytest.approx(w, abs=1e-4) and line.above.value == pytest.approx(w, abs=1e-4)
    assert line.main == pytest.approx(0.235 - up, abs=1e-4)


def test_dressed_line_without_sidebands_and_on_noise():
    w = 0.057
    e, d = _comb_spectrum(0.0, w, lines=[0])  # one line, no infrared field
    line = dressed_line(e, d, 0.735, 0.5, w, 0.5)
    assert line.shift.value == pytest.approx(0.0, abs=1e-4)
    assert not line.below.resolved and not line.above.resolved
    noise = np.random.default_rng(5).exponential(size=e.size)
    assert not dressed_line(e, noise, 0.735, 0.5, w, 0.5).shift.resolved


def test_wrap_shift_keeps_the_branch_continuous_from_zero():
    w = 0.057
    assert wrap_shift(-0.044, w) == pytest.approx(-0.044)
    assert wrap_shift(-0.044 + w, w) == pytest.approx(-0.044)        # modulo the photon energy
    assert wrap_shift(0.003, w) == pytest.approx(0.003)              # a small upward shift stays one
