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
from numba import njit, prange

__all__ = ["RADII", "DEFAULT_RADIUS", "region_probabilities", "RegionRecorder", "double_ionization_momenta",
           "MOMENTUM_MASK_WIDTH"]

#: radii (bohr) at which the regions are read; the first is the one reported, the
#: others give the spread (8 bohr holds the bound states; 15 bohr is still well inside
#: the quiver amplitude of the pulses the model is run with, 20 to 60 bohr)
RADII = (10.0, 8.0, 15.0)
DEFAULT_RADIUS = RADII[0]
#: width (bohr) of the smooth edge of the double-ionization mask before the Fourier
#: transform of the momentum map (a sharp cut rings in momentum)
MOMENTUM_MASK_WIDTH = 2.0


@njit(cache=True, nogil=True, parallel=True)
def _region_sums(psi, u, starts, stops, chunks):
    """One pass over psi: per row the sums of |psi|^2 and of |psi|^2 u(x2), per column
    (in ``chunks`` row blocks, summed after) the same with u(x1), and per radius k the
    sums over the inner box [starts[k], stops[k])^2, plain and weighted by u(x1) u(x2)."""
    n = psi.shape[0]
    kk = starts.size
    rows = np.zeros(n)
    rows_u = np.zeros(n)
    cols = np.zeros((chunks, n))
    cols_u = np.zeros((chunks, n))
    box = np.zeros((chunks, kk))
    box_u = np.zeros((chunks, kk))
    size = (n + chunks - 1) // chunks
    for c in prange(chunks):
        for i in range(c * size, min(n, (c + 1) * size)):
            s = 0.0
            su = 0.0
            ui = u[i]
            for j in range(n):
                z = psi[i, j]
                d = z.real * z.real + z.imag * z.imag
                s += d
                su += d * u[j]
                cols[c, j] += d
                cols_u[c, j] += d * ui
            rows[i] = s
            rows_u[i] = su
            for k in range(kk):
                if starts[k] <= i < stops[k]:
                    b = 0.0
                    bu = 0.0
                    for j in range(starts[k], stops[k]):
                        z = psi[i, j]
                        d = z.real * z.real + z.imag * z.imag
                        b += d
                        bu += d * u[j]
                    box[c, k] += b
                    box_u[c, k] += bu * ui
    return rows, rows_u, cols.sum(axis=0), cols_u.sum(axis=0), box.sum(axis=0), box_u.sum(axis=0)


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

    Call :meth:`record` after every step with the state; it returns, for each radius of
    ``radii``, (P0, P1, P2) = norm in the region plus the norm absorbers took from it
    so far (see the module docstring).

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
        self.loss = self.axis_weight = None
        if absorber_factor is not None:
            m = np.asarray(absorber_factor, dtype=float)
            if m.shape != (n, n) or np.any(m <= 0) or np.any(m > 1):
                raise ValueError("absorber_factor must be (n, n) with values in (0, 1]")
            # layers on each axis make M = m(x1) m(x2); then the loss 1/M^2 - 1 is
            # u(x1) u(x2) - 1 with u = 1/m^2, and its region sums are two matrix-vector
            # products instead of a product array (read from the line through x2 = 0)
            line = m[:, int(np.argmin(np.abs(self.x)))]
            if np.allclose(m, line[:, None] * line[None, :], rtol=1e-12, atol=0):
                self.axis_weight = 1.0 / line**2
            else:
                self.loss = 1.0 / m**2 - 1.0
        self.absorbed = np.zeros((len(self.radii), 3))
        self._ones = np.ones(n)
        self._starts = np.array([i.start for i in self.inner], dtype=np.int64)
        self._stops = np.array([i.stop for i in self.inner], dtype=np.int64)
        self._chunks = 2  # one block of rows per core (the machine's two)
        self._d = self._t = None

    def _density(self, psi):  # the general path only (an absorber that is not per axis)
        if self._d is None:
            self._d, self._t = np.empty(psi.shape), np.empty(psi.shape)

        d, t = self._d, self._t
        np.multiply(psi.real, psi.real, out=d)
        np.multiply(psi.imag, psi.imag, out=t)
        d += t
        return d

    def record(self, psi: np.ndarray, after_step: bool = True) -> np.ndarray:
        """The (P0, P1, P2) of each radius, shape (len(radii), 3).

        ``psi`` is the state just after a step (whose absorber is counted), or, with
        ``after_step=False``, a state no absorber has acted on yet (the initial one).
        """
        w = self.weight
        after_step = after_step and (self.loss is not None or self.axis_weight is not None)
        if self.loss is None:  # no absorber, or layers on each axis: one fused pass
            u = self.axis_weight if self.axis_weight is not None else self._ones
            rows, rows_u, cols, cols_u, box, box_u = _region_sums(psi, u, self._starts, self._stops, self._chunks)
            rows, cols, box = rows * w, cols * w, box * w
            boxes = list(box)
            if after_step:
                t_rows, t_cols = rows_u * u * w - rows, cols_u * u * w - cols
                t_box = list(box_u * w - box)
        else:
            d = self._density(psi)
            rows, cols = d.sum(axis=1) * w, d.sum(axis=0) * w
            boxes = [float(d[i, i].sum()) * w for i in self.inner]
            if after_step:
                taken = d * self.loss
                t_rows, t_cols = taken.sum(axis=1) * w, taken.sum(axis=0) * w
                t_box = [float(taken[i, i].sum()) * w for i in self.inner]
        total = float(rows.sum())
        if after_step:
            t_total = float(t_rows.sum())
        out = np.empty((len(self.radii), 3))
        for k, inner in enumerate(self.inner):
            out[k] = _split(rows, cols, boxes[k], total, inner)
            if after_step:
                self.absorbed[k] += _split(t_rows, t_cols, t_box[k], t_total, inner)
        return out + self.absorbed


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
