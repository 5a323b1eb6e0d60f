"""In-place FFTW plans on aligned arrays of any shape (through pyfftw), made once per grid.

Plans are cached per process; :func:`export_wisdom` and :func:`import_wisdom` let the
caller (the command-line layer) keep FFTW's wisdom between runs, so that measuring the
best plan is paid once per machine.

The stored form is data only, never code: JSON ``{"format": "tdse1d-fftw-wisdom",
"version": 1, "wisdom": [base64, ...]}`` holding the byte strings FFTW exports (one per
precision). Reading checks every field's type before anything reaches FFTW.
"""

from __future__ import annotations

import base64
import binascii
import json
import sys


#: optional imports of ``pyfftw.interfaces`` that only its Dask and scipy interfaces need
_INTERFACE_IMPORTS = ("dask.array.fft", "scipy.fftpack")


def _import_pyfftw():
    """pyfftw without its Dask and scipy interfaces: ``import pyfftw`` loads
    pyfftw.interfaces, which imports ``dask.array`` when Dask is installed (0.2-0.6 s of
    start-up) and ``scipy.fftpack`` (scipy.fft and scipy.special, 0.1-0.3 s); only the
    FFTW objects are used here. Marking those modules as absent while pyfftw loads makes
    the optional imports fail at once; the marks are removed afterwards, so Dask and
    scipy themselves are untouched (``pyfftw.interfaces.scipy_fft`` can still be
    imported by name)."""
    if "pyfftw" in sys.modules:
        import pyfftw

        return pyfftw
    marked = [name for name in _INTERFACE_IMPORTS if name not in sys.modules]
    for name in marked:
        sys.modules[name] = None
    try:
        import pyfftw
    finally:
        for name in marked:
            if sys.modules.get(name, 0) is None:
                del sys.modules[name]
    return pyfftw


pyfftw = _import_pyfftw()

__all__ = ["InPlaceFFT", "export_wisdom", "import_wisdom", "WisdomError", "WISDOM_FORMAT", "WISDOM_VERSION"]

WISDOM_FORMAT = "tdse1d-fftw-wisdom"
WISDOM_VERSION = 1
_WISDOM_MAX_BYTES = 16 * 2**20  # FFTW wisdom is a few kB per size; more is not wisdom


class WisdomError(ValueError):
    """A stored wisdom blob that is not ours, of another version, or malformed."""


class InPlaceFFT:
    """Forward and backward FFTW transforms over every axis of one aligned complex array, in place.

    Parameters
    ----------
    points : int or tuple of int
        Transform length, or the array's shape (``grid.shape``) for a transform over
        all its axes.
    effort : str
        FFTW planner flag: ``"FFTW_MEASURE"`` (default) or ``"FFTW_ESTIMATE"``.
    threads : int
        FFTW threads (default 1). One thread is fastest for 1-D grids of the sizes used
        here; a 2-D grid gains from using every core.

    Attributes
    ----------
    data : ndarray of complex128
        The aligned array both transforms act on, of shape ``points``. ``backward`` is
        *not* normalised (the caller folds 1/size into a phase it multiplies anyway).
    """

    def __init__(self, points, effort: str = "FFTW_MEASURE", threads: int = 1):
        shape = (int(points),) if isinstance(points, (int,)) or getattr(points, "ndim", 1) == 0 else tuple(points)
        if int(threads) != threads or threads < 1:
            raise ValueError(f"FFT threads must be a positive integer, got {threads}")
        self.data = pyfftw.empty_aligned(shape if len(shape) > 1 else shape[0], dtype="complex128")
        self.data[:] = 0
        flags = (effort, "FFTW_DESTROY_INPUT")
        axes = tuple(range(len(shape)))
        self._forward = pyfftw.FFTW(self.data, self.data, axes=axes, direction="FFTW_FORWARD", flags=flags,
                                    threads=int(threads))
        self._backward = pyfftw.FFTW(self.data, self.data, axes=axes, direction="FFTW_BACKWARD", flags=flags,
                                     threads=int(threads))

    def forward(self):
        """data <- FFT(data)."""
        self._forward.execute()

    def backward(self):
        """data <- N * IFFT(data) (unnormalised)."""
        self._backward.execute()


def export_wisdom() -> bytes:
    """FFTW's accumulated wisdom, as JSON bytes to store (see the module notes)."""
    parts = pyfftw.export_wisdom()
    doc = {"format": WISDOM_FORMAT, "version": WISDOM_VERSION,
           "wisdom": [base64.b64encode(bytes(p)).decode("ascii") for p in parts]}
    return json.dumps(doc).encode("utf-8")


def decode_wisdom(blob: bytes) -> tuple[bytes, ...]:
    """The FFTW byte strings of a blob written by :func:`export_wisdom`.

    Raises
    ------
    WisdomError
        If the blob is not such a document (too large, not JSON, another format or
        version, fields of the wrong type, bad base64).
    """
    if len(blob) > _WISDOM_MAX_BYTES:
        raise WisdomError(f"{len(blob)} bytes, more than wisdom ever takes")
    try:
        doc = json.loads(blob.decode("utf-8"))
    except (UnicodeDecodeError, ValueError):
        raise WisdomError("not a JSON document") from None
    if not isinstance(doc, dict) or doc.get("format") != WISDOM_FORMAT:
        raise WisdomError("not tdse1d FFTW wisdom")
    if doc.get("version") != WISDOM_VERSION:
        raise WisdomError(f"format version {doc.get('version')!r}, this program reads {WISDOM_VERSION}")
    parts = doc.get("wisdom")
    if not isinstance(parts, list) or not parts or not all(isinstance(p, str) for p in parts):
        raise WisdomError("the wisdom field is not a list of strings")
    try:
        return tuple(base64.b64decode(p.encode("ascii"), validate=True) for p in parts)
    except (binascii.Error, UnicodeEncodeError):
        raise WisdomError("bad base64 in the wisdom field") from None


def import_wisdom(blob: bytes) -> bool:
    """Load wisdom saved by :func:`export_wisdom`.

    Returns
    -------
    bool
        Whether FFTW accepted all of it (wisdom of another FFTW build may be refused,
        which is harmless: plans are measured again).

    Raises
    ------
    WisdomError
        If the blob is not tdse1d wisdom (see :func:`decode_wisdom`).
    """
    parts = decode_wisdom(blob)
    try:
        accepted = pyfftw.import_wisdom(parts)
    except (TypeError, ValueError, IndexError) as exc:
        raise WisdomError(f"FFTW refused it ({exc})") from None
    return bool(all(accepted))

