"""Bound states of the model on the run's own Fourier grid.

The Hamiltonian is H = T + V with the Fourier-grid kinetic operator T = F^-1 (k^2/2) F,
the same operator the split-operator propagator applies (Kosloff, J. Phys. Chem. 92,
2087 (1988), from memory), so the states found here are stationary under propagation to
the accuracy of the time step.

Method: bound states are localised, so they are first found by dense diagonalisation
(LAPACK via :func:`scipy.linalg.eigh`) of H on a window of the grid around the origin
(the whole grid when it is small). When the grid is larger than the window, the window
eigenvectors are padded to the full grid and refined with LOBPCG (Knyazev, SIAM J. Sci.
Comput. 23, 517 (2001)) using H applied by FFT and a kinetic-energy preconditioner,
until the eigenvalue residual corresponds to an energy error below ``tolerance``.
"""

from __future__ import annotations

import functools
import warnings
from dataclasses import dataclass

import numpy as np
import scipy.linalg
from scipy.optimize import brentq
from scipy.sparse.linalg import LinearOperator, lobpcg

from .grid import Grid
from .potentials import Potential

__all__ = [
    "BoundStates",
    "kinetic_matrix",
    "hamiltonian_matrix",
    "bound_states",
    "ground_state_energy",
    "fit_softening",
    "initial_wavefunction",
    "SofteningFitError",
]

#: half-width (bohr) of the window in which states are looked for
STATE_WINDOW = 150.0
#: half-width (bohr) of the window used while fitting a softening (ground state only)
FIT_WINDOW = 25.0
#: most points of a dense window (the dense solve costs points^3)
MAX_WINDOW_POINTS = 2048
#: most bound states kept when their number is "auto"
MAX_AUTO_STATES = 30
#: largest residual |H v - E v| of a window state kept as a start for refinement
MAX_GUESS_RESIDUAL = 1e-2
#: largest relative change of a fitted ground state when the grid spacing is halved
MAX_FIT_GRID_ERROR = 1e-3


class SofteningFitError(ValueError):
    """No softening gives the requested ionization potential."""


@dataclass(frozen=True)
class BoundStates:
    """Bound states on a grid.

    Attributes
    ----------
    energies : ndarray, shape (n,)
        Eigenvalues in Hartree, ascending.
    wavefunctions : ndarray, shape (n, points)
        Real eigenfunctions normalised to sum |phi|^2 dx = 1, each with its largest
        component positive.
    grid : Grid
    """

    energies: np.ndarray
    wavefunctions: np.ndarray
    grid: Grid

    def __len__(self):
        return len(self.energies)


def kinetic_matrix(points: int, spacing: float) -> np.ndarray:
    """Dense Fourier-grid kinetic matrix (Hartree) of a periodic grid.

    T is circulant: its first column is the inverse FFT of k^2/2.
    """
    k = 2 * np.pi * np.fft.fftfreq(points, spacing)
    column = np.fft.ifft(0.5 * k**2).real
    return scipy.linalg.circulant(column)


def hamiltonian_matrix(grid: Grid, potential: Potential) -> np.ndarray:
    """Dense H = T + V on ``grid`` (for small grids and independent checks)."""
    h = kinetic_matrix(grid.points, grid.spacing)
    h[np.diag_indices_from(h)] += potential.value(grid.x)
    return h


def _window(grid: Grid, half_width: float) -> tuple[Grid, slice]:
    n = min(grid.points, MAX_WINDOW_POINTS, 2 * int(np.ceil(half_width / grid.spacing)))
    n = max(n + n % 2, 16)
    if n >= grid.points:
        return grid, slice(0, grid.points)
    start = grid.points // 2 - n // 2
    return Grid(n, grid.spacing), slice(start, start + n)


@functools.lru_cache(maxsize=1)
def _blas_controller():
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


def _dense_eigh(h, eigvals_only=False):
    # Divide and conquer on one BLAS thread: for these matrices (at most a few thousand
    # rows) a multi-threaded BLAS was measured 10-15 times *slower* on shared cores (a
    # scan's workers, a loaded workstation), and LAPACK's subset drivers slower still.
    with _blas_controller().limit(limits=1, user_api="blas"):
        return scipy.linalg.eigh(h, eigvals_only=eigvals_only, driver="evd")


def _dense_states(grid: Grid, potential: Potential, count: int | None):
    energies, vectors = _dense_eigh(hamiltonian_matrix(grid, potential))
    if count is None:
        bound = int(np.count_nonzero(energies < 0))
        # no bound state (e.g. a harmonic trap, all E > 0): keep its lowest levels
        count = min(bound, MAX_AUTO_STATES) if bound else 10
    count = min(count, grid.points)
    return energies[:count], vectors[:, :count]


def _apply_hamiltonian(grid: Grid, potential: Potential):
    """H applied by FFT to the columns of a block of vectors on ``grid``."""
    v = potential.value(grid.x)
    t = grid.kinetic_energy()

    def apply_h(block):
        block = block.reshape(grid.points, -1)
        out = np.fft.ifft(t[:, None] * np.fft.fft(block, axis=0), axis=0).real
        return out + v[:, None] * block

    return apply_h


def _residuals(apply_h, energies, vectors) -> np.ndarray:
    """|H v - E v| / |v| for each column v."""
    return np.linalg.norm(apply_h(vectors) - vectors * energies, axis=0) / np.linalg.norm(vectors, axis=0)


def _refine(grid: Grid, potential: Potential, guess: np.ndarray, tolerance: float):
    """LOBPCG refinement of approximate eigenvectors (columns of ``guess``) on ``grid``.

    Returns the energies, the vectors (columns) and their residuals.
    """
    v = potential.value(grid.x)
    t = grid.kinetic_energy()
    shift = max(1.0, -float(v.min()))
    apply_h = _apply_hamiltonian(grid, potential)

    def apply_precond(block):
        block = block.reshape(grid.points, -1)
        return np.fft.ifft(np.fft.fft(block, axis=0) / (t[:, None] + shift), axis=0).real

    op = LinearOperator((grid.points,) * 2, matvec=apply_h, matmat=apply_h, dtype=float)
    pre = LinearOperator((grid.points,) * 2, matvec=apply_precond, matmat=apply_precond, dtype=float)
    # energy error ~ |residual|^2 / gap; ask for a residual well below sqrt(tolerance)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        energies, vectors = lobpcg(
            op, guess, M=pre, tol=0.1 * np.sqrt(tolerance), maxiter=400, largest=False
        )
    order = np.argsort(energies)
    energies, vectors = energies[order], vectors[:, order]
    return energies, vectors, _residuals(apply_h, energies, vectors)


def _normalise(vectors: np.ndarray, spacing: float) -> np.ndarray:
    vectors = vectors / np.sqrt(np.sum(vectors**2, axis=0) * spacing)
    peak = np.argmax(np.abs(vectors), axis=0)
    signs = np.sign(vectors[peak, np.arange(vectors.shape[1])])
    return (vectors * signs).T.copy()


def bound_states(
    grid: Grid,
    potential: Potential,
    count: int | None = None,
    tolerance: float = 1e-10,
    window: float = STATE_WINDOW,
) -> BoundStates:
    """Lowest eigenstates of H = T + V on ``grid``.

    Parameters
    ----------
    grid : Grid
    potential : Potential
    count : int, optional
        Number of states. By default all states with E < 0 that fit in the window
        (at most :data:`MAX_AUTO_STATES`); on a grid larger than the window, only the
        lowest of these whose refinement converged.
    tolerance : float
        Energy accuracy (Hartree) asked of the refinement on large grids.
    window : float
        Half-width (bohr) of the region where the states are first looked for.

    Returns
    -------
    BoundStates
    """
    sub, where = _window(grid, window)
    energies, vectors = _dense_states(sub, potential, count)
    if sub.points < grid.points:
        guess = np.zeros((grid.points, vectors.shape[1]))
        guess[where] = vectors
        if count is None:
            # Near-threshold states of the window are box states that reach its edges;
            # padded with zeros they are no approximate eigenvectors of the larger grid
            # and make LOBPCG fail at its first iteration. Refine the localised ones.
            start = _residuals(_apply_hamiltonian(grid, potential), energies, guess)
            localised = start < MAX_GUESS_RESIDUAL
            localised[0] = True
            guess = guess[:, localised]
        energies, vectors, residuals = _refine(grid, potential, guess, tolerance)
        if count is None:
            # Keep the leading states that converged and are bound.
            good = (residuals <= 0.1 * np.sqrt(tolerance)) & (energies < 0)
            keep = len(good) if good.all() else max(int(np.argmin(good)), 1)
            energies, vectors = energies[:keep], vectors[:, :keep]
    return BoundStates(np.asarray(energies), _normalise(vectors, grid.spacing), grid)


def ground_state_energy(grid: Grid, potential: Potential, window: float = FIT_WINDOW) -> float:
    """Lowest eigenvalue of H on ``grid`` (Hartree), via a dense window solve."""
    sub, _ = _window(grid, window)
    h = hamiltonian_matrix(sub, potential)
    return float(_dense_eigh(h, eigvals_only=True)[0])


def fit_softening(
    grid: Grid,
    potential: Potential,
    ionization_potential: float,
    bracket: tuple[float, float] = (1e-3, 50.0),
    tolerance: float = 1e-10,
) -> float:
    """Softening a for which the ground-state energy on ``grid`` is -Ip.

    Root finding (Brent's method) on E0(a) + Ip, which increases monotonically with a.

    Parameters
    ----------
    grid : Grid
    potential : Potential
        A potential with a softening (``with_softening``).
    ionization_potential : float
        Ip in Hartree (> 0).
    bracket : (float, float)
        Range of softenings searched (bohr).
    tolerance : float
        Accuracy of the ground-state energy at the root (Hartree).

    Raises
    ------
    SofteningFitError
        If Ip is out of the reach of the model on this grid, or is reached only by a
        state the grid does not resolve (its energy changes by more than
        :data:`MAX_FIT_GRID_ERROR`, relative, when the spacing is halved).
    """

    def mismatch(a):
        return ground_state_energy(grid, potential.with_softening(a)) + ionization_potential

    lo, hi = bracket
    f_lo, f_hi = mismatch(lo), mismatch(hi)
    if f_lo > 0 or f_hi < 0:
        deepest = -(f_lo - ionization_potential)
        shallowest = -(f_hi - ionization_potential)
        raise SofteningFitError(
            f"an ionization potential of {ionization_potential:.6g} Hartree is out of reach of this model on "
            f"this grid: softenings from {lo:g} to {hi:g} bohr give {shallowest:.4g} to {deepest:.4g} Hartree "
            "(change the charge, or use a finer grid for deep states)"
        )
    # the energy is smooth in a; ask for a far tighter root than the energy tolerance
    a = float(brentq(mismatch, lo, hi, xtol=1e-13, rtol=1e-13, maxiter=200))
    # A small enough softening reaches any Ip on a grid, but with a core narrower than
    # the spacing the "state" is a grid artefact: check that halving the spacing leaves
    # its energy nearly unchanged. The state is compact, so a narrow window suffices.
    finer = Grid(2 * grid.points, 0.5 * grid.spacing)
    e_fine = ground_state_energy(finer, potential.with_softening(a), window=0.5 * FIT_WINDOW)
    change = abs(e_fine + ionization_potential) / ionization_potential
    if change > MAX_FIT_GRID_ERROR:
        raise SofteningFitError(
            f"an ionization potential of {ionization_potential:.6g} Hartree needs a softening of {a:.3g} bohr, "
            f"a state this grid (spacing {grid.spacing:g} bohr) does not resolve: halving the spacing changes "
            f"its energy by {100 * change:.2g}% (use a finer grid, a larger charge, or a smaller Ip)"
        )
    return a


def initial_wavefunction(states: BoundStates, indices, amplitudes=None, phases=None) -> np.ndarray:
    """Normalised initial wavefunction: one bound state or a superposition.

    Parameters
    ----------
    states : BoundStates
    indices : sequence of int
        Which states.
    amplitudes, phases : sequence of float, optional
        Relative amplitudes and phases (rad); equal amplitudes and zero phases by default.

    Returns
    -------
    ndarray of complex, shape (points,)
    """
    indices = list(indices)
    if max(indices) >= len(states):
        raise IndexError(f"initial state {max(indices)} requested but only {len(states)} bound states were found")
    amplitudes = np.ones(len(indices)) if amplitudes is None else np.asarray(amplitudes, dtype=float)
    phases = np.zeros(len(indices)) if phases is None else np.asarray(phases, dtype=float)
    coeffs = amplitudes * np.exp(1j * phases)
    coeffs = coeffs / np.sqrt(np.sum(np.abs(coeffs) ** 2))
    psi = np.tensordot(coeffs, states.wavefunctions[indices], axes=1).astype(complex)
    return psi / np.sqrt(np.sum(np.abs(psi) ** 2) * states.grid.spacing)
