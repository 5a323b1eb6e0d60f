"""Regions of the (x1, x2) plane: neutral, singly and doubly ionized probabilities, the
norm absorbers take attributed to its region, and the correlated momentum map.

The states are built here from pieces of known weight far apart (exact answers up to
the overlap of their tails, below 1e-8), so the readings have an exact reference; the
null cases put the radius where the pieces overlap it.
"""

import numpy as np
import pytest

from tdse1d.physics.grid import Grid
from tdse1d.physics.pair_regions import RADII, RegionRecorder, double_ionization_momenta, region_probabilities
from tdse1d.physics.states_2d import pair_states
from tdse1d.physics.two_electron import TwoElectronAtom

GRID = Grid(256, 0.5)  # +-64 bohr
X = GRID.x
WEIGHTS = (0.7, 0.25, 0.05)


def _packet(centre, momentum=0.0, width=3.0):
    g = np.exp(-((X - centre) ** 2) / (2 * width**2) + 1j * momentum * X)
    return g / np.sqrt(np.sum(np.abs(g) ** 2) * GRID.spacing)


def _symmetric(a, b):
    s = np.outer(a, b) + np.outer(b, a)
    return s / np.sqrt(np.sum(np.abs(s) ** 2) * GRID.spacing**2)


@pytest.fixture(scope="module")
def pieces():
    atom = TwoElectronAtom(2.0, 1.0, 1.0)
    neutral = pair_states(GRID, atom, count=1).wavefunctions[0]
    ion = np.exp(-np.sqrt(2 * 1.48) * np.sqrt(X**2 + 1))  # a bound ion's electron near the nucleus
    ion /= np.sqrt(np.sum(ion**2) * GRID.spacing)
    single = _symmetric(_packet(40.0), ion)
    double = _symmetric(_packet(40.0, 1.5), _packet(-40.0, -1.0))
    psi = sum(np.sqrt(w) * p for w, p in zip(WEIGHTS, (neutral, single, double)))
    return psi


@pytest.mark.parametrize("radius", [8.0, 10.0, 15.0, 25.0])
def test_regions_read_the_known_weights_for_any_radius_in_range(pieces, radius):
    # the bound parts reach 8 bohr at 1e-9 of their density; the packets (width 3 bohr
    # at 40 bohr) reach 25 bohr at exp(-12.5) = 4e-6 of theirs: a band of 1e-5
    got = region_probabilities(np.abs(pieces) ** 2, X, GRID.spacing, radius)
    assert np.allclose(got, WEIGHTS, atol=1e-5), got


@pytest.mark.parametrize("radius", [1.0, 45.0])
def test_radius_outside_the_range_fails(pieces, radius):
    # null: R inside the bound state or beyond the packets misreads the weights
    got = region_probabilities(np.abs(pieces) ** 2, X, GRID.spacing, radius)
    assert not np.allclose(got, WEIGHTS, atol=1e-2), got


@pytest.mark.parametrize("separable", [True, False])
def test_recorder_attributes_the_absorbed_norm_to_its_region(pieces, separable):
    # an absorber that takes half of the density beyond |x| = 30 on either axis (a
    # product of one layer per axis, the recorder's fast path), or half of it beyond
    # 30 bohr on any axis taken once (not a product: the general path)
    keep = np.where(np.abs(X) > 30, np.sqrt(0.5), 1.0)
    m = keep[:, None] * keep[None, :] if separable else np.minimum(keep[:, None], keep[None, :])
    recorder = RegionRecorder(X, GRID.spacing, m, radii=RADII)
    before = recorder.record(pieces, after_step=False)  # the initial state
    after = recorder.record(pieces * m)
    # the norm taken from each region stays counted in it: the readings do not move
    assert np.allclose(after, before, atol=1e-12)
    # null: counting the absorber on a state it has not acted on adds norm
    assert np.sum(RegionRecorder(X, GRID.spacing, m).record(pieces)[0]) > 1.1
    assert np.allclose(after, np.tile(WEIGHTS, (len(RADII), 1)), atol=1e-5)
    # null: without the attribution the absorbed norm is simply lost
    plain = region_probabilities(np.abs(pieces * m) ** 2, X, GRID.spacing)
    assert abs(sum(plain) - 1) > 0.1


def test_momentum_map_of_the_double_part(pieces):
    k, dist = double_ionization_momenta(pieces, X, GRID.spacing)
    dk = k[1] - k[0]
    # Parseval: the map holds the double part's weight (its packets are far beyond the
    # mask's edge), and it peaks at the packets' momenta (1.5, -1.0) and their exchange
    assert np.sum(dist) * dk**2 == pytest.approx(WEIGHTS[2], abs=1e-5)
    i, j = np.unravel_index(np.argmax(dist), dist.shape)
    assert {(round(k[i], 1), round(k[j], 1))} <= {(1.5, -1.0), (-1.0, 1.5)}
    # the map is symmetric under p1 <-> p2 (a singlet)
    assert np.allclose(dist, dist.T, atol=1e-10 * dist.max())
    # null: a state without a double part gives an empty map
    k, none = double_ionization_momenta(pieces * (np.abs(X)[:, None] < 20), X, GRID.spacing)
    assert np.sum(none) * dk**2 < 1e-8
