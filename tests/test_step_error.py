"""The splitting-error estimate behind the automatic time step (step doubling on a
packet crossing the core) against the exact propagation, which the test computes
itself from a dense eigendecomposition of the probe's Hamiltonian (scipy)."""

import math

import numpy as np
import pytest
import scipy.linalg
from threadpoolctl import threadpool_limits

from tdse1d.physics.potentials import Centre, SoftCore
from tdse1d.physics.propagation import SCHEMES
from tdse1d.semiclassical.step_error import passage_error, probe, propagate_probe, step_for_tolerance

ARGON = SoftCore((Centre(0.0, 1.0, 1.19),))


def _exact(pr, t):
    column = np.fft.ifft(0.5 * pr.k**2).real
    h = scipy.linalg.circulant(column) + np.diag(pr.potential_values)
    with threadpool_limits(limits=1, user_api="blas"):  # small: one thread is fastest on shared cores
        e, u = scipy.linalg.eigh(h)
        return u @ (np.exp(-1j * e * t) * (u.T @ pr.packet))


@pytest.mark.parametrize("scheme", ["strang", "yoshida4"])
def test_error_follows_the_order_law(scheme):
    # a method of order p: halving the step divides the error by 2^p; the schemes are
    # symmetric, so the next term is two orders higher: at these steps the measured
    # slopes must lie within 0.15 of p (a tenth of the gap to the next term's slope)
    s = SCHEMES[scheme]
    errors = [passage_error(ARGON, 2.0, dt, s.weights, s.order).error for dt in (0.04, 0.02, 0.01)]
    slopes = [math.log2(errors[i] / errors[i + 1]) for i in range(2)]
    assert all(abs(slope - s.order) < 0.15 for slope in slopes), slopes


@pytest.mark.parametrize("scheme", ["strang", "yoshida4"])
def test_estimate_tracks_the_true_error(scheme):
    # Richardson's estimate misses only the next even order: its relative error is
    # ~ (dt / dt_scale)^2, a few per cent at these steps (slopes above); 20 % allows
    # for that and is far below the factor a wrong estimate would be off by
    s = SCHEMES[scheme]
    dt = 0.04 if s.order == 2 else 0.1
    pr = probe(ARGON, 2.0)
    steps = math.ceil(pr.duration / dt)
    true = np.linalg.norm(propagate_probe(pr, s.weights, dt, steps) - _exact(pr, steps * dt))
    estimate = passage_error(ARGON, 2.0, dt, s.weights, s.order).error
    assert estimate == pytest.approx(true, rel=0.2)
    # null case: the error of half the step is not the error of the step
    half = passage_error(ARGON, 2.0, dt / 2, s.weights, s.order).error
    assert half != pytest.approx(true, rel=0.2)


def test_a_free_electron_has_no_splitting_error():
    # with no potential, T and a constant V commute: the estimate is round-off
    class Flat:
        def value(self, x):
            return np.zeros_like(np.asarray(x, dtype=float))

    assert passage_error(Flat(), 2.0, 0.05, (1.0,), 2).error < 1e-12


def test_the_chosen_step_meets_its_tolerance():
    s = SCHEMES["strang"]
    # both tolerances below the error at the largest step (1e-5 there), so neither is capped
    loose = step_for_tolerance(ARGON, 3.0, s.weights, s.order, tolerance=1e-6, first=0.05, largest=0.05)
    tight = step_for_tolerance(ARGON, 3.0, s.weights, s.order, tolerance=1e-8, first=0.05, largest=0.05)
    assert tight.error <= 1e-8 and loose.error <= 1e-6
    assert tight.time_step < loose.time_step
    # the law: the steps scale as the tolerances to the power 1/p (within the 10 %
    # aim below the tolerance and one re-measurement)
    assert tight.time_step / loose.time_step == pytest.approx((1e-8 / 1e-6) ** 0.5, rel=0.25)
