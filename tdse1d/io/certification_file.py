"""The numerical uncertainties of a certified run in its result file (group
``certification``, declared in :mod:`tdse1d.io.layout_tables`).

:func:`write_certification` adds the group to a finished result file the way every
result is written: under the file's writer lock, into a copy ``NAME.h5.part`` written
through :class:`~tdse1d.io.guarded_file.GuardedFile`, renamed over ``NAME.h5`` when
complete, so that a failure leaves the run's file as it was.
:func:`read_numerical_uncertainties` reads the spreads and the not-converged notes
back (empty for a file that was not certified).
"""

from __future__ import annotations

import math
import os
import shutil
from pathlib import Path

import h5py
import numpy as np

from .guarded_file import PART_SUFFIX, GuardedFile, WriterLock, lock_path
from .layout import group_of
from .result_file import write_dataset

__all__ = ["write_certification", "read_numerical_uncertainties", "read_certification", "DESCRIPTION"]

GROUP = group_of("certification@description")
DESCRIPTION = ("numerical uncertainty of each quantity: the largest move from this run to a companion run that "
               "refines one numerical parameter (time step, grid spacing, box with absorber), each move times the "
               "companion's error_factor (Richardson); a move beyond the quantity's tolerance is flagged "
               "'not converged', naming the parameter")


def _text(values):
    return np.array([str(v) for v in values], dtype=h5py.string_dtype())


def _write_group(f, certified, companions, wall_seconds, workers):
    if GROUP in f:
        del f[GROUP]  # a certification of the same run again replaces the earlier one
    g = f.create_group(GROUP)
    g.attrs["description"] = DESCRIPTION
    g.attrs["wall_seconds"] = float(wall_seconds)
    g.attrs["workers"] = int(workers)
    c = g.create_group("companions")
    write_dataset(c, "name", _text(x["name"] for x in companions))
    write_dataset(c, "parameter", _text(x["parameter"] for x in companions))
    write_dataset(c, "change", _text(x["change"] for x in companions))
    write_dataset(c, "error_factor", np.array([float(x["error_factor"]) for x in companions]))
    write_dataset(c, "run_seconds", np.array([float(x["seconds"]) for x in companions]))
    write_dataset(c, "file", _text(x.get("file") or "" for x in companions))
    for key, q in certified.items():
        h = g.create_group(key)
        write_dataset(h, "value", q.value, units=q.unit)
        write_dataset(h, "uncertainty", q.uncertainty, units=q.unit)
        write_dataset(h, "tolerance", q.tolerance.value, units=q.unit)
        write_dataset(h, "companion_values", np.asarray(q.companion_values, dtype=float), units=q.unit)
        h.attrs["converged"] = bool(q.converged)
        h.attrs["note"] = q.note
        h.attrs["tolerance_reason"] = q.tolerance.reason


def write_certification(path, certified: dict, companions: list, wall_seconds: float, workers: int) -> None:
    """Add (or replace) the ``certification`` group of a finished result file.

    Parameters
    ----------
    path : path
        The main run's result file.
    certified : dict of str to tdse1d.analysis.certification.Certified
    companions : list of dict
        Per companion: ``name``, ``parameter``, ``change`` (text), ``error_factor``,
        ``seconds`` (wall
        time of its run, s), ``file`` (path relative to ``path``'s folder, or None).
    wall_seconds : float
        Wall time of the whole certified run (s).
    workers : int
        Worker processes the runs shared.

    Raises
    ------
    OSError
        The copy could not be written; ``path`` is left as it was.
    tdse1d.errors.OutputBusy
        Another process is writing ``path``.
    """
    path = Path(path)
    part = path.with_name(path.name + PART_SUFFIX)
    with WriterLock(lock_path(path), what=str(path), purpose="tdse1d run --certify"):
        shutil.copyfile(path, part)
        raw = GuardedFile(os.open(part, os.O_RDWR | getattr(os, "O_CLOEXEC", 0)), part)
        ok = False
        try:
            with h5py.File(raw, "r+") as f:
                _write_group(f, certified, companions, wall_seconds, workers)
            raw.sync()
            raw.raise_error()
            ok = True
        finally:
            raw.close()
            if not ok:
                part.unlink(missing_ok=True)
        os.replace(part, path)


def read_certification(path) -> dict:
    """Everything a certified run stored, per quantity (atomic units).

    Parameters
    ----------
    path : path
        A result file.

    Returns
    -------
    dict of str to dict
        Per quantity key: ``value``, ``uncertainty``, ``tolerance``, ``unit``,
        ``companion_values``, ``converged``, ``note``, ``tolerance_reason``; empty
        for a file that was not certified.
    """
    out = {}
    with h5py.File(path, "r") as f:
        if GROUP not in f:
            return out
        for key, h in f[GROUP].items():
            if key == "companions":
                continue
            out[key] = {
                "value": float(h["value"][()]), "uncertainty": float(h["uncertainty"][()]),
                "tolerance": float(h["tolerance"][()]), "unit": str(h["value"].attrs["units"]),
                "companion_values": np.asarray(h["companion_values"][()], dtype=float),
                "converged": bool(h.attrs["converged"]), "note": str(h.attrs["note"]),
                "tolerance_reason": str(h.attrs["tolerance_reason"]),
            }
    return out


def read_numerical_uncertainties(path) -> tuple[dict[str, float], dict[str, str]]:
    """The numerical uncertainty of each quantity of a result file, and the
    not-converged notes.

    Parameters
    ----------
    path : path
        A result file.

    Returns
    -------
    spreads : dict of str to float
        Quantity key (:data:`tdse1d.analysis.certification.QUANTITIES`) to its absolute
        spread in atomic units (hartree for energies, a.u. of time, a.u. of momentum
        for the streaking shift, probability for ``ionization_probability``); a
        quantity no companion could read is absent.
    notes : dict of str to str
        Quantity key to ``"not converged: ..."``, only for the quantities not converged.
        Both are empty for a file that was not certified.
    """
    spreads, notes = {}, {}
    for key, q in read_certification(path).items():
        if math.isfinite(q["uncertainty"]):
            spreads[key] = q["uncertainty"]
        if not q["converged"]:
            notes[key] = q["note"]
    return spreads, notes
