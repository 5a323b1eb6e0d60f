"""All bound states of a mirror-symmetric Hamiltonian from its even and odd blocks.

On the periodic Fourier grid (x_i = (i - n/2) dx, n even) the point i mirrors onto
(n - i) mod n, points 0 and n/2 onto themselves. When V(x) = V(-x) on those points (an
atom, a symmetric molecular ion) the dense H commutes with the mirror and splits, in the
basis e_0, e_{n/2}, (e_i +- e_{n-i}) / sqrt 2 (0 < i < n/2), into an even block of
n/2 + 1 rows and an odd one of n/2 - 1: two dense problems of half the size, a quarter
of the O(n^3) work of the whole grid's, with the same eigenpairs to round-off (a 1-D
bound spectrum has no degeneracy to mix). Used by :func:`tdse1d.physics.states.bound_states`.
"""

from __future__ import annotations

import numpy as np

from .grid import Grid

__all__ = ["is_mirror_symmetric", "parity_blocks", "circulant_parity_blocks", "parity_vectors",
           "negative_states_by_parity"]


def is_mirror_symmetric(grid: Grid, values: np.ndarray) -> bool:
    """True if V(x_i) = V(x_{(n - i) mod n}) to round-off (1e-13 of max |V|) on an even
    periodic grid centred on 0, every value finite.

    Parameters
    ----------
    grid : Grid
    values : ndarray, shape (n,)
        The potential on the grid (Hartree).
    """
    n = grid.points
    if n % 2 or n < 8 or abs(grid.x[n // 2]) > 1e-12 * grid.spacing or not np.all(np.isfinite(values)):
        return False
    mirrored = values[(n - np.arange(n)) % n]
    return bool(np.max(np.abs(values - mirrored)) <= 1e-13 * max(np.max(np.abs(values)), 1.0))


def parity_blocks(h: np.ndarray):
    """The even and odd blocks of a dense mirror-symmetric H, formed in O(n^2) from its
    entries (H[n-i, n-j] = H[i, j]).

    Returns
    -------
    even : ndarray, shape (n/2 + 1, n/2 + 1)
        In the basis e_0, e_{n/2}, then (e_i + e_{n-i}) / sqrt 2.
    odd : ndarray, shape (n/2 - 1, n/2 - 1)
        In the basis (e_i - e_{n-i}) / sqrt 2.
    pairs : ndarray
        The i (0 < i < n/2) of the paired points.
    """
    n = h.shape[0]
    half = n // 2
    pairs = np.arange(1, half)
    mirror = n - pairs
    direct, crossed = h[np.ix_(pairs, pairs)], h[np.ix_(pairs, mirror)]
    odd = direct - crossed
    even = np.empty((half + 1, half + 1))
    single = np.array([0, half])
    even[:2, :2] = h[np.ix_(single, single)]
    even[:2, 2:] = np.sqrt(2.0) * h[np.ix_(single, pairs)]
    even[2:, :2] = even[:2, 2:].T
    even[2:, 2:] = direct + crossed
    return even, odd, pairs


def circulant_parity_blocks(column: np.ndarray, diagonal: np.ndarray):
    """The blocks of :func:`parity_blocks` for H = C + diag(V), C circulant with first
    column ``column`` (the Fourier-grid kinetic matrix, C[i, j] = column[(i - j) mod n]),
    formed from the column and V alone: the same numbers to the last bit as
    ``parity_blocks(circulant(column) + diag(V))`` (the same sums in the same order), with
    neither the n x n matrix (134 MB at 4096 points) nor its gathers formed.

    Parameters
    ----------
    column : ndarray, shape (n,)
        First column of the circulant part (Hartree).
    diagonal : ndarray, shape (n,)
        The potential on the grid (Hartree), mirror-symmetric.

    Returns
    -------
    even, odd, pairs
        As :func:`parity_blocks`.
    """
    n = column.size
    half = n // 2
    pairs = np.arange(1, half)
    mirror = n - pairs
    # H[i, j] for i, j in pairs, with V added on the diagonal as hamiltonian_matrix does
    direct = column[(pairs[:, None] - pairs[None, :]) % n]
    direct[np.diag_indices_from(direct)] += diagonal[pairs]
    crossed = column[(pairs[:, None] - mirror[None, :]) % n]  # H[i, n - j]: off the diagonal of H
    odd = direct - crossed
    even = np.empty((half + 1, half + 1))
    single = np.array([0, half])
    corner = column[(single[:, None] - single[None, :]) % n]
    corner[np.diag_indices_from(corner)] += diagonal[single]
    even[:2, :2] = corner
    even[:2, 2:] = np.sqrt(2.0) * column[(single[:, None] - pairs[None, :]) % n]
    even[2:, :2] = even[:2, 2:].T
    even[2:, 2:] = direct + crossed
    del direct, crossed
    return even, odd, pairs


def parity_vectors(vectors: np.ndarray, pairs: np.ndarray, n: int, even: bool) -> np.ndarray:
    """Grid vectors (columns, length n) of a block's eigenvectors (see :func:`parity_blocks`)."""
    full = np.zeros((n, vectors.shape[1]))
    core = vectors[2:] if even else vectors
    full[pairs] = core / np.sqrt(2.0)
    full[n - pairs] = core / np.sqrt(2.0) if even else -core / np.sqrt(2.0)
    if even:
        full[0], full[n // 2] = vectors[0], vectors[1]
    return full


def negative_states_by_parity(blocks, n: int, eigh):
    """Every eigenpair with E < 0 of a mirror-symmetric dense H, from its two blocks.

    Parameters
    ----------
    blocks : (even, odd, pairs)
        From :func:`parity_blocks` or :func:`circulant_parity_blocks`.
    n : int
        Points of the grid.
    eigh : callable
        ``scipy.linalg.eigh`` (passed in: imported by the caller only when it solves).

    Returns
    -------
    (energies, vectors) or None
        Energies ascending (Hartree) and grid vectors as columns; None if no E < 0.
    """
    even, odd, pairs = blocks
    parts = [eigh(block, subset_by_value=(-np.inf, 0.0), driver="evr") for block in (even, odd)]
    if parts[0][0].size + parts[1][0].size == 0:
        return None
    energies = np.concatenate([parts[0][0], parts[1][0]])
    vectors = np.hstack([parity_vectors(parts[0][1], pairs, n, True),
                         parity_vectors(parts[1][1], pairs, n, False)])
    order = np.argsort(energies, kind="stable")
    return energies[order], vectors[:, order]
