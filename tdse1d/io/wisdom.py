"""FFTW wisdom kept between runs in the user's cache directory (I/O layer).

Measuring the fastest FFT plan for a size takes a moment; the wisdom FFTW gathers is
saved under ``$XDG_CACHE_HOME/tdse1d`` (default ``~/.cache/tdse1d``) and loaded by the
next run. Set ``TDSE1D_NO_WISDOM=1`` to neither read nor write it.

The file (``fftw_wisdom.json``) holds data only (:func:`tdse1d.physics.fft.export_wisdom`); a
file that is not valid wisdom is ignored with a warning and replaced on exit. Files of
older versions (``fftw_wisdom.pickle``) are never read: unpickling runs code.
"""

from __future__ import annotations

import contextlib
import os
import warnings
from pathlib import Path

from ..physics.fft import WisdomError, export_wisdom, import_wisdom

__all__ = ["wisdom_path", "fftw_wisdom", "WisdomWarning"]


class WisdomWarning(UserWarning):
    """The stored FFTW wisdom was unusable and is ignored."""


def wisdom_path() -> Path:
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "tdse1d" / "fftw_wisdom.json"


@contextlib.contextmanager
def fftw_wisdom():
    """Load the saved wisdom on entry and save the enlarged wisdom on exit."""
    if os.environ.get("TDSE1D_NO_WISDOM"):
        yield
        return
    path = wisdom_path()
    with contextlib.suppress(OSError):
        blob = path.read_bytes()
        try:
            import_wisdom(blob)
        except WisdomError as exc:
            warnings.warn(f"ignoring the FFTW wisdom in {path} ({exc}); it will be replaced",
                          WisdomWarning, stacklevel=3)
    try:
        yield
    finally:
        with contextlib.suppress(OSError):
            path.parent.mkdir(parents=True, exist_ok=True)
            tmp = path.with_suffix(f".{os.getpid()}.tmp")
            tmp.write_bytes(export_wisdom())
            os.replace(tmp, path)
