"""FFTW wisdom kept between runs in the user's cache directory (I/O layer).

Measuring the fastest FFT plan for a size takes a moment; the wisdom FFTW gathers is
saved under ``$XDG_CACHE_HOME/tdse1d`` (default ``~/.cache/tdse1d``) and loaded by the
next run. Set ``TDSE1D_NO_WISDOM=1`` to neither read nor write it.
"""

from __future__ import annotations

import contextlib
import os
from pathlib import Path

from .fft import export_wisdom, import_wisdom


def wisdom_path() -> Path:
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "tdse1d" / "fftw_wisdom.pickle"


@contextlib.contextmanager
def fftw_wisdom():
    """Load the saved wisdom on entry and save the enlarged wisdom on exit."""
    if os.environ.get("TDSE1D_NO_WISDOM"):
        yield
        return
    path = wisdom_path()
    with contextlib.suppress(OSError):
        import_wisdom(path.read_bytes())
    try:
        yield
    finally:
        with contextlib.suppress(OSError):
            path.parent.mkdir(parents=True, exist_ok=True)
            tmp = path.with_suffix(f".{os.getpid()}.tmp")
            tmp.write_bytes(export_wisdom())
            os.replace(tmp, path)
