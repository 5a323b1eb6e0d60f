"""Bound states of the model on the run's own Fourier grid.

The Hamiltonian is H = T + V with the Fourier-grid kinetic operator T = F^-1 (k^2/2) F,
the same operator the split-operator propagator applies (Kosloff, J. Phys. Chem. 92,
2087 (1988), from memory), so the states found here are stationary under propagation to
the accuracy of the time step.

Two ways of asking:

* **All bound states** (``count=None``, what a run uses): every eigenpair with E < 0 on
  the whole grid, none dropped, so the ionization probability (:mod:`tdse1d.physics.ionization`)
  can count every bound state the box holds. Up to :data:`DENSE_POINTS` points this is a
  dense solve of the whole grid restricted to E < 0 (LAPACK MRRR via
  :func:`scipy.linalg.eigh`, only the eigenpairs used; a mirror-symmetric potential in
  its even and odd blocks, :mod:`tdse1d.physics.parity`). On larger grids the E < 0
  eigenvalues of a banded high-order finite-difference Hamiltonian (LAPACK band
  reduction, cost ~ points^2) count the states and give start vectors by inverse
  iteration; a Rayleigh-Ritz step with the Fourier-grid H (applied by FFT) on those
  vectors and their preconditioned residuals turns them into eigenpairs of the run's
  own H (:mod:`tdse1d.physics.banded_states`). The result says how many were found and
  whether each converged.
* **The lowest ``count`` states**: dense diagonalisation of H on a window of the grid
  around the origin (the whole grid when it is small), refined on the full grid with
  LOBPCG (Knyazev, SIAM J. Sci. Comput. 23, 517 (2001)) using H applied by FFT and a
  kinetic-energy preconditioner, until the eigenvalue residual corresponds to an
  energy error below ``tolerance``.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np

from .grid import Grid
from .parity import circulant_parity_blocks, is_mirror_symmetric, negative_states_by_parity
from .potentials import Potential
from .threads import one_blas_thread

__all__ = ["BoundStates", "kinetic_matrix", "hamiltonian_matrix", "bound_states", "ground_state_energy",
           "fit_softening", "initial_wavefunction", "SofteningFitError"]

#: half-width (bohr) of the window in which a given number of lowest states is looked for
STATE_WINDOW = 150.0
#: half-width (bohr) of the window used while fitting a softening (ground state only)
FIT_WINDOW = 25.0
#: most points of a dense window (the dense solve costs points^3)
MAX_WINDOW_POINTS = 2048
#: largest grid on which all bound states come from a dense solve of the whole grid
#: (one core, whole grid: 0.07 s at 1000 points, 0.45 s at 2000, 7 s at 4000; parity blocks a quarter)
DENSE_POINTS = 4096
#: levels kept when the model has no bound state at all (a confining trap, all E > 0)
TRAP_LEVELS = 10
#: largest relative change of a fitted ground state when the grid spacing is halved
MAX_FIT_GRID_ERROR = 1e-3


def _linalg():
    """scipy.linalg, imported by a solve only (0.1-0.3 s; stored states need none)."""
    import scipy.linalg

    return scipy.linalg


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
    complete : bool
        True when these are all the states with E < 0 on the grid, each converged.
    residuals : ndarray or None
        Residual norm |H phi - E phi| of each state (Hartree).
    """

    energies: np.ndarray
    wavefunctions: np.ndarray
    grid: Grid
    #: every state with E < 0 on the grid was looked for and each one converged
    complete: bool = False
    #: |H phi - E phi| of each state (Hartree), NaN where not measured
    residuals: np.ndarray | None = None

    def __len__(self):
        return len(self.energies)


def kinetic_column(points: int, spacing: float) -> np.ndarray:
    """First column of the Fourier-grid kinetic matrix (Hartree): the inverse FFT of k^2/2."""
    k = 2 * np.pi * np.fft.fftfreq(points, spacing)
    return np.fft.ifft(0.5 * k**2).real


def kinetic_matrix(points: int, spacing: float) -> np.ndarray:
    """Dense Fourier-grid kinetic matrix (Hartree) of a periodic grid.

    T is circulant, T[i, j] = c[(i - j) mod n] with c = :func:`kinetic_column`.
    """
    return _linalg().circulant(kinetic_column(points, spacing))


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


def _dense_eigh(h, eigvals_only=False):
    # Divide and conquer on one BLAS thread: for these matrices (at most a few thousand
    # rows) a multi-threaded BLAS was measured 10-15 times *slower* on shared cores (a
    # scan's workers, a loaded workstation), and LAPACK's subset drivers slower still.
    with one_blas_thread():
        return _linalg().eigh(h, eigvals_only=eigvals_only, driver="evd")


def _dense_states(grid: Grid, potential: Potential, count: int):
    energies, vectors = _dense_eigh(hamiltonian_matrix(grid, potential))
    count = min(count, grid.points)
    return energies[:count], vectors[:, :count]


def _dense_bound(grid: Grid, potential: Potential):
    """All eigenpairs with E < 0 of the whole grid's dense H (the lowest few if none);
    a mirror-symmetric potential in its even and odd blocks (:mod:`tdse1d.physics.parity`)."""
    values = potential.value(grid.x)
    # MRRR for a subset: only the eigenpairs used are formed (2.5x faster than all)
    with one_blas_thread():
        if is_mirror_symmetric(grid, values):  # the blocks from the kinetic column, no n x n matrix
            blocks = circulant_parity_blocks(kinetic_column(grid.points, grid.spacing), values)
            found = negative_states_by_parity(blocks, grid.points, _linalg().eigh)
            if found is not None:
                return found
            del blocks  # (a trap with no E < 0: the whole matrix below)
        h = hamiltonian_matrix(grid, potential)
        energies, vectors = _linalg().eigh(h, subset_by_value=(-np.inf, 0.0), driver="evr")
        if energies.size == 0:  # a confining trap (all E > 0): its lowest levels
            energies, vectors = _linalg().eigh(h, subset_by_index=(0, min(TRAP_LEVELS, grid.points) - 1),
                                                  driver="evr")
    return energies, vectors


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

    from scipy.sparse.linalg import LinearOperator, lobpcg
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
    # the largest component is made positive; an odd state has two equal largest
    # components (at x and -x) that round-off orders either way, so the first of the
    # components within 1e-8 of the largest decides (the sign no longer flips with
    # round-off, e.g. a softening moved by 1e-14)
    size = np.abs(vectors)
    peak = np.argmax(size >= (1 - 1e-8) * size.max(axis=0), axis=0)
    signs = np.sign(vectors[peak, np.arange(vectors.shape[1])])
    return (vectors * signs).T.copy()


def bound_states(
    grid: Grid,
    potential: Potential,
    count: int | None = None,
    tolerance: float = 1e-10,
    window: float = STATE_WINDOW,
) -> BoundStates:
    """Eigenstates of H = T + V on ``grid``: all bound ones, or the lowest ``count``.

    Parameters
    ----------
    grid : Grid
    potential : Potential
    count : int, optional
        Number of states. By default every state with E < 0 on the whole grid, none
        dropped (for a confining trap without any, its :data:`TRAP_LEVELS` lowest).
    tolerance : float
        Energy accuracy (Hartree) asked of the refinement on large grids.
    window : float
        Half-width (bohr) of the region where ``count`` states are first looked for.

    Returns
    -------
    BoundStates
        With ``complete`` True when all states with E < 0 were asked for, found, and
        converged (residual |H phi - E phi| below sqrt(tolerance) Hartree: a
        Rayleigh quotient's energy error is of order residual^2 / gap).
    """
    if count is None:
        apply_h = _apply_hamiltonian(grid, potential)
        if grid.points <= DENSE_POINTS:
            energies, vectors = _dense_bound(grid, potential)
            residuals = _residuals(apply_h, energies, vectors) if energies.size else np.zeros(0)
        else:
            from .banded_states import banded_bound  # (the large-grid path; it uses this module)

            energies, vectors, residuals = banded_bound(grid, potential, tolerance)
        complete = bool(np.all(residuals <= np.sqrt(tolerance))) and bool(np.all(energies < 0))
        return BoundStates(np.asarray(energies), _normalise(vectors, grid.spacing), grid, complete, residuals)
    sub, where = _window(grid, window)
    energies, vectors = _dense_states(sub, potential, count)
    if sub.points < grid.points:
        guess = np.zeros((grid.points, vectors.shape[1]))
        guess[where] = vectors
        energies, vectors, residuals = _refine(grid, potential, guess, tolerance)
    else:
        residuals = _residuals(_apply_hamiltonian(grid, potential), energies, vectors)
    return BoundStates(np.asarray(energies), _normalise(vectors, grid.spacing), grid, False, residuals)


def _ground_pair(grid: Grid, potential: Potential, window: float):
    """Lowest eigenpair (MRRR, only it formed) of the dense H on a window of ``grid``:
    energy (Hartree), eigenvector (unit 2-norm), the window's grid."""
    sub, _ = _window(grid, window)
    h = hamiltonian_matrix(sub, potential)
    with one_blas_thread():
        energies, vectors = _linalg().eigh(h, subset_by_index=(0, 0), driver="evr")
    return float(energies[0]), vectors[:, 0], sub


def ground_state_energy(grid: Grid, potential: Potential, window: float = FIT_WINDOW) -> float:
    """Lowest eigenvalue of H on ``grid`` (Hartree), via a dense window solve."""
    return _ground_pair(grid, potential, window)[0]


#: relative step of the central difference dV/da (its ~step^2 error slows Newton only)
_SLOPE_STEP = 1e-4
#: the fit stops at a Newton step below this fraction of the softening
FIT_RELATIVE_STEP = 1e-13
_MAX_FIT_SOLVES = 60  # then Brent's method on the energy alone


def fit_softening(
    grid: Grid,
    potential: Potential,
    ionization_potential: float,
    bracket: tuple[float, float] = (1e-3, 50.0),
    tolerance: float = 1e-10,
    guess: float | None = None,
) -> float:
    """Softening a for which the ground-state energy on ``grid`` is -Ip.

    Safeguarded Newton iteration on f(a) = E0(a) + Ip (increasing in a), its slope
    from the same solve by the Hellmann-Feynman theorem, dE0/da = <phi0| dV/da |phi0>;
    a step leaving the bracket of known signs becomes a bisection (in log a). From a
    ``guess`` (the fit on another grid) 3-4 solves, from the bracket about 10.

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
        Accuracy of E0 at the root (Hartree); met far over (a to :data:`FIT_RELATIVE_STEP`).
    guess : float, optional
        A softening near the root (bohr); the bracket is solved only if that fails.

    Returns
    -------
    float
        The softening (bohr).

    Raises
    ------
    SofteningFitError
        If Ip is out of the reach of the model on this grid, or is reached only by a
        state the grid does not resolve (its energy changes by more than
        :data:`MAX_FIT_GRID_ERROR`, relative, when the spacing is halved).
    """
    a = None
    if guess is not None and bracket[0] < guess < bracket[1]:
        a = _newton_softening(grid, potential, ionization_potential, bracket, guess, ends_known=False)
    if a is None:
        a = _bracketed_softening(grid, potential, ionization_potential, bracket)
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


def _mismatch_and_slope(grid, potential, ionization_potential, a):
    """f(a) = E0(a) + Ip (Hartree) and df/da (Hartree/bohr, Hellmann-Feynman)."""
    energy, vector, sub = _ground_pair(grid, potential.with_softening(a), FIT_WINDOW)
    h = _SLOPE_STEP * a
    dv = (potential.with_softening(a + h).value(sub.x) - potential.with_softening(a - h).value(sub.x)) / (2 * h)
    return energy + ionization_potential, float(np.dot(vector * vector, dv))


def _bracketed_softening(grid, potential, ionization_potential, bracket) -> float:
    lo, hi = bracket
    f_lo = _mismatch_and_slope(grid, potential, ionization_potential, lo)[0]
    f_hi = _mismatch_and_slope(grid, potential, ionization_potential, hi)[0]
    if f_lo > 0 or f_hi < 0:
        deepest = -(f_lo - ionization_potential)
        shallowest = -(f_hi - ionization_potential)
        raise SofteningFitError(
            f"an ionization potential of {ionization_potential:.6g} Hartree is out of reach of this model on "
            f"this grid: softenings from {lo:g} to {hi:g} bohr give {shallowest:.4g} to {deepest:.4g} Hartree "
            "(change the charge, or use a finer grid for deep states)"
        )
    a = _newton_softening(grid, potential, ionization_potential, bracket, float(np.sqrt(lo * hi)), ends_known=True)
    if a is None:
        from scipy.optimize import brentq  # (was never imported: the fallback raised NameError)
        a = float(brentq(lambda s: _mismatch_and_slope(grid, potential, ionization_potential, s)[0], lo, hi,
                         xtol=1e-13, rtol=1e-13, maxiter=200))
    return a


def _newton_softening(grid, potential, ionization_potential, bracket, a, ends_known) -> float | None:
    """Newton from ``a`` inside the bracket of known signs; None if it fails."""
    lo, hi = bracket
    sign_lo = sign_hi = ends_known  # whether f(lo) < 0 and f(hi) > 0 are established
    for _ in range(_MAX_FIT_SOLVES):
        f, slope = _mismatch_and_slope(grid, potential, ionization_potential, a)
        if f == 0.0:
            return a
        if f < 0:
            lo, sign_lo = a, True
        else:
            hi, sign_hi = a, True
        step = -f / slope if slope > 0 else np.inf
        candidate = a + step
        if not lo < candidate < hi:
            if not (sign_lo and sign_hi):
                return None  # the root may lie outside what is known: start from the bracket
            candidate = float(np.sqrt(lo * hi))
        elif abs(step) <= FIT_RELATIVE_STEP * a:
            return float(candidate)
        a = float(candidate)
    return None


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
