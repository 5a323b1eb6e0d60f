"""The compiled 1-D time loop takes bitwise the same steps as the Python-driven loop.

:func:`tdse1d.physics.time_loop.run_line` replaces a Python loop over fused kernels by
one compiled function calling FFTW directly. It performs the same floating-point
operations in the same order, with the same FFTW plans, so the check is exact
equality (tolerance 0, not a band): of the wavefunction, of the per-step observables
and of the surface-flux amplitudes, for every registered scheme and both gauges. The
null (a run of the other gauge) differs, so equality is not trivially met.

One exception, argued before looking: the momentum moment sum_k k |psi_k|^2 is a
reduction the kernels may reassociate (fast-math "reassoc", so LLVM vectorises it),
and LLVM may vectorise it differently where the kernel is inlined into the compiled
loop. A reordered sum of N terms moves by at most N eps sum_k |k| |psi_k|^2 / sum_k
|psi_k|^2 <= N eps k_max = 512 * 1.1e-16 * 12.6 = 7e-13 a.u.; the momentum is
compared within 1e-12. The wavefunction never depends on it, so it stays bitwise.
"""

from __future__ import annotations

import numpy as np
import pytest

from tdse1d.errors import NumericalError
from tdse1d.physics import time_loop
from tdse1d.physics.absorbers import CosineMask
from tdse1d.physics.grid import Grid
from tdse1d.physics.potentials import Centre, SoftCore
from tdse1d.physics.propagation import SCHEMES, Propagator
from tdse1d.physics.pulses import AnalyticPulse, Field, Sin2
from tdse1d.spectra.surface_flux import STENCIL_RADIUS, SurfaceFlux, momentum_grid

MOMENTUM_TOL = 1e-12  # argued in the module docstring
pytestmark = pytest.mark.skipif(not time_loop.AVAILABLE, reason="the FFTW library pyfftw uses was not found")

GRID = Grid(512, 0.25)
POTENTIAL = SoftCore((Centre(0.0, 1.0, 1.0),))
OMEGA = 0.3
FIELD = Field([AnalyticPulse(Sin2(2 * 2 * np.pi / OMEGA), OMEGA, 0.08)])
STEPS = 600
TIMES = FIELD.start + 0.07 * np.arange(STEPS + 1)
PSI0 = np.exp(-GRID.x**2).astype(complex)
PSI0 /= np.sqrt(GRID.integrate(abs(PSI0) ** 2))
MASK = CosineMask().step_factor(GRID, 12.0, 0.07)


def run(gauge, scheme, compiled, flux=True, chunks=(250, 350)):
    prop = Propagator(GRID, POTENTIAL, FIELD, TIMES, gauge, SCHEMES[scheme], absorber_factor=MASK,
                      reference=PSI0, fft_effort="FFTW_ESTIMATE", compiled=compiled)
    acc = None
    if flux:
        inside = np.flatnonzero(MASK >= 1.0)
        momenta, block, _ = momentum_grid(2.0, OMEGA, max_momentum=GRID.max_momentum)
        assert inside[0] >= STENCIL_RADIUS
        acc = SurfaceFlux(GRID.x, int(inside[-1]), int(inside[0]), momenta, block, 0.07,
                          prop.vector_potential_steps(), float(prop.observables.vector_potential[-1]), gauge)
        prop.surface_flux = acc
    prop.start(PSI0)
    for c in chunks:
        prop.advance(c)
    prop.finish()
    return prop, acc


@pytest.mark.parametrize("scheme", sorted(SCHEMES))
@pytest.mark.parametrize("gauge", ["length", "velocity"])
def test_compiled_loop_is_bitwise_the_python_loop(gauge, scheme):
    fast, flux_fast = run(gauge, scheme, True)
    slow, flux_slow = run(gauge, scheme, False, chunks=(1, 599))
    assert fast._stepper.plans is not None and slow._stepper.plans is None
    assert np.array_equal(fast.psi, slow.psi)
    for name in slow.observables.names:
        if name == "momentum":
            assert np.allclose(fast.observables.momentum, slow.observables.momentum, rtol=0, atol=MOMENTUM_TOL)
        else:
            assert np.array_equal(getattr(fast.observables, name), getattr(slow.observables, name)), name
    for name in ("amp_right", "amp_left", "volkov"):
        assert np.array_equal(getattr(flux_fast, name), getattr(flux_slow, name)), name
    assert flux_fast.step == flux_slow.step == STEPS and fast.step_index == STEPS
    other, _ = run("velocity" if gauge == "length" else "length", scheme, True, flux=False)
    assert not np.array_equal(other.observables.dipole, fast.observables.dipole)


def test_compiled_loop_reports_a_growing_norm_at_its_step():
    """A factor above 1 (a wrong absorber) makes the norm grow: both loops stop at the same step."""
    steps = []
    for compiled in (True, False):
        prop = Propagator(GRID, POTENTIAL, FIELD, TIMES, "length", fft_effort="FFTW_ESTIMATE", compiled=compiled)
        prop._stepper._mask[:] = 1.01  # past the constructor's check, as a bug would be
        prop.start(PSI0)
        with pytest.raises(NumericalError, match="norm grew"):
            prop.advance(50)
        steps.append(prop.step_index)
    assert steps == [1, 1]
