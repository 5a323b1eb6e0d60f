"""The three-step model after the pulse: no births in the field-free tail, and the one
straight-flight crossing of the origin found without scanning the tail, checked against
the straight line x_e + v (t - t_e) written here."""

import numpy as np
import pytest

from tdse1d.semiclassical import three_step

W, E0 = 0.057, 0.05


def _pulse(cycles, tail_cycles, dt=0.05):
    period = 2 * np.pi / W
    t = np.arange(0.0, (cycles + tail_cycles) * period, dt)
    length = cycles * period
    on = t < length
    env = np.where(on, np.sin(np.pi * t / length) ** 2, 0.0)
    denv = np.where(on, np.pi / length * np.sin(2 * np.pi * t / length), 0.0)
    a = -E0 / W * env * np.sin(W * t)
    e = E0 / W * (denv * np.sin(W * t) + env * W * np.cos(W * t))
    return t, e, a, length


def test_births_stop_where_the_field_does():
    t, e, a, length = _pulse(4, 10)
    traj = three_step.trajectories(t, e, a)
    assert traj.birth_time[-1] < length + 0.1
    # null case: births given over the tail are kept when asked for
    asked = three_step.trajectories(t, e, a, birth_times=[length + 100.0])
    assert asked.birth_time[0] > length


def test_the_tail_does_not_change_the_returns():
    # the same pulse with a short and a long field-free tail: the births are the same,
    # and every return inside the short record is the same to the refinement's
    # tolerance (1e-13 of the record length, set in refine)
    short, long_ = three_step.trajectories(*_pulse(4, 1)[:3]), three_step.trajectories(*_pulse(4, 12)[:3])
    assert np.array_equal(short.birth_time, long_.birth_time)
    t_short_end = _pulse(4, 1)[0][-1]
    inside = np.isfinite(short.return_time)
    assert np.allclose(short.return_time[inside], long_.return_time[inside], rtol=0, atol=1e-9)
    # returns the short record could not see are after its end
    later = np.isfinite(long_.return_time) & ~inside
    assert np.all(long_.return_time[later] > t_short_end - 1e-9)


def test_straight_flight_crossing_after_the_pulse():
    t, e, a, length = _pulse(4, 12)
    traj = three_step.trajectories(t, e, a, max_returns=6)
    # the straight line after the field: x(t) = x_e + v (t - t_e) with v = -A(t0) (A = 0
    # after the pulse) and x_e from the trapezoid integral of A - A(t0) over the pulse
    end = np.searchsorted(t, length)
    checked = 0
    for i, t0 in enumerate(traj.birth_time):
        a0 = np.interp(t0, t, a)
        seg = (t >= t0) & (t <= t[end])
        x_e = np.trapezoid(a[seg] - a0, t[seg])
        v = -a0
        if v == 0 or -x_e / v <= 0:
            continue
        t_cross = t[end] - x_e / v
        if t_cross > t[-1]:
            continue
        found = traj.return_time[i][np.isfinite(traj.return_time[i])]
        after = found[found > t[end]]
        if after.size:
            # the trapezoid rule errs by at most span dt^2 max|A''| / 12 in x_e, with
            # |A''| = |dE/dt| <= E0 W (1 + 1/cycles); a factor 2 of margin; the time
            # of the crossing then errs by that over |v|
            dt = t[1] - t[0]
            dx = 2 * (t[end] - t0) * dt**2 * E0 * W * 1.25 / 12
            assert after[0] == pytest.approx(t_cross, abs=dx / abs(v))
            checked += 1
    assert checked > 5
