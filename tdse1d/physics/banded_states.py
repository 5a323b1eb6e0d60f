"""All bound states of a grid too large for a dense solve (above
:data:`tdse1d.physics.states.DENSE_POINTS` points): the levels and start vectors from a
banded finite-difference Hamiltonian, refined by block Rayleigh-Ritz with the Fourier
Hamiltonian of the run. Used by :func:`tdse1d.physics.states.bound_states`.
"""

from __future__ import annotations

import numpy as np

from .grid import Grid
from .potentials import Potential
from .states import TRAP_LEVELS, _apply_hamiltonian, _linalg, _residuals
from .threads import one_blas_thread

__all__ = ["banded_bound"]

#: half-width of the finite-difference stencil of the banded Hamiltonian (order 2 x this)
FD_HALF_WIDTH = 8
#: most block Rayleigh-Ritz sweeps refining the banded start vectors on a large grid
REFINE_SWEEPS = 2


def _second_derivative_weights(half_width: int) -> np.ndarray:
    """Central finite-difference weights of d^2/dx^2 (unit spacing), order 2 x half_width.

    Solved from the Taylor (Vandermonde) conditions, as in Fornberg, Math. Comput. 51,
    699 (1988) (from memory).
    """
    m = np.arange(-half_width, half_width + 1, dtype=float)
    conditions = np.vander(m, increasing=True).T
    rhs = np.zeros(m.size)
    rhs[2] = 2.0
    return np.linalg.solve(conditions, rhs)


def _banded_hamiltonian(grid: Grid, potential: Potential, half_width: int = FD_HALF_WIDTH) -> np.ndarray:
    """Upper band storage (LAPACK) of T + V with a finite-difference T (no wrap-around)."""
    w = _second_derivative_weights(half_width) / grid.spacing**2
    band = np.zeros((half_width + 1, grid.points))
    for d in range(half_width + 1):
        band[half_width - d, d:] = -0.5 * w[half_width + d]
    band[half_width] += potential.value(grid.x)
    return band


def banded_bound(grid: Grid, potential: Potential, tolerance: float):
    """All E < 0 eigenpairs of a large grid: banded count and start, Fourier Rayleigh-Ritz.

    Returns energies, vectors (columns) and residuals.
    """
    band = _banded_hamiltonian(grid, potential)
    with one_blas_thread():
        levels = _linalg().eigvals_banded(band, select="v", select_range=(-np.abs(band[-1]).max() - 1.0, 0.0))
    if levels.size == 0:
        levels = _linalg().eigvals_banded(band, select="i", select_range=(0, TRAP_LEVELS - 1))
    # start vectors: two steps of inverse iteration of the banded H just off each level
    full = np.zeros((2 * band.shape[0] - 1, grid.points))
    full[: band.shape[0]] = band
    for d in range(1, band.shape[0]):
        full[band.shape[0] - 1 + d, : grid.points - d] = band[band.shape[0] - 1 - d, d:]
    rng = np.random.default_rng(0)
    guess = np.empty((grid.points, levels.size))
    u = band.shape[0] - 1
    for i, e in enumerate(levels):
        shifted = full.copy()
        gap = np.min(np.abs(np.delete(levels, i) - e)) if levels.size > 1 else 1.0
        shifted[u] -= e + 1e-3 * gap
        vec = rng.standard_normal(grid.points)
        for _ in range(2):
            vec = _linalg().solve_banded((u, u), shifted, vec)
            vec /= np.linalg.norm(vec)
        guess[:, i] = vec
    apply_h = _apply_hamiltonian(grid, potential)
    t = grid.kinetic_energy()
    shift = max(1.0, -float(potential.value(grid.x).min()))
    # block preconditioned Rayleigh-Ritz with the Fourier H (LOBPCG-like: the current
    # vectors, their preconditioned residuals and the previous step's directions)
    vectors, energies, previous = guess, levels, None
    for _ in range(REFINE_SWEEPS):
        resid = apply_h(vectors) - vectors * energies
        if np.all(np.linalg.norm(resid, axis=0) <= 0.1 * np.sqrt(tolerance)):
            break
        correction = np.fft.ifft(np.fft.fft(resid, axis=0) / (t[:, None] + shift), axis=0).real
        blocks = [vectors, correction] + ([previous] if previous is not None else [])
        basis, _ = np.linalg.qr(np.hstack(blocks))
        h_small = basis.T @ apply_h(basis)
        ritz, coeffs = np.linalg.eigh(0.5 * (h_small + h_small.T))
        # as many as the banded count, plus any further Ritz value below zero
        n_keep = max(levels.size, int(np.count_nonzero(ritz < 0)))
        new = basis @ coeffs[:, :n_keep]
        previous = new[:, : vectors.shape[1]] - vectors if new.shape[1] == vectors.shape[1] else None
        vectors, energies = new, ritz[:n_keep]
    keep = energies < 0 if np.any(energies < 0) else np.arange(energies.size) < TRAP_LEVELS
    energies, vectors = energies[keep], vectors[:, keep]
    return energies, vectors, _residuals(apply_h, energies, vectors)
