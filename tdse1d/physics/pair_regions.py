"""Neutral, singly and doubly ionized atom from regions of the (x1, x2) plane, and the
correlated momenta of the double-ionization part.

The plane is cut by |x| = R on each axis (common practice for the 1-D two-electron
atom, e.g. Lein, Gross and Engel, Phys. Rev. Lett. 85, 4707 (2000), from memory):

* neutral: |x1| < R and |x2| < R (both electrons near the nucleus);
* singly ionized: exactly one |x_i| >= R;
* doubly ionized: |x1| >= R and |x2| >= R.

R must hold the bound states (the neutral's outer electron decays as exp(-sqrt(2 Ip1) |x|),
1e-9 of its density beyond 8 bohr for the standard helium model, and the ion's
electron faster) and be small beside the distance the ionized electrons travel. The
readings are taken at several radii at once (:data:`RADII`) so that a result states
its spread over them.

With absorbing layers, the norm an absorber takes from a point is attributed to the
region of that point: a step ends with the absorber's factor M (the kick before it is
unimodular), so the density before it was |psi|^2 / M^2 and the step removed
|psi|^2 (1/M^2 - 1) there. An electron absorbed while the other is bound ends a
single ionization: a later ionization of the second electron is then not counted
(the known limit of absorbing boundaries for correlated ionization).
"""

from __future__ import annotations

import numpy as np
from numba import njit

__all__ = ["RADII", "DEFAULT_RADIUS", "region_probabilities", "RegionRecorder", "double_ionization_momenta",
           "MOMENTUM_MASK_WIDTH", "split_row_pieces"]

#: radii (bohr) at which the regions are read; the first is the one reported, the
#: others give the spread (8 bohr holds the bound states; 15 bohr is still well inside
#: the quiver amplitude of the pulses the model is run with, 20 to 60 bohr)
RADII = (10.0, 8.0, 15.0)
DEFAULT_RADIUS = RADII[0]
#: width (bohr) of the smooth edge of the double-ionization mask before the Fourier
#: transform of the momentum map (a sharp cut rings in momentum)
MOMENTUM_MASK_WIDTH = 2.0


@njit(cache=True, nogil=True)
def split_row_pieces(pieces, inside, starts, stops, weight, out):
    """out[k] += weight * (P0, P1, P2) at radius k from per-row sums over column pieces.

    ``pieces[i, p]`` is the sum of a density (or of the norm absorbed) over row i and
    the columns of piece p; ``inside[p, k]`` says whether piece p lies in the inner
    range [starts[k], stops[k]) of radius k. A row inside that range puts its inner
    columns in the neutral region and the rest in single ionization; a row outside,
    its inner columns in single ionization and the rest in double ionization.
    """
    n, count = pieces.shape
    for k in range(starts.size):
        p0 = 0.0
        p1 = 0.0
        p2 = 0.0
        for i in range(n):
            inner = 0.0
            total = 0.0
            for q in range(count):
                total += pieces[i, q]
                if inside[q, k]:
                    inner += pieces[i, q]
            if starts[k] <= i < stops[k]:
                p0 += inner
                p1 += total - inner
            else:
                p1 += inner
                p2 += total - inner
        out[k, 0] += weight * p0
        out[k, 1] += weight * p1
        out[k, 2] += weight * p2


def _inner(x: np.ndarray, radius: float) -> slice:
    """Index range of |x| < radius on a uniform ascending axis."""
    inside = np.flatnonzero(np.abs(x) < radius)
    if inside.size == 0:
        return slice(0, 0)
    return slice(int(inside[0]), int(inside[-1]) + 1)


def _split(rows: np.ndarray, cols: np.ndarray, box: float, total: float, inner: slice):
    """(P0, P1, P2) from the row and column sums of a density and its inner box."""
    p0 = box
    p1 = (rows[inner].sum() - box) + (cols[inner].sum() - box)
    return p0, p1, total - p0 - p1


def region_probabilities(density: np.ndarray, x: np.ndarray, spacing: float, radius: float = DEFAULT_RADIUS):
    """(neutral, single, double) probabilities of a density on the square grid.

    Parameters
    ----------
    density : ndarray, shape (n, n)
        |psi(x1, x2)|^2 (1/bohr^2).
    x : ndarray, shape (n,)
        Coordinates of each axis (bohr).
    spacing : float
        Grid spacing (bohr).
    radius : float
        R (bohr), > 0.

    Returns
    -------
    tuple of float
        (P0, P1, P2), dimensionless; their sum is the norm.
    """
    density = np.asarray(density, dtype=float)
    if density.ndim != 2 or density.shape != (x.size, x.size):
        raise ValueError(f"density must be square with the axis' {x.size} points, got {density.shape}")
    if not radius > 0:
        raise ValueError(f"radius must be positive, got {radius}")
    inner = _inner(x, radius)
    w = spacing**2
    rows, cols = density.sum(axis=1) * w, density.sum(axis=0) * w
    return _split(rows, cols, float(density[inner, inner].sum()) * w, float(rows.sum()), inner)


class RegionRecorder:
    """Region probabilities of a propagating state, with the absorbed norm attributed.

    After every step call :meth:`absorb` with the state (it counts what that step's
    absorber took from each region); :meth:`read` returns, for each radius of
    ``radii``, (P0, P1, P2) = norm in the region plus the norm absorbers took from it
    so far (see the module docstring). :meth:`record` does both.

    The columns of a row are cut into pieces at the inner ranges' edges
    (:attr:`bounds`, :attr:`inside`), so that one pass of per-row piece sums gives
    every radius (:func:`split_row_pieces`); the compiled 2-D loop
    (:mod:`tdse1d.physics.plane_loop`) takes the same sums in its last pass of a step.
    The absorbed norm |psi|^2 (1/M^2 - 1) is summed over the runs of each row where
    M < 1 only (:attr:`segments`).

    Parameters
    ----------
    x : ndarray, shape (n,)
        Coordinates of each axis (bohr).
    spacing : float
        Grid spacing (bohr).
    absorber_factor : ndarray, shape (n, n), optional
        The per-step factor M in (0, 1] (None: no absorber).
    radii : tuple of float
        Radii R (bohr).
    """

    def __init__(self, x, spacing, absorber_factor=None, radii=RADII):
        self.x = np.asarray(x, dtype=float)
        self.weight = float(spacing) ** 2
        self.radii = tuple(float(r) for r in radii)
        self.inner = [_inner(self.x, r) for r in self.radii]
        n = self.x.size
        self.starts = np.array([i.start for i in self.inner], dtype=np.int64)
        self.stops = np.array([i.stop for i in self.inner], dtype=np.int64)
        #: column pieces: [bounds[p], bounds[p + 1]), and whether each lies in radius k's range
        self.bounds = np.unique(np.concatenate([[0, n], self.starts, self.stops])).astype(np.int64)
        lo, hi = self.bounds[:-1, None], self.bounds[1:, None]
        self.inside = (lo >= self.starts[None, :]) & (hi <= self.stops[None, :])
        self.loss = None
        self.segments = (np.zeros(n + 1, np.int64), np.zeros(0, np.int64), np.zeros(0, np.int64),
                         np.zeros(0, np.int64))
        if absorber_factor is not None:
            m = np.asarray(absorber_factor, dtype=float)
            if m.shape != (n, n) or np.any(m <= 0) or np.any(m > 1):
                raise ValueError("absorber_factor must be (n, n) with values in (0, 1]")
            self.loss = 1.0 / m**2 - 1.0
            self.segments = _loss_segments(self.loss > 0, self.bounds)
        self.absorbed = np.zeros((len(self.radii), 3))

    def row_pieces(self, density: np.ndarray) -> np.ndarray:
        """Per-row sums of ``density`` (n, n) over the column pieces, shape (n, pieces)."""
        return np.add.reduceat(density, self.bounds[:-1], axis=1)

    def _regions(self, pieces) -> np.ndarray:
        out = np.zeros((len(self.radii), 3))
        split_row_pieces(np.ascontiguousarray(pieces), self.inside, self.starts, self.stops, self.weight, out)
        return out

    def absorb(self, psi: np.ndarray) -> None:
        """Count the norm the absorber of the step that ended in ``psi`` took, by region."""
        if self.loss is not None:
            self.absorbed += self._regions(self.row_pieces((psi.real**2 + psi.imag**2) * self.loss))

    def read(self, psi: np.ndarray) -> np.ndarray:
        """(P0, P1, P2) of each radius, shape (len(radii), 3): the state's and what was absorbed."""
        return self._regions(self.row_pieces(psi.real**2 + psi.imag**2)) + self.absorbed

    def record(self, psi: np.ndarray, after_step: bool = True) -> np.ndarray:
        """:meth:`absorb` (unless ``after_step`` is False: a state no absorber has acted
        on, such as the initial one), then :meth:`read`."""
        if after_step:
            self.absorb(psi)
        return self.read(psi)


def _loss_segments(absorbing: np.ndarray, bounds: np.ndarray):
    """The runs of True in each row of ``absorbing``, cut at the piece ``bounds``:
    (row pointer (n + 1), first column, end column, piece index), a row's runs at
    [pointer[i], pointer[i + 1])."""
    n = absorbing.shape[0]
    piece_of = np.searchsorted(bounds, np.arange(absorbing.shape[1]), side="right") - 1
    pointer, first, end = [0], [], []
    for i in range(n):
        row = np.concatenate([[False], absorbing[i], [False]])
        edges = np.flatnonzero(row[1:] != row[:-1])
        for lo, hi in zip(edges[::2], edges[1::2]):
            inner = [lo] + [int(c) for c in bounds[(bounds > lo) & (bounds < hi)]] + [hi]
            first += inner[:-1]
            end += inner[1:]
        pointer.append(len(first))
    first = np.array(first, dtype=np.int64)
    return (np.array(pointer, dtype=np.int64), first, np.array(end, dtype=np.int64),
            piece_of[first].astype(np.int64) if first.size else np.zeros(0, np.int64))


def double_ionization_momenta(psi: np.ndarray, x: np.ndarray, spacing: float, radius: float = DEFAULT_RADIUS,
                              edge: float = MOMENTUM_MASK_WIDTH):
    """Correlated momentum distribution (p1, p2) of the double-ionization part of a state.

    The state is multiplied by a mask that is 1 where |x1| and |x2| are both beyond
    R + edge and 0 where either is within R, smooth (sin^2) in between, and Fourier
    transformed. Read after the pulse (A = 0), where the canonical momentum is the
    drift momentum in both gauges.

    Parameters
    ----------
    psi : ndarray, shape (n, n), complex
    x : ndarray, shape (n,)
        Coordinates of each axis (bohr).
    spacing : float
        Grid spacing (bohr).
    radius, edge : float
        R and the width of the mask's smooth edge (bohr).

    Returns
    -------
    momenta : ndarray, shape (n,)
        Momentum axis, ascending (a.u.).
    distribution : ndarray, shape (n, n)
        |psi(p1, p2)|^2 (a.u.), normalised so that its sum times dp^2 is the masked
        state's norm.
    """
    psi = np.asarray(psi)
    n = x.size
    if psi.shape != (n, n):
        raise ValueError(f"psi must be ({n}, {n}), got {psi.shape}")
    s = np.clip((np.abs(x) - radius) / edge, 0.0, 1.0)
    mask = np.sin(0.5 * np.pi * s) ** 2
    amplitude = np.fft.fftshift(np.fft.fft2(psi * mask[:, None] * mask[None, :]))
    k = np.fft.fftshift(2 * np.pi * np.fft.fftfreq(n, spacing))
    dk = 2 * np.pi / (n * spacing)
    # Parseval: sum |F|^2 = n^2 sum |psi|^2, so |F|^2 dx^2 / (n^2 dk^2) integrates to the norm
    return k, np.abs(amplitude) ** 2 * spacing**2 / (n**2 * dk**2)
