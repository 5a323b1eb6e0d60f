"""The emission-time rows per branch, on constructed time-frequency maps with known
branch times, and on null maps that must not be reported as agreeing.

Construction: a field whose bursts come once per cycle (one half cycle of each cycle
emits, as the three-step model's half cycles are listed here: crests one period apart,
so no burst of a neighbouring half cycle falls into a half cycle's search window). In
each half cycle the classical short branch returns (0.40 + 0.30 f) T after the crest and
the long branch (1.00 - 0.30 f) T, for photon energies Ip + f 3.17 Up, f from 0 to 1
(both meet at the cutoff, 0.7 T after the crest, about where the three-step model puts
it; Corkum 1993). The map holds a Gaussian burst of the Gabor window's width T/10 at the
chosen branch's time in each column: the maximum and the centroid read its centre, and
the quantum times of a branch are known exactly.
"""

import math
from types import SimpleNamespace

import numpy as np
import pytest

from tdse1d.analysis import report as report_rows
from tdse1d.analysis.emission import TF_TIMES_PER_CYCLE, EmissionTimes, TimeFrequencyMap, emission_times
from tdse1d.analysis.readings import CONCENTRATION_P, MIN_BRANCH_SAMPLES, emission_timing
from tdse1d.spectra.time_frequency import default_gabor_width

W0 = 0.057
T = 2 * math.pi / W0
IP, UP = 0.58, 0.35
CRESTS = np.arange(4) * T          # one emitting half cycle per cycle
SIGMA = default_gabor_width(W0)


def _branch_times(crest, f):
    return crest + (0.40 + 0.30 * f) * T, crest + (1.00 - 0.30 * f) * T


def _three_step():
    f = np.linspace(0.0, 1.0, 201)
    energy = IP + 3.17 * UP * f
    short, long_ = [], []
    for c in CRESTS:
        ts, tl = _branch_times(c, f)
        short.append(np.column_stack((ts, energy)))
        long_.append(np.column_stack((tl, energy)))
    return SimpleNamespace(short_branch=short, long_branch=long_)


def _map(choose, offset=0.0, rng=None):
    """Gabor-like map with one burst per half cycle and column, on the branch ``choose(k)``
    ("short" or "long") of half cycle k, displaced by ``offset`` cycles."""
    t = np.arange(-T, 5 * T, T / TF_TIMES_PER_CYCLE)
    w = np.linspace(0.0, 1.4 * (IP + 3.17 * UP), 320)
    f = np.clip((w - IP) / (3.17 * UP), 0.0, 1.0)
    power = np.full((t.size, w.size), 1e-8)
    for k, c in enumerate(CRESTS):
        ts, tl = _branch_times(c, f)
        centre = (ts if choose(k) == "short" else tl) + offset * T
        power += np.exp(-0.5 * ((t[:, None] - centre[None, :]) / SIGMA) ** 2)
    if rng is not None:
        power = rng.exponential(size=power.shape)       # no emission: the maximum anywhere
    return TimeFrequencyMap(t, w, power, SIGMA)


def _timing(tf_map):
    s = _three_step()
    family = {rule: emission_times(tf_map, s, T, rule=rule) for rule in ("maximum", "centroid")}
    return emission_timing(family, CRESTS, 1.0 / SIGMA)


def _rows(timing):
    b = report_rows._Builder({}, {})
    report_rows._emission_rows(b, timing)
    return {r.key.rsplit("_", 1)[1]: r for r in b.rows}


def test_each_branch_row_carries_the_times_of_its_own_branch():
    # half cycles 0 and 2 emit on the short branch, 1 and 3 on the long one
    timing = _timing(_map(lambda k: "short" if k % 2 == 0 else "long"))
    rows = _rows(timing)
    for branch in ("short", "long"):
        t, row = timing[branch], rows[branch]
        assert t.quantum.resolved, t.quantum.reason
        assert t.samples >= MIN_BRANCH_SAMPLES and t.concentration_p < CONCENTRATION_P
        # Band, argued before the run: the burst is centred on the branch time; the map
        # is sampled every T/40 = 0.025 cycle and both rules (parabola vertex, centroid
        # above half maximum of a symmetric burst) place its centre within that step
        assert t.quantum.value == pytest.approx(t.classical, abs=1.0 / TF_TIMES_PER_CYCLE)
        assert row.verdict == "agrees", (row.z, row.reason)
        assert math.isfinite(row.spread) and row.spread > 0
    # the two rows carry different values: the short times 0.4-0.7 cycle after the crest,
    # the long ones 0.7-1.0 cycle
    assert rows["short"].quantum < 0.7 * T < rows["long"].quantum


def test_a_displaced_branch_deviates():
    # every burst 0.08 cycle after the long branch (still inside the search window, which
    # ends an eighth of a cycle after it, and still nearer the long branch than the short)
    timing = _timing(_map(lambda k: "long", offset=0.08))
    long_row = _rows(timing)["long"]
    assert timing["long"].quantum.value - timing["long"].classical == pytest.approx(
        0.08, abs=1.0 / TF_TIMES_PER_CYCLE)
    assert long_row.verdict == "deviates" and long_row.z > 2


def test_a_branch_with_too_few_times_is_unresolved():
    # all bursts on the long branch: no time lies nearer the short one
    timing = _timing(_map(lambda k: "long"))
    rows = _rows(timing)
    assert rows["short"].verdict == "unresolved" and math.isnan(rows["short"].quantum)
    assert "assigned to the short branch" in rows["short"].reason
    assert rows["long"].verdict == "agrees"


@pytest.mark.parametrize("seed", range(3))
def test_a_map_of_noise_is_not_reported_as_agreeing(seed):
    rows = _rows(_timing(_map(lambda k: "long", rng=np.random.default_rng(seed))))
    assert rows["short"].verdict != "agrees" and rows["long"].verdict != "agrees"


def test_times_at_random_agree_no_more_often_than_the_threshold_allows():
    # Times drawn uniformly over each sample's search window (the null of the map). Assigned
    # by nearness alone, their median per branch would sit within a few hundredths of a
    # cycle of the branch and "agree"; the concentration test leaves a branch unresolved
    # unless its times beat the uniform spread at p < CONCENTRATION_P = 0.01, so a row of
    # random times agrees in at most about 1 % of maps. Over 400 rows (200 maps) the count
    # is binomial with mean 4; more than 20 (5 %) has probability below 1e-8.
    base = _timing(_map(lambda k: "short" if k % 2 == 0 else "long"))
    s = _three_step()
    em = emission_times(_map(lambda k: "short"), s, T)
    rng = np.random.default_rng(7)
    agreeing = 0
    for _ in range(200):
        lo = np.minimum(em.short, em.long) - T / 8
        hi = np.maximum(em.short, em.long) + T / 8
        random = EmissionTimes(em.half_cycle, em.frequency, rng.uniform(lo, hi), em.short, em.long, em.period)
        rows = _rows(emission_timing({"maximum": random}, CRESTS, 1.0 / SIGMA))
        agreeing += sum(r.verdict == "agrees" for r in rows.values())
    assert agreeing <= 20
    assert base["short"].quantum.resolved   # the same machinery does resolve real bursts
