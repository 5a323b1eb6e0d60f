"""The uniform Fourier grid on which wavefunctions live.

The grid is periodic with ``points`` samples a distance ``spacing`` apart, centred on
x = 0: ``x_j = (j - points//2) * spacing``. Its momentum grid is that of the discrete
Fourier transform, ``k = 2 pi fftfreq(points, spacing)``, so that the largest momentum
represented is ``pi / spacing`` (a.u.).
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
    """A uniform periodic grid.

    Parameters
    ----------
    points : int
        Number of grid points (even).
    spacing : float
        Grid spacing dx in bohr.
    """

    points: int
    spacing: float

    def __post_init__(self):
        if int(self.points) != self.points or self.points < 4 or self.points % 2:
            raise ValueError(f"grid points must be an even integer >= 4, got {self.points}")
        if not (np.isfinite(self.spacing) and self.spacing > 0):
            raise ValueError(f"grid spacing must be finite and positive, got {self.spacing}")

    @cached_property
    def x(self) -> np.ndarray:
        """Positions (bohr), shape (points,)."""
        return (np.arange(self.points) - self.points // 2) * self.spacing

    @cached_property
    def k(self) -> np.ndarray:
        """Momenta in FFT order (a.u.), shape (points,)."""
        return 2 * np.pi * np.fft.fftfreq(self.points, self.spacing)

    @property
    def length(self) -> float:
        """Length of the periodic box (bohr)."""
        return self.points * self.spacing

    @property
    def half_width(self) -> float:
        """Distance from the centre to the edge of the box (bohr)."""
        return self.points // 2 * self.spacing

    @property
    def max_momentum(self) -> float:
        """Largest momentum the grid represents, pi / dx (a.u.)."""
        return np.pi / self.spacing

    def kinetic_energy(self) -> np.ndarray:
        """k^2/2 in FFT order: the Fourier-grid kinetic operator's diagonal (Hartree)."""
        return 0.5 * self.k**2

    def integrate(self, values) -> float:
        """Rectangle-rule integral over the grid (spectrally exact for periodic data)."""
        return float(np.sum(values) * self.spacing)
