"""The scan directory: each point's result goes to ``SCAN_DIR/points/<hash>.h5``; a rerun
skips the points whose finished file holds the same input (:func:`result_matches`); a
failed point leaves ``points/<hash>.error`` (its traceback). The plan is recorded in
``SCAN_DIR/manifest.json`` (and a copy of the plan text in ``SCAN_DIR/scan.toml``), so
that a directory holding another plan's points is refused (:class:`PlanMismatch`)
unless the user starts afresh. :meth:`ScanDirectory.lock` holds ``SCAN_DIR/scan.lock``
for a whole scan, and every point file is written under its own lock
(:class:`tdse1d.io.guarded_file.WriterLock`). Each rung of a point (:mod:`tdse1d.scans.rungs`)
has its own files: ``points/<hash><suffix>.h5``, ``.json``, ``.error`` (the run's suffix is
empty, the SFA's ``.sfa``).
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np

from ..input.spec import tomllib
from .plan import ScanPlan, ScanPoint, input_hash
from .rungs import RUNGS


MANIFEST = "manifest.json"
PLAN_COPY = "scan.toml"
POINTS_DIR = "points"
SUMMARY = "summary.h5"
SCAN_LOCK = "scan.lock"
class PlanMismatch(RuntimeError):
    """The scan directory holds the points of another plan."""


# ---------------------------------------------------------------- scan directory


class ScanDirectory:
    """The files of a scan: ``manifest.json``, ``scan.toml``, ``points/``, ``summary.h5``.

    Parameters
    ----------
    root : path
    """

    def __init__(self, root):
        self.root = Path(root)
        self.points = self.root / POINTS_DIR

    def _name(self, point: ScanPoint, rung: str, extension: str) -> Path:
        return self.points / f"{point.hash}{RUNGS[rung].suffix}{extension}"

    def result(self, point: ScanPoint, rung: str = "run") -> Path:
        """The file of ``point`` at ``rung`` (the run's result file by default)."""
        return self._name(point, rung, ".h5")

    def error(self, point: ScanPoint, rung: str = "run") -> Path:
        return self._name(point, rung, ".error")

    def record(self, point: ScanPoint, rung: str = "run") -> Path:
        return self._name(point, rung, ".json")

    @property
    def summary(self) -> Path:
        return self.root / SUMMARY

    def read_manifest(self) -> dict | None:
        try:
            return json.loads((self.root / MANIFEST).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None

    def claim(self, plan: ScanPlan, fresh: bool = False) -> None:
        """Record ``plan`` as this directory's plan.

        Raises
        ------
        PlanMismatch
            If the directory holds another plan and ``fresh`` is False.
        """
        old = self.read_manifest()
        if old is not None and old.get("plan_identity") != plan.identity:
            if not fresh:
                raise PlanMismatch(
                    f"{self.root} holds the points of another plan ({old.get('plan_source')}); "
                    "give another directory, or --fresh to delete its points and start again"
                )
        if fresh:
            self.clear()
        elif old is None and self.points.exists() and any(self.points.glob("*.h5")):
            raise PlanMismatch(f"{self.root} holds point files but no manifest; give --fresh to start again")
        self.points.mkdir(parents=True, exist_ok=True)
        _write_atomic(self.root / MANIFEST, json.dumps(plan.manifest(), indent=1))
        if plan.text:
            _write_atomic(self.root / PLAN_COPY, plan.text)

    @property
    def lock_file(self) -> Path:
        return self.root / SCAN_LOCK

    def lock(self) -> "WriterLock":
        """The directory's lock, taken: :class:`~tdse1d.errors.OutputBusy` if another scan holds it."""
        from ..io.guarded_file import WriterLock

        self.root.mkdir(parents=True, exist_ok=True)
        return WriterLock(self.lock_file, what=f"the scan directory {str(self.root)!r}", purpose="tdse1d scan").acquire()

    def writer_of(self, point: ScanPoint, rung: str = "run"):
        """The live process writing ``point`` at ``rung`` (a :class:`~tdse1d.io.guarded_file.LockHolder`), or None."""
        from ..io.guarded_file import WriterLock, lock_path

        return WriterLock.holder(lock_path(self.result(point, rung)))

    def clear(self) -> None:
        """Delete the files a scan writes (and nothing else).

        Raises
        ------
        tdse1d.errors.OutputBusy
            If a point is being written by a live process (nothing is deleted).
        """
        from ..errors import OutputBusy
        from ..io.guarded_file import WriterLock

        if self.points.exists():
            for lock in self.points.glob("*.h5.lock"):
                holder = WriterLock.holder(lock)
                if holder is not None:
                    raise OutputBusy(f"{lock.name[:-5]} in {self.root} is being written by {holder.describe()}; "
                                     "stop it before starting afresh")
            for pattern in ("*.h5", "*.h5.part", "*.h5.lock", "*.error", "*.json", "*.tmp", "*.checkpoint"):
                for p in self.points.glob(pattern):
                    p.unlink(missing_ok=True)
        for name in (MANIFEST, PLAN_COPY, SUMMARY):
            (self.root / name).unlink(missing_ok=True)

    def state(self, point: ScanPoint, rung: str | None = None) -> str:
        """``"done"``, ``"busy"`` (another live process writes it), ``"failed"`` or ``"todo"``;
        a result file that fails verification (:func:`result_matches`) is deleted.

        Without ``rung``, the state of the point over the rungs its plan asks for: done
        when every one is done, else busy, failed or todo (the first that applies)."""
        if rung is None:
            states = [self.state(point, r) for r in point.rungs]
            return next((s for s in ("busy", "failed", "todo") if s in states), "done")
        path = self.result(point, rung)
        if self.writer_of(point, rung) is not None:
            return "busy"
        if path.exists():
            if MATCHES[rung](path, point.hash):
                return "done"
            path.unlink(missing_ok=True)  # truncated, unfinished or another input: redo
            self.record(point, rung).unlink(missing_ok=True)
        if self.error(point, rung).exists():
            return "failed"
        return "todo"


def _write_atomic(path: Path, text: str) -> None:
    from ..io.guarded_file import replaced_when_written

    with replaced_when_written(path) as tmp:
        tmp.write_text(text, encoding="utf-8")


def result_matches(path, expected_hash: str) -> bool:
    """True if ``path`` is a complete result file of the input named ``expected_hash``
    holding every dataset of the contract with its shape (:func:`tdse1d.io.result_file.content_problems`),
    and its data are readable, not only its header."""
    import h5py

    from ..io.result_file import content_problems, is_complete

    if not is_complete(path):
        return False
    try:
        with h5py.File(path, "r") as f:
            raw = tomllib.loads(f.attrs["input"])
            if content_problems(f):
                return False
            last = "two_electron/regions/double_ionization" if "two_electron" in f else "final/psi"
            for name in ("spectra/harmonic/power", "observables/acceleration", "observables/norm", last):
                data = f[name][()]  # reads every chunk: a truncated file fails here
                if not np.all(np.isfinite(data)):
                    return False
    except Exception:  # h5py raises several types for a damaged file
        return False
    return input_hash(raw) == expected_hash


def sfa_result_matches(path, expected_hash: str) -> bool:
    """True if ``path`` is a complete file of a point's SFA rung
    (:func:`tdse1d.io.sfa_file.write_sfa_point`) of the input named ``expected_hash``,
    whose harmonic spectrum reads back whole and finite."""
    import h5py

    from ..io.result_file import is_complete
    from ..io.sfa_file import SFA_POINT_KIND

    if not is_complete(path):
        return False
    try:
        with h5py.File(path, "r") as f:
            if f.attrs.get("kind") != SFA_POINT_KIND:
                return False
            raw = tomllib.loads(f.attrs["input"])
            for name in ("sfa/harmonic/power", "sfa/harmonic/frequency"):
                if not np.all(np.isfinite(f[name][()])):
                    return False
    except Exception:  # h5py raises several types for a damaged file
        return False
    return input_hash(raw) == expected_hash


#: rung -> check of a finished file of that rung, (path, expected hash) -> bool
MATCHES = {"run": result_matches, "sfa": sfa_result_matches}
