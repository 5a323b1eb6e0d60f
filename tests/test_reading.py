"""Readings by a family of rules, and the verdicts built on them, on constructed spectra
with known answers, and on null spectra that must come out unresolved.

* The cutoff family on constructed spectra and null spectra: tests/test_reading_family.py.
* The knee of a broken line, and a family with a rule that read no value.
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
from tdse1d.spectra.reading import Reading, combine_rules, two_line_knee

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
