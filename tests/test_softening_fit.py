"""The softening fit (Newton with a Hellmann-Feynman slope) against an independent root
finder: Brent's method on the lowest eigenvalue of a dense H the test builds itself."""

import numpy as np
import pytest
import scipy.linalg
from scipy.optimize import brentq

import tdse1d.physics.states as states
from tdse1d.physics.grid import Grid
from tdse1d.physics.potentials import Centre, SoftCore
from tdse1d.physics.states import FIT_WINDOW, SofteningFitError, fit_softening
from tdse1d.units import ev_to_au


def soft_core(a, z=1.0):
    return SoftCore((Centre(0.0, z, a),))


def _reference_root(grid, ip):
    """Brent on E0(a) + Ip with the test's own dense Fourier-grid H on the fit window."""
    n = min(grid.points, 2 * int(np.ceil(FIT_WINDOW / grid.spacing)))
    n += n % 2
    x = (np.arange(n) - n // 2) * grid.spacing
    k = 2 * np.pi * np.fft.fftfreq(n, grid.spacing)
    t = scipy.linalg.circulant(np.fft.ifft(0.5 * k**2).real)

    def mismatch(a):
        return scipy.linalg.eigvalsh(t + np.diag(-1.0 / np.sqrt(x**2 + a**2)))[0] + ip

    return brentq(mismatch, 1e-3, 50.0, xtol=1e-14, rtol=1e-14)


@pytest.mark.parametrize("ip_ev", [13.6, 15.76, 24.59])
def test_fit_equals_an_independent_root(ip_ev):
    # Both find the root of the same smooth function to ~1e-14; the energies carry
    # round-off of ~1e-15 Hartree and dE/da ~ 0.3 Hartree/bohr, so the softenings agree
    # to a few 1e-14 bohr: tolerance 1e-12 bohr.
    grid, ip = Grid(500, 0.2), ev_to_au(ip_ev)
    assert fit_softening(grid, soft_core(1.0), ip) == pytest.approx(_reference_root(grid, ip), abs=1e-12)
    # null case: another Ip gives another softening, far outside that tolerance
    assert abs(fit_softening(grid, soft_core(1.0), 1.01 * ip) - _reference_root(grid, ip)) > 1e-4


def _counted_fit(monkeypatch, *args, **kwargs):
    calls = []
    original = states._ground_pair

    def counting(*a, **k):
        calls.append(1)
        return original(*a, **k)

    monkeypatch.setattr(states, "_ground_pair", counting)
    a = fit_softening(*args, **kwargs)
    return a, len(calls)


def test_fit_from_a_nearby_guess_takes_few_solves(monkeypatch):
    # Newton converges quadratically: from the fit on a grid of half the spacing it
    # needs at most 4 solves and the grid check one more (counted, not timed)
    ip = ev_to_au(15.76)
    guess = fit_softening(Grid(1024, 0.1), soft_core(1.0), ip)
    a_cold, cold = _counted_fit(monkeypatch, Grid(1000, 0.2), soft_core(1.0), ip)
    a_warm, warm = _counted_fit(monkeypatch, Grid(1000, 0.2), soft_core(1.0), ip, guess=guess)
    assert a_warm == pytest.approx(a_cold, abs=1e-12)
    assert warm <= 5
    assert cold <= 14


def test_a_guess_outside_the_reach_falls_back_to_the_bracket():
    ip = ev_to_au(15.76)
    a = fit_softening(Grid(500, 0.2), soft_core(1.0), ip, guess=40.0)
    assert a == pytest.approx(_reference_root(Grid(500, 0.2), ip), abs=1e-12)
    with pytest.raises(SofteningFitError, match="out of reach"):
        fit_softening(Grid(500, 0.2), soft_core(1.0), 0.001, guess=1.0)


def test_odd_state_sign_does_not_flip_with_round_off():
    # the first excited state of a symmetric well is odd: its two largest components
    # are equal up to round-off; a softening moved by 1e-14 must not flip its sign
    from tdse1d.physics.states import bound_states

    grid = Grid(400, 0.2)
    first = bound_states(grid, soft_core(1.0), count=3).wavefunctions
    second = bound_states(grid, soft_core(1.0 + 1e-14), count=3).wavefunctions
    assert np.max(np.abs(first - second)) < 1e-8
    # null case: the opposite sign is far off, so the check sees a flip
    assert np.max(np.abs(first[1] + second[1])) > 0.1
