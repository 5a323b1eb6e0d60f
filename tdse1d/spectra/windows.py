"""Time windows applied to a dipole signal before its Fourier transform, registered by
name in :data:`WINDOWS`.
"""

from __future__ import annotations

import numpy as np
from scipy.signal import windows as _scipy_windows

from ..registry import registrar


# --------------------------------------------------------------------------- windows

WINDOWS: dict[str, type["Window"]] = {}


register_window = registrar(WINDOWS)


class Window:
    """Base class of time windows applied before a Fourier transform.

    Contract for an implementer: the constructor takes no required argument (the
    registry builds the default by calling the class), and ``weights(n)`` returns the
    ``n`` samples ``w(j / n)``, j = 0 .. n-1, of a shape w(u) on [0, 1] with
    ``0 <= w <= 1``, ``w(u) = w(1 - u)`` and ``w(1/2) = 1`` (a signal at the centre of
    the record keeps its height). The record of n samples is taken to span ``n dt``, as
    the discrete Fourier transform does ("DFT-even" windows; F. J. Harris, Proc. IEEE 66,
    51 (1978), from memory), so the window is the same function of time whatever the
    sampling step.
    """

    name = "?"

    def weights(self, n: int) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError


@register_window("hann")
class Hann(Window):
    """Hann window ``w(u) = sin^2(pi u)``, the default.

    Its side lobes fall as 1/w^3, which keeps the leakage of the strong low harmonics
    from burying the plateau; common practice for harmonic spectra.
    """

    def weights(self, n):
        return _scipy_windows.hann(n, sym=False)


@register_window("blackman")
class Blackman(Window):
    """Blackman window: lower side lobes (-58 dB) than Hann at the price of wider lines."""

    def weights(self, n):
        # the three-term sum rounds to -1e-17 at the ends
        return np.clip(_scipy_windows.blackman(n, sym=False), 0.0, 1.0)


@register_window("tukey")
class Tukey(Window):
    """Tukey (tapered cosine) window: flat in the middle, cosine tapers at the ends.

    Parameters
    ----------
    taper : float
        Fraction of the record inside the two tapers together (0 is rectangular, 1 is
        Hann). Default 0.1: 5 % of the record is tapered at each end, so the whole pulse
        keeps its weight when it fills the record.
    """

    def __init__(self, taper: float = 0.1):
        taper = float(taper)
        if not 0.0 <= taper <= 1.0:
            raise ValueError(f"Tukey taper must lie in [0, 1], got {taper}")
        self.taper = taper

    def weights(self, n):
        return _scipy_windows.tukey(n, alpha=self.taper, sym=False)


@register_window("none")
class Rectangular(Window):
    """No window (all weights 1); use when the signal already vanishes at both ends."""

    def weights(self, n):
        return np.ones(n)


def _window(window) -> Window:
    if isinstance(window, Window):
        return window
    if isinstance(window, str) and window in WINDOWS:
        return WINDOWS[window]()
    raise ValueError(f"unknown window {window!r}; choose one of {sorted(WINDOWS)} or pass a Window")
