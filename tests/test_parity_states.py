"""All bound states of a mirror-symmetric potential from the even and odd blocks of H
(physics/parity.py, used by physics/states.py) against an independent dense solve of the whole grid.

The independent side is the closed-form Fourier-grid kinetic matrix of tests/test_states.py
plus V, diagonalised whole by scipy (no parity used). Bands, set before the comparison:
energies to 1e-10 Hartree (LAPACK's backward error, about n eps ||H|| = 600 x 1.1e-16 x
40 Hartree = 3e-12, with a margin); eigenvectors to 1e-8 in overlap (a vector's
round-off error is about eps ||H|| / gap, 1e-14 / 1e-3 at the closest levels here).
"""

import numpy as np
import pytest
import scipy.linalg
from test_states import fourier_kinetic

from tdse1d.physics.grid import Grid
from tdse1d.physics.potentials import Centre, SoftCore
from tdse1d.physics import states as S
from tdse1d.physics.parity import is_mirror_symmetric, parity_blocks, parity_vectors


def _independent(grid, potential):
    x = (np.arange(grid.points) - grid.points // 2) * grid.spacing
    h = fourier_kinetic(grid.points, grid.spacing) + np.diag(potential.value(x))
    energies, vectors = scipy.linalg.eigh(h)
    keep = energies < 0
    return energies[keep], vectors[:, keep]


@pytest.mark.parametrize("potential", [
    SoftCore((Centre(0.0, 1.0, 1.0),)),  # an atom
    SoftCore((Centre(-1.2, 1.0, 1.0), Centre(1.2, 1.0, 1.0))),  # a symmetric molecular ion
])
def test_parity_blocks_give_the_whole_grid_states(potential):
    grid = Grid(600, 0.25)
    assert is_mirror_symmetric(grid, potential.value(grid.x))
    states = S.bound_states(grid, potential)
    energies, vectors = _independent(grid, potential)
    assert len(states) == energies.size
    assert np.allclose(states.energies, energies, rtol=0, atol=1e-10)
    overlaps = np.abs(states.wavefunctions @ vectors) * np.sqrt(grid.spacing)
    assert np.allclose(np.diag(overlaps), 1.0, rtol=0, atol=1e-8)
    # each state has a parity: psi(-x) = +-psi(x) on the mirrored points
    n = grid.points
    mirrored = states.wavefunctions[:, (n - np.arange(n)) % n]
    parity = np.sign(np.sum(mirrored * states.wavefunctions, axis=1))
    assert np.allclose(mirrored, parity[:, None] * states.wavefunctions, rtol=0, atol=1e-12)
    # parities alternate from an even ground state (oscillation theorem) for the states
    # well inside the box: turning radius 1/|E| of the Coulomb tail below a third of the
    # half-box (75 bohr); near E = 0 the periodic box's own states need not alternate
    inside = states.energies < -1.0 / 25.0
    assert inside.sum() >= 4
    assert np.array_equal(parity[inside], (-1.0) ** np.arange(inside.sum()))


def test_an_asymmetric_potential_is_solved_whole():
    grid = Grid(600, 0.25)
    potential = SoftCore((Centre(-1.5, 1.0, 0.8), Centre(2.0, 0.5, 1.3)))
    assert not is_mirror_symmetric(grid, potential.value(grid.x))
    states = S.bound_states(grid, potential)
    energies, _ = _independent(grid, potential)
    assert np.allclose(states.energies, energies, rtol=0, atol=1e-10)


def test_null_a_wrong_odd_mapping_is_caught():
    """The null: odd vectors spread with the even sign are not eigenvectors of H, and the
    blocks of an asymmetric potential do not give its spectrum."""
    grid = Grid(200, 0.3)
    potential = SoftCore((Centre(0.0, 1.0, 1.0),))
    h = S.hamiltonian_matrix(grid, potential)
    even, odd, pairs = parity_blocks(h)
    e, v = scipy.linalg.eigh(odd, subset_by_index=(0, 0))
    wrong = np.zeros((grid.points, 1))
    wrong[pairs] = wrong[grid.points - pairs] = v / np.sqrt(2.0)  # the odd core spread with the even sign
    assert np.allclose(np.linalg.norm(wrong), 1.0)
    right = parity_vectors(v, pairs, grid.points, even=False)
    assert np.linalg.norm(h @ right[:, 0] - e[0] * right[:, 0]) < 1e-10
    residual = np.linalg.norm(h @ wrong[:, 0] - e[0] * wrong[:, 0])
    assert residual > 1e-2
    shifted = SoftCore((Centre(0.3, 1.0, 1.0),))
    hs = S.hamiltonian_matrix(grid, shifted)
    blocks = parity_blocks(hs)
    wrong_energy = scipy.linalg.eigvalsh(blocks[0])[0]
    assert abs(wrong_energy - scipy.linalg.eigvalsh(hs)[0]) > 1e-4


@pytest.mark.parametrize("points", [16, 200, 1024])
def test_blocks_from_the_kinetic_column_are_those_of_the_matrix_to_the_last_bit(points):
    """The blocks formed from the kinetic column and V alone (no n x n matrix) are the
    blocks of the dense H, bit for bit: the same sums in the same order, so the bound
    states (and the regression reference) cannot move."""
    from tdse1d.physics.parity import circulant_parity_blocks

    grid = Grid(points, 0.37)
    potential = SoftCore((Centre(-0.74, 1.3, 1.0), Centre(0.74, 1.3, 1.0)))
    values = potential.value(grid.x)
    assert is_mirror_symmetric(grid, values)
    column = S.kinetic_column(grid.points, grid.spacing)
    want = parity_blocks(S.hamiltonian_matrix(grid, potential))
    got = circulant_parity_blocks(column, values)
    for a, b in zip(want, got):
        assert a.shape == b.shape and np.array_equal(a, b)
    # the null: one diagonal entry of V changed by 1 Hartree shows in the even block
    lopsided = values.copy()
    lopsided[1] += 1.0
    assert not np.array_equal(circulant_parity_blocks(column, lopsided)[0], want[0])
