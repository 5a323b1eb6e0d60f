"""The uniform Fourier grid on which wavefunctions live, of one or more axes.

Each axis is periodic with ``points`` samples a distance ``spacing`` apart, centred on
0: ``x_j = (j - points//2) * spacing``. Its momentum grid is that of the discrete
Fourier transform, ``k = 2 pi fftfreq(points, spacing)``, so that the largest momentum
represented is ``pi / spacing`` (a.u.).

A 1-D grid is ``Grid(points, spacing)`` with an int and a float, and has the 1-D
conveniences ``x``, ``k``, ``length``, ``half_width``. A grid of several axes is
``Grid((n1, n2), (dx1, dx2))`` (or ``Grid.product(g1, g2)``); arrays on it have shape
``grid.shape`` in C order, axis 0 first, and its coordinates are
``grid.positions(axis)`` / ``grid.momenta(axis)`` (shaped to broadcast).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

__all__ = ["Grid", "fast_fft_size", "MAX_POINTS"]

#: largest grid a run may use (a complex wavefunction of 2^22 points is 64 MiB)
MAX_POINTS = 2**22


def fast_fft_size(n: int) -> int:
    """Smallest integer >= n whose prime factors are 2, 3 and 5, and that is even.

    Beyond :data:`MAX_POINTS` no grid is made, so ``n`` is only rounded up to even.
    """
    n = max(int(n), 2)
    if n > MAX_POINTS:
        return n + n % 2
    while True:
        m = n
        for p in (2, 3, 5):
            while m % p == 0:
                m //= p
        if m == 1 and n % 2 == 0:
            return n
        n += 1


@dataclass(frozen=True)
class Grid:
    """A uniform periodic grid of one or more axes.

    Parameters
    ----------
    points : int or tuple of int
        Number of grid points (even) per axis; an int makes a 1-D grid.
    spacing : float or tuple of float
        Grid spacing per axis (bohr); a float is used on every axis.
    """

    points: int | tuple
    spacing: float | tuple

    def __post_init__(self):
        pts = (self.points,) if np.ndim(self.points) == 0 else tuple(self.points)
        dxs = (self.spacing,) * len(pts) if np.ndim(self.spacing) == 0 else tuple(self.spacing)
        if not pts or len(dxs) != len(pts):
            raise ValueError(f"grid points {self.points} and spacing {self.spacing} name different numbers of axes")
        for n in pts:
            if int(n) != n or n < 4 or n % 2:
                raise ValueError(f"grid points must be an even integer >= 4, got {n}")
        for dx in dxs:
            if not (np.isfinite(dx) and dx > 0):
                raise ValueError(f"grid spacing must be finite and positive, got {dx}")
        # normalise: one axis is an int and a float, several are tuples (hashable, comparable)
        if len(pts) == 1:
            if np.ndim(self.points) != 0 or np.ndim(self.spacing) != 0:
                object.__setattr__(self, "points", int(pts[0]))
                object.__setattr__(self, "spacing", float(dxs[0]))
        else:
            object.__setattr__(self, "points", tuple(int(n) for n in pts))
            object.__setattr__(self, "spacing", tuple(float(d) for d in dxs))

    @classmethod
    def product(cls, *axes: "Grid") -> "Grid":
        """The grid whose axes are those of the given 1-D grids, in order."""
        return cls(tuple(g.points for g in axes), tuple(g.spacing for g in axes))

    # ---------------------------------------------------------------- N axes
    @property
    def shape(self) -> tuple[int, ...]:
        """Points per axis."""
        return (self.points,) if np.ndim(self.points) == 0 else self.points

    @property
    def ndim(self) -> int:
        """Number of axes."""
        return 1 if np.ndim(self.points) == 0 else len(self.points)

    @property
    def spacings(self) -> tuple[float, ...]:
        """Spacing per axis (bohr)."""
        return (self.spacing,) if np.ndim(self.spacing) == 0 else tuple(self.spacing)

    @property
    def size(self) -> int:
        """Total number of grid points."""
        return int(np.prod(self.shape))

    @property
    def volume_element(self) -> float:
        """Product of the spacings (bohr^ndim): the weight of each point in an integral."""
        return float(np.prod(self.spacings))

    def axis(self, a: int) -> "Grid":
        """The 1-D grid of axis ``a``."""
        return Grid(self.shape[a], self.spacings[a])

    def _broadcast(self, values, a):
        shape = [1] * self.ndim
        shape[a] = self.shape[a]
        return values.reshape(shape)

    def positions(self, a: int = 0) -> np.ndarray:
        """Positions along axis ``a`` (bohr), shaped to broadcast against ``shape``."""
        return self._broadcast(self.axis(a).x, a)

    def momenta(self, a: int = 0) -> np.ndarray:
        """Momenta along axis ``a`` in FFT order (a.u.), shaped to broadcast."""
        return self._broadcast(self.axis(a).k, a)

    def kinetic_energy(self) -> np.ndarray:
        """sum_a k_a^2/2 in FFT order: the Fourier-grid kinetic operator's diagonal (Hartree)."""
        if self.ndim == 1:
            return 0.5 * self.k**2
        total = np.zeros(self.shape)
        for a in range(self.ndim):
            total = total + 0.5 * self.momenta(a) ** 2
        return total

    def integrate(self, values) -> float:
        """Rectangle-rule integral over the grid (spectrally exact for periodic data)."""
        if self.ndim == 1:
            return float(np.sum(values) * self.spacing)
        return float(np.sum(values) * self.volume_element)

    # ------------------------------------------------------ 1-D conveniences
    def _one_axis(self, what):
        if self.ndim != 1:
            raise AttributeError(f"{what} is defined for a 1-D grid; this grid has {self.ndim} axes "
                                 f"(use positions(axis), momenta(axis), axis(a))")

    @cached_property
    def x(self) -> np.ndarray:
        """Positions (bohr), shape (points,); 1-D grids only."""
        self._one_axis("x")
        return (np.arange(self.points) - self.points // 2) * self.spacing

    @cached_property
    def k(self) -> np.ndarray:
        """Momenta in FFT order (a.u.), shape (points,); 1-D grids only."""
        self._one_axis("k")
        return 2 * np.pi * np.fft.fftfreq(self.points, self.spacing)

    @property
    def length(self) -> float:
        """Length of the periodic box (bohr); 1-D grids only."""
        self._one_axis("length")
        return self.points * self.spacing

    @property
    def half_width(self) -> float:
        """Distance from the centre to the edge of the box (bohr); 1-D grids only."""
        self._one_axis("half_width")
        return self.points // 2 * self.spacing

    @property
    def half_widths(self) -> tuple[float, ...]:
        """Distance from the centre to the edge along each axis (bohr)."""
        return tuple(n // 2 * dx for n, dx in zip(self.shape, self.spacings))

    @property
    def max_momentum(self) -> float:
        """Largest momentum the grid represents, pi / dx (a.u.); on several axes, of the coarsest."""
        return np.pi / max(self.spacings)
