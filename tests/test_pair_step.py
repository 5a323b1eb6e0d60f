"""The compiled 2-D step (physics/plane_loop.py) against the array loop it replaced
(physics/grid_step.py, ``compiled=False``), on a small grid of the two-electron atom.

Reference: the array loop, which takes the same sub-steps with numpy products and
whose physics is checked elsewhere (tests/test_nd_core.py: the product of two 1-D
propagations on a separable plane; tests/test_pair_run.py: Ehrenfest, stationarity,
gauge invariance). The two loops differ only in the order of floating-point
operations.

Band, argued before looking: each step does about ten complex products per point in
a different association (a few ulp each, 1.1e-16 relative) and the propagation is
unitary up to the absorber, so the states drift apart by at most S x 10 x 1.1e-16 =
1.3e-13 after S = 120 steps; a sum over the N = 2304 points reassociated errs by at
most N x 1.1e-16 = 2.5e-13 of its terms' size. Every recorded series (norm, dipole,
momentum, acceleration, population, region readings, all of order 1 or below) must
agree to 1e-12 of its largest magnitude (and 1e-12 absolute for the region readings,
probabilities summed from the same terms).
"""

import numpy as np
import pytest

from tdse1d.physics import plane_loop
from tdse1d.physics.absorbers import CosineMask
from tdse1d.physics.grid import Grid
from tdse1d.physics.pair_regions import region_probabilities
from tdse1d.physics.pair_system import TwoElectrons
from tdse1d.physics.propagation import Propagator, Strang, Yoshida4
from tdse1d.physics.pulses import AnalyticPulse, Field, Sin2
from tdse1d.physics.two_electron import TwoElectronAtom

pytestmark = pytest.mark.skipif(not plane_loop.AVAILABLE, reason="FFTW cannot be called directly here")

BAND = 1e-12
POINTS, SPACING, STEPS, H = 48, 0.4, 120, 0.05


def _propagator(compiled, gauge="length", every=1, scheme=Strang):
    axis = Grid(POINTS, SPACING)
    atom = TwoElectronAtom(2.0, 1.0, 1.0)
    omega = 1.0  # one photon ionizes the atom: the absorbers take norm within the run
    field = Field([AnalyticPulse(Sin2(4 * 2 * np.pi / omega), omega, 0.3)])
    times = -12 + H * np.arange(STEPS + 1)
    mask = CosineMask().step_factor(Grid.product(axis, axis), 3.0, H)
    x = axis.x
    psi0 = np.exp(-np.abs(x)[:, None] - np.abs(x)[None, :]).astype(complex)
    psi0 /= np.sqrt(np.sum(np.abs(psi0) ** 2) * SPACING**2)
    system = TwoElectrons(axis, atom, absorber_factor=mask, reference=psi0, radii=(8.0, 5.0))
    return Propagator(system, field, times, gauge=gauge, scheme=scheme, fft_effort="FFTW_ESTIMATE", threads=2,
                      compiled=compiled, record_every=every)


def _run(prop):
    prop.start(prop.system.reference)
    while prop.step_index < prop.steps:
        prop.advance(37)  # chunks that do not fall on record steps
    prop.finish()
    return prop


def _deviation(a, b):
    """Largest difference of each recorded series over its largest magnitude."""
    out = {}
    for name in a.observables.names:
        u, v = getattr(a.observables, name), getattr(b.observables, name)
        out[name] = float(np.max(np.abs(u - v)) / max(np.max(np.abs(u)), 1.0 if "ion" in name else 1e-300))
    out["psi"] = float(np.max(np.abs(a.psi - b.psi)) / np.max(np.abs(a.psi)))
    return out


@pytest.mark.parametrize("gauge, every, scheme", [("length", 1, Strang), ("velocity", 1, Strang),
                                                  ("length", 3, Strang), ("velocity", 4, Yoshida4)])
def test_compiled_step_equals_the_array_loop(gauge, every, scheme):
    fast = _run(_propagator(True, gauge, every, scheme))
    slow = _run(_propagator(False, gauge, every, scheme))
    assert fast._stepper.plans is not None and slow._stepper.plans is None
    # the run must test something: the absorbers took norm, double ionization is there
    assert 1 - fast.observables.norm[-1] > 1e-4 and fast.observables.double_ionization[-1] > 1e-6
    dev = _deviation(fast, slow)
    assert max(dev.values()) < BAND, dev


def test_a_wrong_sign_of_the_field_fails():
    # null: the compiled loop with the field term's sign flipped (as a bug in the
    # kick's phase would do) must be told apart from the array loop, by far
    slow = _run(_propagator(False))
    wrong = _propagator(True)
    wrong._e_mid = -wrong._e_mid  # the midpoint fields the kicks use
    dev = _deviation(_run(wrong), slow)
    assert dev["dipole"] > 1e3 * BAND and dev["psi"] > 1e3 * BAND, dev


def test_region_readings_do_not_depend_on_the_recording_stride():
    # the absorbed norm is counted on every step, recorded or not: the readings of a
    # run recording every 3rd step are those of a run recording every step
    every = _run(_propagator(True))
    third = _run(_propagator(True, every=3))
    absorbed = 1 - every.observables.norm[-1]
    assert absorbed > 1e-4
    for name in ("neutral", "single_ionization", "double_ionization", "double_ionization_r5"):
        a, b = getattr(every.observables, name)[::3], getattr(third.observables, name)
        assert np.max(np.abs(a - b)) < BAND, name
    # null: the readings without the absorbed norm (the state's regions alone) miss it
    grid = every.system.axis
    plain = region_probabilities(np.abs(third.psi) ** 2, grid.x, grid.spacing, 8.0)
    final = [getattr(third.observables, n)[-1] for n in ("neutral", "single_ionization", "double_ionization")]
    assert abs(sum(final) - sum(plain) - absorbed) < BAND
    assert np.max(np.abs(np.array(final) - plain)) > 1e3 * BAND
