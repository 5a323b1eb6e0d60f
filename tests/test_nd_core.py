"""Tests of the core on grids of several axes: grid, FFT, absorber, system contract, propagator.

The strongest check is an exact identity. For a separable Hamiltonian on a 2-D grid,
H = h(x1) + h(x2) with h = p^2/2 + V(x) + x E(t) (length gauge) or (p + A)^2/2 + V(x)
(velocity gauge), every factor of the split-operator step is the product of the two
1-D factors (exp of a sum of commuting one-axis operators), the 2-D FFT is the product
of 1-D FFTs, and a product absorber M(x1) M(x2) is applied after the step. So, in exact
arithmetic, the 2-D step maps psi_a(x1) psi_b(x2) to (U_a psi_a)(x1) (U_b psi_b)(x2)
exactly, for every splitting scheme and either gauge (exact; no source needed).

Tolerance for the identity, argued before running: both sides are computed in double
precision by different code (fused 1-D kernels against whole-array numpy products and
a 2-D FFTW transform); each step adds round-off of a few ulp (~1e-16) times the
O(log N) depth of the FFT, so after S = 400 steps the difference is at most of order
S * 64 * 1e-16 ~ 3e-12 in the wavefunction (amplitudes <= 1 bohr^-1/2). 1e-10 keeps a
margin of 30 above that, while a wrong coupling (field on x1 only) or a transposed
product differs by O(0.1) (the field displaces the packet by E0/omega^2 = 0.2 bohr and
the two initial packets differ): the nulls are checked to fail by a factor 1e6.
"""

from __future__ import annotations

import numpy as np
import pytest

from tdse1d.physics.absorbers import ABSORBERS
from tdse1d.physics.fft import InPlaceFFT
from tdse1d.physics.grid import Grid
from tdse1d.physics.observables import PerStepObservable
from tdse1d.physics.potentials import Centre, SoftCore
from tdse1d.physics.propagation import SCHEMES, Propagator
from tdse1d.physics.pulses import AnalyticPulse, Field, Sin2
from tdse1d.physics.systems import SYSTEMS, OneElectron, System, register_system

IDENTITY_TOL = 1e-10  # argued in the module docstring
LINE = Grid(64, 0.4)
PLANE = Grid.product(LINE, LINE)
POTENTIAL = SoftCore((Centre(0.0, 1.0, 1.0),))
OMEGA = 0.5
FIELD = Field([AnalyticPulse(Sin2(2 * 2 * np.pi / OMEGA), OMEGA, 0.05)])
STEPS = 400
TIMES = FIELD.start + 0.05 * np.arange(STEPS + 1)
MASK_WIDTH = 4.0


def packet(x, centre, width, momentum=0.0):
    """A normalised Gaussian packet on a 1-D grid."""
    psi = np.exp(-((x - centre) ** 2) / (2 * width**2) + 1j * momentum * x)
    return psi / np.sqrt(np.sum(abs(psi) ** 2) * LINE.spacing)


PSI_A = packet(LINE.x, 0.0, 1.0)
PSI_B = packet(LINE.x, 0.7, 1.4, momentum=0.3)  # a different packet, so a transposed product shows


def separable_system(weights=(1.0, 1.0), absorber=None):
    """V(x1) + V(x2) on the 2-D grid, field on the axes with weight 1."""
    x1, x2 = PLANE.positions(0), PLANE.positions(1)
    v = POTENTIAL.value(x1) + POTENTIAL.value(x2)
    force = weights[0] * POTENTIAL.gradient(x1) + weights[1] * POTENTIAL.gradient(x2)
    factor = None if absorber is None else absorber.step_factor(PLANE, MASK_WIDTH, 0.05)
    return System(PLANE, v, force, weights, factor, reference=np.outer(PSI_A, PSI_B))


def propagate(system, psi0, gauge, scheme):
    prop = Propagator(system, FIELD, TIMES, gauge, scheme, fft_effort="FFTW_ESTIMATE")
    prop.start(psi0)
    prop.advance(STEPS)
    prop.finish()
    return prop


def line_run(psi0, gauge, scheme, absorber):
    factor = None if absorber is None else absorber.step_factor(LINE, MASK_WIDTH, 0.05)
    return propagate(OneElectron(LINE, POTENTIAL, factor, reference=psi0), psi0, gauge, scheme)


@pytest.mark.parametrize("scheme", sorted(SCHEMES))
@pytest.mark.parametrize("gauge", ["length", "velocity"])
def test_separable_plane_is_the_product_of_two_lines(gauge, scheme):
    absorber = ABSORBERS["mask"]()
    a = line_run(PSI_A, gauge, SCHEMES[scheme], absorber)
    b = line_run(PSI_B, gauge, SCHEMES[scheme], absorber)
    plane = propagate(separable_system(absorber=absorber), np.outer(PSI_A, PSI_B), gauge, SCHEMES[scheme])
    assert abs(plane.psi - np.outer(a.psi, b.psi)).max() < IDENTITY_TOL
    # the observables obey the same product rules: N = Na Nb, <X> = <x>a Nb + <x>b Na, ...
    oa, ob, op = a.observables, b.observables, plane.observables
    assert np.allclose(op.norm, oa.norm * ob.norm, rtol=0, atol=IDENTITY_TOL)
    for name in ("dipole", "momentum", "acceleration"):
        want = getattr(oa, name) * ob.norm + getattr(ob, name) * oa.norm
        assert np.allclose(getattr(op, name), want, rtol=0, atol=IDENTITY_TOL), name
    assert np.allclose(op.initial_population, oa.initial_population * ob.initial_population, rtol=0, atol=IDENTITY_TOL)
    # the absorber did bite (otherwise the mask part of the identity would be empty)
    assert op.norm[-1] < 1 - 1e-6


@pytest.mark.parametrize("gauge", ["length", "velocity"])
def test_identity_nulls_fail(gauge):
    """Field on x1 only, and the transposed product, must miss the identity by far."""
    a = line_run(PSI_A, gauge, SCHEMES["strang"], None)
    b = line_run(PSI_B, gauge, SCHEMES["strang"], None)
    right = np.outer(a.psi, b.psi)
    one_axis = propagate(separable_system(weights=(1.0, 0.0)), np.outer(PSI_A, PSI_B), gauge, SCHEMES["strang"])
    assert abs(one_axis.psi - right).max() > 1e6 * IDENTITY_TOL
    assert abs(np.outer(b.psi, a.psi) - right).max() > 1e6 * IDENTITY_TOL


def test_generic_loop_equals_the_fused_line_kernels():
    """One electron on a line through the array loop (as if it were any system) and
    through the fused kernels: the same steps, so equal to round-off (bound as above)."""

    class LineAsGrid(System):
        is_line = False

    for gauge in ("length", "velocity"):
        fused = line_run(PSI_B, gauge, SCHEMES["yoshida4"], None)
        system = LineAsGrid(LINE, POTENTIAL.value(LINE.x), POTENTIAL.gradient(LINE.x), (1.0,), reference=PSI_B)
        generic = propagate(system, PSI_B, gauge, SCHEMES["yoshida4"])
        assert abs(generic.psi - fused.psi).max() < IDENTITY_TOL
        for name in fused.observables.names:
            assert np.allclose(getattr(generic.observables, name), getattr(fused.observables, name),
                               rtol=0, atol=IDENTITY_TOL), name


def two_electron_like():
    """A non-separable 2-D system: V(x1) + V(x2) + 1/sqrt((x1-x2)^2 + 1), field on both."""
    x1, x2 = PLANE.positions(0), PLANE.positions(1)
    r = x1 - x2
    v = POTENTIAL.value(x1) + POTENTIAL.value(x2) + 1 / np.sqrt(r**2 + 1)
    force = POTENTIAL.gradient(x1) + POTENTIAL.gradient(x2)  # the repulsion's derivatives cancel in the sum
    return v, force


def test_norm_is_conserved_without_absorber_and_falls_with_it():
    """A unitary step keeps the norm to round-off (S steps x 1e-16 ~ 1e-13; bound 1e-12);
    the same run with the mask loses norm (the null: a norm that is not computed would pass the first)."""
    v, force = two_electron_like()
    psi0 = np.outer(PSI_A, PSI_B)
    free = propagate(System(PLANE, v, force, (1.0, 1.0)), psi0, "length", SCHEMES["strang"])
    assert abs(free.observables.norm - 1).max() < 1e-12
    strong = Field([AnalyticPulse(Sin2(2 * 2 * np.pi / OMEGA), OMEGA, 0.5)])
    factor = ABSORBERS["mask"]().step_factor(PLANE, MASK_WIDTH, 0.05)
    prop = Propagator(System(PLANE, v, force, (1.0, 1.0), factor), strong, TIMES, "length")
    prop.start(psi0)
    prop.advance(STEPS)
    assert prop.observables.norm[-1] < 0.999


@pytest.mark.parametrize("name", sorted(ABSORBERS))
def test_absorber_factor_covers_all_four_edges(name):
    absorber = ABSORBERS[name]()
    m = absorber.step_factor(PLANE, MASK_WIDTH, 0.05)
    line = absorber.step_factor(LINE, MASK_WIDTH, 0.05)
    assert m.shape == PLANE.shape
    c = LINE.points // 2
    # along each axis through the centre the factor is the 1-D factor; corners are products
    assert np.array_equal(m[:, c], line) and np.array_equal(m[c, :], line)
    assert m[0, 0] == pytest.approx(line[0] ** 2, rel=1e-15)
    assert m[c, c] == 1.0
    if name != "none":
        # every edge absorbs: the mask reaches ~0 there, the complex potential exp(-W0 dt) = 0.95
        for edge in (m[0, c], m[-1, c], m[c, 0], m[c, -1]):
            assert edge < 1 - 1e-3
        assert np.all(m[np.abs(PLANE.positions(0)[:, 0]) < PLANE.half_widths[0] - MASK_WIDTH][:, c] == 1.0)


def test_fft_over_every_axis_and_threads():
    rng = np.random.default_rng(1)
    a = rng.standard_normal((12, 10)) + 1j * rng.standard_normal((12, 10))
    for threads in (1, 2):
        fft = InPlaceFFT((12, 10), "FFTW_ESTIMATE", threads=threads)
        fft.data[:] = a
        fft.forward()
        assert np.allclose(fft.data, np.fft.fft2(a), rtol=0, atol=1e-12)
        fft.backward()
        assert np.allclose(fft.data / a.size, a, rtol=0, atol=1e-13)
    with pytest.raises(ValueError, match="threads"):
        InPlaceFFT(8, threads=0)


def test_grid_axes():
    assert PLANE.shape == (64, 64) and PLANE.ndim == 2 and PLANE.volume_element == pytest.approx(0.16)
    assert Grid((8,), (0.5,)) == Grid(8, 0.5)  # one axis is the 1-D grid
    assert LINE.shape == (64,) and LINE.volume_element == LINE.spacing
    g = Grid((8, 6), (0.5, 0.25))
    assert g.positions(1).shape == (1, 6) and np.array_equal(g.positions(1).ravel(), Grid(6, 0.25).x)
    assert np.array_equal(g.kinetic_energy(), 0.5 * g.momenta(0) ** 2 + 0.5 * g.momenta(1) ** 2)
    with pytest.raises(AttributeError, match="positions"):
        g.x
    with pytest.raises(ValueError, match="axes"):
        Grid((8, 6), (0.5, 0.25, 0.1))


def test_system_contract_checks_and_extra_observables():
    v, force = two_electron_like()
    with pytest.raises(ValueError, match="shape"):
        System(PLANE, v[:, :3], force, (1.0, 1.0))
    with pytest.raises(ValueError, match="one finite weight per axis"):
        System(PLANE, v, force, (1.0,))
    with pytest.raises(ValueError, match="on a line only"):
        Propagator(System(PLANE, v, force, (1.0, 1.0)), FIELD, TIMES, surface_flux=object())

    @register_system("test-pair")
    class Pair(System):
        """Two electrons on a line (test recipe): V, force, weights (1, 1), one extra observable."""

        def __init__(self):
            super().__init__(PLANE, v, force, (1.0, 1.0))

        def per_step_observables(self):
            near = (np.abs(PLANE.positions(0)) < 5) & (np.abs(PLANE.positions(1)) < 5)
            return (PerStepObservable("both_near", "1", "probability both within 5 bohr",
                                      lambda prop: float(np.sum(abs(prop.psi[near]) ** 2) * PLANE.volume_element)),)

    try:
        prop = Propagator(SYSTEMS["test-pair"](), FIELD, TIMES[:11], "length", fft_effort="FFTW_ESTIMATE")
        prop.start(np.outer(PSI_A, PSI_B))
        prop.advance(10)
        near = prop.observables.both_near
        assert "both_near" in prop.observables.names and np.all(np.isfinite(near))
        assert 0.5 < near[-1] <= prop.observables.norm[-1]
    finally:
        del SYSTEMS["test-pair"]
