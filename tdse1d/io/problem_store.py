"""Solved parts of a problem kept between runs (I/O layer, beside the FFTW wisdom).

Assembling a problem (:func:`tdse1d.input.problem.build_problem`) solves the same small
problems every time an input is run or estimated: the softening fit (about 15 dense
eigensolves), the ground state on the provisional grid, the bound states on the run's
grid, the barrier-suppression field and the automatic step's error estimate. Together
with the imports they need (scipy.linalg, scipy.integrate) they are most of what
``tdse1d estimate`` costs. :func:`problem_store` keeps each result in
``$XDG_CACHE_HOME/tdse1d/problems/`` (default ``~/.cache/tdse1d``) and hands it back
when the same function is asked the same question again; set ``TDSE1D_NO_STORE=1`` to
neither read nor write it.

A stored value cannot be stale: its key is the SHA-256 of the function's name, the
full ``repr`` of its arguments (frozen dataclasses of floats: the atom's model and
parameters, the grid, Ip, the scheme's weights and order, the tolerance; a ``repr``
that is elided or names an object's address is never stored) and a fingerprint of the
code that computes it (the source of ``tdse1d/physics``, ``tdse1d/semiclassical`` and
``tdse1d/input/problem.py``, the numpy and scipy versions, the Python version, the
machine's architecture and name, since LAPACK's last bits depend on the library and
the processor). The file repeats the whole key text, which is compared on reading. A
file that cannot be read, is not ours or does not match is ignored and replaced. The
files hold arrays only (``numpy.load(allow_pickle=False)``): reading runs no code.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import platform
import sys
from pathlib import Path

import numpy as np

__all__ = ["ProblemStore", "problem_store", "store_directory", "code_fingerprint", "STORE_FORMAT"]

STORE_FORMAT = "tdse1d-problem-store-1"
#: most files kept; the oldest beyond it are removed when one is written
MAX_FILES = 256
#: the sources whose results are stored (relative to the package), hashed into every key
_SOURCES = ("physics", "semiclassical", "input/problem.py")


def store_directory() -> Path:
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "tdse1d" / "problems"


def code_fingerprint() -> str:
    """SHA-256 of the code and libraries a stored value depends on (see the module docstring)."""
    from importlib.util import find_spec

    package = Path(__file__).resolve().parent.parent
    digest = hashlib.sha256()
    for source in _SOURCES:
        path = package / source
        files = sorted(path.rglob("*.py")) if path.is_dir() else [path]
        for file in files:
            digest.update(str(file.relative_to(package)).encode())
            digest.update(file.read_bytes())
    # scipy's version file (version and git revision), read without importing scipy
    # (importlib.metadata would scan every installed distribution: 30 ms)
    spec = find_spec("scipy")
    try:
        digest.update(Path(spec.origin).with_name("version.py").read_bytes())
    except (AttributeError, TypeError, OSError):
        digest.update(b"no scipy")
    for part in (np.__version__, sys.version, platform.machine(), platform.node()):
        digest.update(b"\0" + part.encode())
    return digest.hexdigest()


def _encode(value) -> dict | None:
    """The arrays of a storable value, or None for a value of another kind."""
    from ..physics.states import BoundStates
    from ..semiclassical.step_error import StepError

    if isinstance(value, (float, np.floating)) and not isinstance(value, bool):
        return {"kind": np.array("float"), "value": np.array(float(value))}
    if isinstance(value, BoundStates):
        arrays = {"kind": np.array("states"), "energies": np.asarray(value.energies),
                  "wavefunctions": np.asarray(value.wavefunctions), "complete": np.array(bool(value.complete)),
                  "grid": np.array(repr(value.grid))}
        if value.residuals is not None:
            arrays["residuals"] = np.asarray(value.residuals)
        return arrays
    if isinstance(value, StepError):
        return {"kind": np.array("step_error"), "time_step": np.array(float(value.time_step)),
                "error": np.array(float(value.error)), "momentum": np.array(float(value.momentum)),
                "order": np.array(int(value.order))}
    return None


def _decode(data, args):
    from ..physics.states import BoundStates
    from ..semiclassical.step_error import StepError

    kind = str(data["kind"][()])
    if kind == "float":
        return float(data["value"][()])
    if kind == "states":
        # the grid is one of the arguments (the key holds its repr): take that object
        grid = next((a for a in args if repr(a) == str(data["grid"][()])), None)
        if grid is None:
            return None
        residuals = np.array(data["residuals"]) if "residuals" in data.files else None
        return BoundStates(np.array(data["energies"]), np.array(data["wavefunctions"]), grid,
                           complete=bool(data["complete"][()]), residuals=residuals)
    if kind == "step_error":
        return StepError(float(data["time_step"][()]), float(data["error"][()]), float(data["momentum"][()]),
                         int(data["order"][()]))
    return None


class ProblemStore:
    """Results of pure functions of a problem, one ``.npz`` file each, keyed as the module
    docstring says. The interface :mod:`tdse1d.input.problem` uses: :meth:`load` and
    :meth:`save`.

    Parameters
    ----------
    directory : path
    fingerprint : str, optional
        The code fingerprint (default :func:`code_fingerprint`, computed on first use).
    """

    def __init__(self, directory, fingerprint: str | None = None):
        self.directory = Path(directory)
        self._fingerprint = fingerprint
        self.hits = 0
        self.misses = 0

    @property
    def fingerprint(self) -> str:
        if self._fingerprint is None:
            self._fingerprint = code_fingerprint()
        return self._fingerprint

    def key_text(self, name: str, args: tuple, kwargs: tuple) -> str | None:
        """The whole key of a call, or None for arguments whose ``repr`` does not say
        everything about them (elided arrays, objects shown by their address)."""
        shown = repr(args) + repr(kwargs)
        if "..." in shown or " at 0x" in shown:
            return None
        return json.dumps([STORE_FORMAT, self.fingerprint, name, repr(args), repr(kwargs)])

    def _path(self, key: str) -> Path:
        return self.directory / (hashlib.sha256(key.encode()).hexdigest()[:40] + ".npz")

    def load(self, name: str, args: tuple, kwargs: tuple):
        """The stored value of ``name(*args, **dict(kwargs))``, or None (not stored, unreadable, another key)."""
        key = self.key_text(name, args, kwargs)
        value = None
        if key is not None:
            try:
                with np.load(self._path(key), allow_pickle=False) as data:
                    if str(data["key"][()]) == key:
                        value = _decode(data, args)
            except Exception:  # noqa: BLE001 - any unreadable or foreign file is a miss, replaced on save
                value = None
        if value is None:
            self.misses += 1
        else:
            self.hits += 1
        return value

    def save(self, name: str, args: tuple, kwargs: tuple, value) -> None:
        """Keep ``value`` (a float, BoundStates or StepError; others are not stored)."""
        key = self.key_text(name, args, kwargs)
        arrays = _encode(value)
        if key is None or arrays is None:
            return
        path = self._path(key)
        with contextlib.suppress(OSError):
            self.directory.mkdir(parents=True, exist_ok=True)
            tmp = path.with_name(f"{path.stem}.{os.getpid()}.tmp.npz")
            np.savez(tmp, key=np.array(key), **arrays)
            os.replace(tmp, path)
            self._prune()

    def _prune(self):
        files = sorted(self.directory.glob("*.npz"), key=lambda p: p.stat().st_mtime)
        for old in files[:max(0, len(files) - MAX_FILES)]:
            with contextlib.suppress(OSError):
                old.unlink()


@contextlib.contextmanager
def problem_store(directory=None):
    """Let :func:`tdse1d.input.problem.build_problem` read and keep its solved parts in
    ``directory`` (default :func:`store_directory`) while the block runs; does nothing
    when ``TDSE1D_NO_STORE`` is set. Yields the store (or None)."""
    from ..input import problem

    if os.environ.get("TDSE1D_NO_STORE"):
        yield None
        return
    store = ProblemStore(directory if directory is not None else store_directory())
    previous = problem.use_store(store)
    try:
        yield store
    finally:
        problem.use_store(previous)
