"""Time windows applied to a dipole signal before its Fourier transform, registered by
name in :data:`WINDOWS`.
"""

from __future__ import annotations

import math

import numpy as np

from ..registry import registrar


# The windows are computed here with numpy, by the same operations as scipy.signal's
# periodic ("sym=False") windows, so the weights agree bit for bit (tested against
# scipy.signal in tests/test_spectra.py); importing scipy.signal would cost a run a
# quarter of a second of start-up.


def _cosine_sum(n: int, coefficients) -> np.ndarray:
    """Periodic cosine-sum window ``sum_k a_k cos(k phi)``, ``phi`` over [-pi, pi) in n steps.

    Parameters
    ----------
    n : int
        Number of samples (>= 0).
    coefficients : sequence of float
        The a_k, k = 0, 1, ...

    Returns
    -------
    numpy.ndarray
        The n weights (dimensionless).
    """
    if n <= 1:
        return np.ones(n)
    phase = np.linspace(-np.pi, np.pi, n + 1)  # one sample more, dropped: periodic
    w = np.zeros(n + 1)
    for k, a in enumerate(coefficients):
        w += a * np.cos(k * phase)
    return w[:-1]


def _tapered_cosine(n: int, taper: float) -> np.ndarray:
    """Periodic Tukey window of n samples with the fraction ``taper`` inside its tapers."""
    if n <= 1 or taper <= 0:
        return np.ones(n)
    if taper >= 1.0:
        return _cosine_sum(n, (0.5, 0.5))
    m = n + 1
    j = np.arange(0, m, dtype=np.float64)
    width = int(math.floor(taper * (m - 1) / 2.0))
    j1, j2, j3 = j[0:width + 1], j[width + 1:m - width - 1], j[m - width - 1:]
    w1 = 0.5 * (1 + np.cos(np.pi * (-1 + 2.0 * j1 / taper / (m - 1))))
    w3 = 0.5 * (1 + np.cos(np.pi * (-2.0 / taper + 1 + 2.0 * j3 / taper / (m - 1))))
    return np.concatenate((w1, np.ones(j2.shape), w3))[:-1]


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
        return _cosine_sum(n, (0.5, 0.5))


@register_window("blackman")
class Blackman(Window):
    """Blackman window: lower side lobes (-58 dB) than Hann at the price of wider lines."""

    def weights(self, n):
        # the three-term sum rounds to -1e-17 at the ends
        return np.clip(_cosine_sum(n, (0.42, 0.50, 0.08)), 0.0, 1.0)


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
        return _tapered_cosine(n, self.taper)


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
