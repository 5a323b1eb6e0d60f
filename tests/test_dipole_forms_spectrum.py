"""The harmonic spectrum in its three dipole forms (tdse1d.spectra.dipole_forms_spectrum).

For a signal and its exact derivatives the three forms are one spectrum (Ehrenfest
theorem; Burnett, Reed, Cooper and Knight, Phys. Rev. A 45, 3347 (1992), from memory):
the spreads must vanish to round-off. A velocity that is not the derivative of the dipole
(scaled by 1.5, the null) must show log10(1.5^2) = 0.35 decade.
"""

import math

import numpy as np
import pytest

from tdse1d.spectra.derived import DERIVED_SPECTRA

OMEGA0 = 0.057


def _signals(scale_velocity=1.0):
    """d(t) = g(t) S(t), a comb of odd harmonics S under a Gaussian g, with its exact
    first and second derivatives (product rule, written out)."""
    t = np.linspace(-600.0, 600.0, 24001)
    tau = 150.0
    g = np.exp(-(t / tau) ** 2)
    g1 = -2 * t / tau**2 * g
    g2 = (4 * t**2 / tau**4 - 2 / tau**2) * g
    ks = np.arange(1, 40, 2)[:, None]
    phase = ks * OMEGA0 * t
    s0 = np.sum(np.sin(phase) / ks**2, axis=0)
    s1 = np.sum(ks * OMEGA0 * np.cos(phase) / ks**2, axis=0)
    s2 = np.sum(-((ks * OMEGA0) ** 2) * np.sin(phase) / ks**2, axis=0)
    d, v, a = g * s0, g1 * s0 + g * s1, g2 * s0 + 2 * g1 * s1 + g * s2
    zero = np.zeros_like(t)
    return {"time": t, "dipole": d, "momentum": scale_velocity * v, "acceleration": a, "norm": zero + 1,
            "electric": zero, "vector_potential": zero}


def test_exact_derivatives_give_forms_that_agree():
    out = DERIVED_SPECTRA["harmonic_forms"]().compute(_signals(), OMEGA0, "none")
    # exact derivatives: the forms differ only by the signals' values at the ends of the
    # record (g = exp(-16) = 1e-7 there), which the window and the factors w^2, w^4
    # turn into relative changes of order 1e-7 per order; 1e-4 decade leaves a wide margin
    assert out["velocity_spread"] < 1e-4 and out["dipole_spread"] < 1e-4
    assert out["plateau_top"] > 30 * OMEGA0  # the comb's plateau was found


def test_a_window_leaves_a_small_floor_of_its_own():
    """A window W multiplies the signal before the factor i w: F[(W v)'] = F[W a] + F[W' v],
    so windowed forms differ by W' v / (W a) ~ (pi / T) / (k w0) in amplitude even for
    exact signals (record T = 1200 a.u., orders k >= 3: at most 1.5 % in amplitude, 0.013
    decade in power, at the lowest order). The floor must stay below 0.02 decade: the
    spreads of a run are read against it (docs/output.md)."""
    out = DERIVED_SPECTRA["harmonic_forms"]().compute(_signals(), OMEGA0, "hann")
    assert out["velocity_spread"] < 0.02 and out["dipole_spread"] < 0.02


def test_null_a_velocity_that_is_not_the_derivative_is_seen():
    out = DERIVED_SPECTRA["harmonic_forms"]().compute(_signals(scale_velocity=1.5), OMEGA0, "none")
    assert out["velocity_spread"] == pytest.approx(2 * math.log10(1.5), rel=0.01)
    assert out["dipole_spread"] < 1e-4
