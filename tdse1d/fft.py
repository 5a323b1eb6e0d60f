"""In-place FFTW plans on aligned arrays (through pyfftw), made once per grid size.

Plans are cached per process; :func:`export_wisdom` and :func:`import_wisdom` let the
caller (the command-line layer) keep FFTW's wisdom between runs, so that measuring the
best plan is paid once per machine.
"""

from __future__ import annotations

import pickle

import pyfftw

__all__ = ["InPlaceFFT", "export_wisdom", "import_wisdom"]


class InPlaceFFT:
    """Forward and backward FFTW transforms of one aligned complex array, in place.

    Parameters
    ----------
    points : int
        Transform length.
    effort : str
        FFTW planner flag: ``"FFTW_MEASURE"`` (default) or ``"FFTW_ESTIMATE"``.

    Attributes
    ----------
    data : ndarray of complex128
        The aligned array both transforms act on. ``backward`` is *not* normalised
        (the caller folds 1/N into a phase it multiplies anyway).
    """

    def __init__(self, points: int, effort: str = "FFTW_MEASURE"):
        self.data = pyfftw.empty_aligned(points, dtype="complex128")
        self.data[:] = 0
        flags = (effort, "FFTW_DESTROY_INPUT")
        self._forward = pyfftw.FFTW(self.data, self.data, direction="FFTW_FORWARD", flags=flags, threads=1)
        self._backward = pyfftw.FFTW(self.data, self.data, direction="FFTW_BACKWARD", flags=flags, threads=1)

    def forward(self):
        """data <- FFT(data)."""
        self._forward.execute()

    def backward(self):
        """data <- N * IFFT(data) (unnormalised)."""
        self._backward.execute()


def export_wisdom() -> bytes:
    """FFTW's accumulated wisdom, as bytes to store."""
    return pickle.dumps(pyfftw.export_wisdom())


def import_wisdom(blob: bytes) -> None:
    """Load wisdom saved by :func:`export_wisdom` (ignored if unreadable)."""
    try:
        pyfftw.import_wisdom(pickle.loads(blob))
    except Exception:  # stale or foreign wisdom is harmless to drop
        pass

