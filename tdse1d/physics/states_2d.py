"""Bound states of the two-electron atom on its 2-D Fourier grid (x1, x2).

H = T1 + T2 + V(x1, x2) with the Fourier-grid kinetic operator of each axis, applied by
2-D FFTs (the operator the split-operator step applies), never as a matrix: the grid
holds 10^5 to 10^6 points. The lowest states are found by LOBPCG (Knyazev, SIAM J.
Sci. Comput. 23, 517 (2001)) with the kinetic-energy preconditioner (T + s)^-1, inside
the subspace of the chosen exchange symmetry: every vector is projected on
psi(x1, x2) = +-psi(x2, x1) (+ singlet, - triplet) before H acts, so the states found
are of that symmetry (H commutes with the exchange; the projection keeps round-off
from leaking the other symmetry in, whose vectors the projected operator maps to 0,
above every bound level).

The search runs on a window of the grid around the nucleus (the ground state decays
as exp(-sqrt(2 Ip) r) along the axes, 1e-13 of its peak at 25 bohr for the standard
helium model) and the states are then put on the whole grid, where their residual is
measured and, if it is above the tolerance, a few more LOBPCG sweeps are made.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
import scipy.fft
from scipy.sparse.linalg import LinearOperator, lobpcg

from .grid import Grid
from .states import _window, bound_states
from .threads import one_blas_thread
from .two_electron import TwoElectronAtom

__all__ = ["PairStates", "pair_states", "apply_pair_hamiltonian", "PAIR_WINDOW"]

#: half-width (bohr) of the window where the states are first looked for
PAIR_WINDOW = 25.0
#: extra LOBPCG vectors beyond those asked for (a larger block converges faster and
#: keeps the highest wanted state from being mixed with the next one)
EXTRA_VECTORS = 2
#: most LOBPCG iterations on the window and on the whole grid
MAX_ITERATIONS = 500
REFINE_ITERATIONS = 60


@dataclass(frozen=True)
class PairStates:
    """Eigenstates of the two-electron atom on a square 2-D grid.

    Attributes
    ----------
    energies : ndarray, shape (n,)
        Eigenvalues in Hartree, ascending.
    wavefunctions : ndarray, shape (n, points, points)
        Real eigenfunctions psi[x1, x2], normalised to sum |psi|^2 dx^2 = 1, each with
        its largest component positive, of the exchange symmetry ``exchange_sign``.
    grid : Grid
        The grid of each axis (both axes are the same).
    exchange_sign : int
        +1 (singlet, symmetric) or -1 (triplet, antisymmetric).
    residuals : ndarray, shape (n,)
        |H psi - E psi| / |psi| of each state (Hartree).
    converged : bool
        Every residual is below the square root of the tolerance asked for (a Rayleigh
        quotient's energy error is of order residual^2 / gap).
    """

    energies: np.ndarray
    wavefunctions: np.ndarray
    grid: Grid
    exchange_sign: int
    residuals: np.ndarray
    converged: bool

    def __len__(self):
        return len(self.energies)


def _coordinates(grid: Grid):
    return grid.x[:, None], grid.x[None, :]


def _kinetic(grid: Grid) -> np.ndarray:
    t = grid.kinetic_energy()
    return t[:, None] + t[None, :]


def apply_pair_hamiltonian(grid: Grid, atom: TwoElectronAtom, symmetry: int | None = None):
    """H applied by 2-D FFT to a block of vectors.

    Parameters
    ----------
    grid : Grid
        Grid of each axis (bohr).
    atom : TwoElectronAtom
    symmetry : {+1, -1, None}
        Project each vector on this exchange symmetry first (None: no projection).

    Returns
    -------
    callable
        ``apply(block)``: block of shape (points^2, m) or (points^2,), real; returns
        H times the (projected) block, same shape (Hartree).
    """
    n = grid.points
    v = atom.value(*_coordinates(grid))[:, :, None]
    t = _kinetic(grid)[:, :, None]

    def apply(block):
        shape = block.shape
        u = np.asarray(block, dtype=float).reshape(n, n, -1)
        if symmetry is not None:
            u = 0.5 * (u + symmetry * u.transpose(1, 0, 2))
        # real vectors: the half-spectrum transform of the last axis suffices
        kin = scipy.fft.irfft2(t[:, : n // 2 + 1] * scipy.fft.rfft2(u, axes=(0, 1), workers=-1), s=(n, n),
                               axes=(0, 1), workers=-1)
        return (kin + v * u).reshape(shape)

    return apply


def _preconditioner(grid: Grid, shift: float, symmetry: int):
    n = grid.points
    inverse = (1.0 / (_kinetic(grid) + shift))[:, : n // 2 + 1, None]

    def apply(block):
        shape = block.shape
        u = np.asarray(block, dtype=float).reshape(n, n, -1)
        u = scipy.fft.irfft2(inverse * scipy.fft.rfft2(u, axes=(0, 1), workers=-1), s=(n, n), axes=(0, 1),
                             workers=-1)
        return (0.5 * (u + symmetry * u.transpose(1, 0, 2))).reshape(shape)

    return apply


def _start_vectors(grid: Grid, atom: TwoElectronAtom, count: int) -> np.ndarray:
    """Symmetrised products of the ion's orbitals, phi_i(x1) phi_j(x2) +- swap, lowest
    orbital-energy sums first: the independent-electron picture of the lowest states."""
    sign = atom.exchange_sign
    orbitals = bound_states(grid, atom.ion(), count=count + 3)
    pairs = sorted(((i, j) for i in range(len(orbitals)) for j in range(i if sign > 0 else i + 1, len(orbitals))),
                   key=lambda ij: orbitals.energies[ij[0]] + orbitals.energies[ij[1]])[:count]
    phi = orbitals.wavefunctions
    block = [np.outer(phi[i], phi[j]) + sign * np.outer(phi[j], phi[i]) for i, j in pairs]
    return np.stack([b.ravel() for b in block], axis=1)


def _lobpcg(grid: Grid, atom: TwoElectronAtom, guess: np.ndarray, tolerance: float, iterations: int):
    sign = atom.exchange_sign
    size = grid.points**2
    apply_h = apply_pair_hamiltonian(grid, atom, sign)
    # the depth of one electron's well: the scale of the kinetic energy of the low states
    shift = max(1.0, -float(np.min(atom.nuclear(grid.x))))
    op = LinearOperator((size, size), matvec=apply_h, matmat=apply_h, dtype=float)
    pre = _preconditioner(grid, shift, sign)
    pre_op = LinearOperator((size, size), matvec=pre, matmat=pre, dtype=float)
    # LOBPCG warns when it stops at maxiter (the residuals are checked below); its small
    # dense products run on one BLAS thread, as the 1-D solver's (faster on shared cores)
    with warnings.catch_warnings(), one_blas_thread():
        warnings.simplefilter("ignore")
        energies, vectors = lobpcg(op, guess, M=pre_op, tol=0.1 * np.sqrt(tolerance), maxiter=iterations,
                                   largest=False)
    order = np.argsort(energies)
    energies, vectors = energies[order], vectors[:, order]
    residuals = np.linalg.norm(apply_h(vectors) - vectors * energies, axis=0) / np.linalg.norm(vectors, axis=0)
    return energies, vectors, residuals


def pair_states(grid: Grid, atom: TwoElectronAtom, count: int = 1, tolerance: float = 1e-10,
                window: float = PAIR_WINDOW) -> PairStates:
    """The lowest ``count`` states of the two-electron atom of its spin on the square grid.

    Parameters
    ----------
    grid : Grid
        Grid of each axis (points, spacing in bohr); the 2-D grid is grid x grid.
    atom : TwoElectronAtom
    count : int
        Number of states (>= 1).
    tolerance : float
        Energy accuracy asked for (Hartree); the residual asked of LOBPCG is
        0.1 sqrt(tolerance).
    window : float
        Half-width (bohr) of the window where the states are first looked for.

    Returns
    -------
    PairStates
    """
    if not isinstance(atom, TwoElectronAtom):
        raise TypeError(f"pair_states needs a TwoElectronAtom, got {type(atom).__name__}")
    count = int(count)
    if count < 1:
        raise ValueError(f"count must be at least 1, got {count}")
    if not tolerance > 0:
        raise ValueError(f"tolerance must be positive, got {tolerance}")
    sub, where = _window(grid, window)
    block = count + EXTRA_VECTORS
    energies, vectors, residuals = _lobpcg(sub, atom, _start_vectors(sub, atom, block), tolerance, MAX_ITERATIONS)
    if sub.points < grid.points:
        full = np.zeros((grid.points, grid.points, block))
        full[where, where] = vectors.reshape(sub.points, sub.points, block)
        vectors = full.reshape(grid.points**2, block)
        apply_h = apply_pair_hamiltonian(grid, atom, atom.exchange_sign)
        energies = np.einsum("ij,ij->j", vectors, apply_h(vectors)) / np.einsum("ij,ij->j", vectors, vectors)
        residuals = np.linalg.norm(apply_h(vectors) - vectors * energies, axis=0) / np.linalg.norm(vectors, axis=0)
        if np.any(residuals[:count] > np.sqrt(tolerance)):
            energies, vectors, residuals = _lobpcg(grid, atom, vectors, tolerance, REFINE_ITERATIONS)
    energies, residuals = energies[:count], residuals[:count]
    psi = vectors[:, :count].T.reshape(count, grid.points, grid.points)
    psi = psi / np.sqrt(np.sum(psi**2, axis=(1, 2)) * grid.spacing**2)[:, None, None]
    for state in psi:  # the largest component positive: a reproducible sign
        flat = state.ravel()
        state *= np.sign(flat[np.argmax(np.abs(flat))])
    return PairStates(np.asarray(energies), psi, grid, atom.exchange_sign, np.asarray(residuals),
                      bool(np.all(residuals <= np.sqrt(tolerance))))
