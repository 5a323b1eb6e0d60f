"""The semiclassical side of double ionization: the sequential rate equations, the
recollision threshold, and the sequential estimate for a pulse.

References: the solution of the chain N0 -> N1 -> N2 with constant rates (Bateman,
Proc. Cambridge Phil. Soc. 15, 423 (1910), from memory); the largest return energy
3.17 Up (Corkum, Phys. Rev. Lett. 71, 1994 (1993)); laws (linearity in each rate at
small yields, conservation, monotony) where the physics has no sharp number.
"""

import math

import numpy as np
import pytest

from tdse1d import units
from tdse1d.physics.states import ground_state_energy
from tdse1d.physics.grid import Grid
from tdse1d.semiclassical.double_ionization import (knee_estimate, knockout_threshold_field, maximum_return_energy,
                                                     outer_electron_potential, sequential_chain,
                                                     sequential_double_ionization)
from tdse1d.semiclassical.tunnelling import tunnelling_yield


def bateman(t, g1, g2):
    """Exact populations of the chain with constant rates g1 != g2."""
    n0 = np.exp(-g1 * t)
    n1 = g1 / (g2 - g1) * (np.exp(-g1 * t) - np.exp(-g2 * t))
    return n0, n1, 1 - n0 - n1


def test_constant_rates_against_bateman():
    g1, g2, h = 0.3, 0.05, 0.01
    t = np.arange(0, 40 + h / 2, h)
    y = sequential_chain(t, np.full_like(t, g1), np.full_like(t, g2))
    n0, n1, n2 = bateman(t, g1, g2)
    # N0 and N1 come from the exact step (round-off only: 4000 steps of 1e-16)
    assert np.max(np.abs(y.neutral - n0)) < 1e-12 and np.max(np.abs(y.single - n1)) < 1e-12
    # N2 is a trapezoid integral of g2 N1: error below T h^2 / 12 max|(g2 N1)''| with
    # |N1''| <= (g1 + g2)^2 (each term of N1 decays no faster than the larger rate)
    bound = t[-1] * h**2 / 12 * g2 * (g1 + g2) ** 2
    assert np.max(np.abs(y.double - n2)) < bound
    # null: independent yields multiplied, (1 - e^-g1 t)(1 - e^-g2 t), ignore the order
    # of the steps; they must miss the chain by far more than the bound
    independent = (1 - np.exp(-g1 * t)) * (1 - np.exp(-g2 * t))
    assert np.max(np.abs(independent - n2)) > 1e3 * bound


def test_equal_rates_limit():
    # g1 = g2 = g: N1 = g t e^{-g t} (the degenerate Bateman solution)
    g, h = 0.2, 0.01
    t = np.arange(0, 20 + h / 2, h)
    y = sequential_chain(t, np.full_like(t, g), np.full_like(t, g))
    assert np.max(np.abs(y.single - g * t * np.exp(-g * t))) < 1e-12


def test_small_yield_is_linear_in_each_rate_and_conserves():
    t = np.linspace(0, 100, 5001)
    pulse = np.sin(np.pi * t / 100) ** 8
    base = sequential_chain(t, 1e-4 * pulse, 1e-5 * pulse).final[2]
    assert base > 0
    # law: at small yields N2 = int G2 int G1 is bilinear; the relative deviation is of
    # the order of the depletion, int (G1 + G2) dt ~ 1e-2 here, so 2 percent bands
    assert sequential_chain(t, 3e-4 * pulse, 1e-5 * pulse).final[2] / base == pytest.approx(3, rel=0.02)
    assert sequential_chain(t, 1e-4 * pulse, 3e-5 * pulse).final[2] / base == pytest.approx(3, rel=0.02)
    # null: without the second step there are no doubly charged ions at all
    assert sequential_chain(t, 1e-4 * pulse, 0 * pulse).final[2] == 0.0
    big = sequential_chain(t, 0.2 * pulse, 0.1 * pulse)
    total = big.neutral + big.single + big.double
    assert np.max(np.abs(total - 1)) < 1e-5  # O(h^2) of the trapezoid, h = 0.02


def test_chain_refuses_bad_histories():
    t = np.linspace(0, 1, 5)
    with pytest.raises(ValueError, match=">= 0"):
        sequential_chain(t, -np.ones(5), np.ones(5))
    with pytest.raises(ValueError, match="increasing"):
        sequential_chain(t[::-1], np.ones(5), np.ones(5))
    with pytest.raises(ValueError, match="length"):
        sequential_chain(t, np.ones(4), np.ones(5))


def test_return_energy_and_knockout_threshold():
    assert maximum_return_energy(2.0) == pytest.approx(6.34)
    omega, ip2 = units.nm_to_omega(780.0), 1.4834
    e0 = knockout_threshold_field(omega, ip2)
    # at the threshold 3.17 Up = Ip2 (the definition, checked through Up = E0^2/(4 w^2))
    assert maximum_return_energy(e0**2 / (4 * omega**2)) == pytest.approx(ip2, rel=1e-12)
    # laws: E0 grows as w and as sqrt(Ip2)
    assert knockout_threshold_field(2 * omega, ip2) == pytest.approx(2 * e0)
    assert knockout_threshold_field(omega, 4 * ip2) == pytest.approx(2 * e0)
    below, above = knee_estimate(omega, 0.9 * e0, 0.755, ip2), knee_estimate(omega, 1.1 * e0, 0.755, ip2)
    assert not below.direct_knockout and above.direct_knockout
    # 780 nm, Ip2 = 1.4834 Hartree (the standard 1-D helium ion): 2.24e14 W/cm^2 by
    # hand, E0 = 2 x 0.05842 x sqrt(1.4834 / 3.17) = 0.0799 a.u.
    assert units.field_to_intensity(e0) == pytest.approx(2.24e14, rel=0.01)


def test_outer_electron_holds_the_atoms_ip():
    pot = outer_electron_potential(2.0, 0.7548)
    assert pot.centres[0].charge == 1.0
    assert ground_state_energy(Grid(1024, 0.1), pot) == pytest.approx(-0.7548, abs=1e-8)
    with pytest.raises(ValueError, match="charge above 1"):
        outer_electron_potential(1.0, 0.5)


def _pulse(intensity, cycles=3, nm=780.0, samples=6000):
    omega = units.nm_to_omega(nm)
    span = cycles * 2 * math.pi / omega
    t = np.linspace(0, span, samples)
    return t, units.intensity_to_field(intensity) * np.sin(np.pi * t / span) ** 2 * np.cos(omega * (t - span / 2))


@pytest.fixture(scope="module")
def intensity_scan():
    out = {}
    for intensity in (2e14, 5e14, 1e15):
        t, e = _pulse(intensity)
        out[intensity] = (t, e, sequential_double_ionization(t, e, 2.0, 1.0, 0.7548, 1.4834))
    return out


def test_first_step_is_the_one_electron_tunnelling_yield(intensity_scan):
    # the neutral atom is depleted exactly as the one-electron estimate of the outer
    # electron says (same rates, same trapezoid integral)
    t, e, y = intensity_scan[5e14]
    single_active = tunnelling_yield(t, e, outer_electron_potential(2.0, 0.7548), -0.7548)
    assert 1 - y.final[0] == pytest.approx(single_active[-1], rel=1e-9)


def test_sequential_ratio_rises_with_intensity(intensity_scan):
    ratios = [intensity_scan[i][2].ratio for i in sorted(intensity_scan)]
    assert all(b > 10 * a for a, b in zip(ratios, ratios[1:])), ratios
    # below saturation the second step needs the much higher Ip2: double << single
    n0, n1, n2 = intensity_scan[2e14][2].final
    assert n2 < 1e-6 * n1
    # null: with the ion as easy to ionize as the atom the ratio is no longer small
    t, e, _ = intensity_scan[2e14]
    easy = sequential_double_ionization(t, e, 2.0, 1.0, 0.7548, 0.7548 + 1e-9)
    assert easy.ratio > 1e3 * intensity_scan[2e14][2].ratio
