"""Checkpoints of a run of the two-electron atom (:mod:`tdse1d.runs.pair_runner`).

The same conventions as a one-electron run's (:mod:`tdse1d.runs.checkpoint`): the file
``RESULT.h5.checkpoint`` beside the result (:func:`~tdse1d.runs.checkpoint.checkpoint_path`),
the SHA-256 hash of the resolved input (:func:`~tdse1d.runs.checkpoint.input_hash`), and
the same atomic write: ``RESULT.h5.checkpoint.tmp`` through the guarded HDF5 file, fsync,
:func:`os.replace` over the previous one, fsync of the directory; a SIGKILL at any
moment leaves the previous complete checkpoint or none.

What it holds (root attribute ``system = "two-electron"``):

* the wavefunction (propagation gauge, the 2-D grid) and its step index;
* the index of the next event (snapshot or progress step) and the snapshots done;
* every per-step observable recorded so far, the region readings included;
* the norm the absorbers took from each region so far (``regions/absorbed``, radius x
  (neutral, single, double)): the readings add it to every later step, so a resumed
  run continues the same sums, bitwise;
* the mean force <F> of the last record (``record_force``, a.u.), which the momentum of
  the next record uses: measured again at the resumed step by other code, it would
  differ in its last bits;
* the density snapshots written so far (copied one at a time: the memory of a run and
  of its checkpoint does not grow with their number).
"""

from __future__ import annotations

import os
import time
from dataclasses import dataclass
from pathlib import Path

import h5py
import numpy as np

from .. import __version__
from ..input.spec import InputError
from .checkpoint import _FORMAT, _fsync_dir, open_checkpoint  # one format for every checkpoint; ``system`` says whose

__all__ = ["PairRunState", "PairCheckpointSink", "write_pair_checkpoint", "read_pair_checkpoint", "PAIR_SYSTEM"]

_FORMAT_VERSION = 2  # 2: record_force
#: the ``system`` root attribute of a checkpoint of the two-electron atom
PAIR_SYSTEM = "two-electron"


@dataclass
class PairRunState:
    """Everything a run of the two-electron atom needs to continue (atomic units).

    Attributes
    ----------
    step_index : int
        Step of ``psi``.
    next_event : int
        Index of the first event (snapshot or progress step) not yet handled.
    snapshots_done : int
        Density snapshots handed to the sink so far.
    psi : ndarray, shape (n, n), complex
        Wavefunction in the propagation gauge (not copied: write it before stepping on).
    observables : dict of str to ndarray
        Every per-step observable by name (NaN beyond what was recorded).
    absorbed : ndarray, shape (radii, 3)
        Norm the absorbers took so far from the neutral, single and double regions.
    record_force : float
        Mean force <F> (a.u.) of the last record, for the momentum of the next one.
    """

    step_index: int
    next_event: int
    snapshots_done: int
    psi: np.ndarray
    observables: dict
    absorbed: np.ndarray
    record_force: float


def write_pair_checkpoint(path, state: PairRunState, digest: str, density=None):
    """Write a run state atomically to ``path`` (see the module notes).

    Parameters
    ----------
    path : path
    state : PairRunState
    digest : str
        :func:`tdse1d.runs.checkpoint.input_hash` of the run's input.
    density : (times, dataset), optional
        The snapshot times and the (open) dataset of the densities written so far; the
        first ``state.snapshots_done`` rows are copied, one at a time.
    """
    from ..io.guarded_file import new_hdf5

    path = Path(path)
    tmp = path.with_name(path.name + ".tmp")
    with new_hdf5(tmp) as f:
        a = f.attrs
        a["format"], a["format_version"], a["system"] = _FORMAT, _FORMAT_VERSION, PAIR_SYSTEM
        a["tdse1d_version"], a["input_hash"] = __version__, digest
        a["step_index"], a["next_event"] = state.step_index, state.next_event
        a["snapshots_done"], a["written_unix_time"] = state.snapshots_done, time.time()
        a["record_force"] = state.record_force
        f.create_dataset("psi", data=state.psi)
        obs = f.create_group("observables")
        for name, values in state.observables.items():
            obs.create_dataset(name, data=values)
        f.create_group("regions").create_dataset("absorbed", data=state.absorbed)
        snaps = f.create_group("snapshots")
        k = state.snapshots_done
        if density is not None and k > 0:
            times, source = density
            snaps.create_dataset("time", data=np.asarray(times[:k], float))
            target = snaps.create_dataset("density", shape=(k,) + source.shape[1:], dtype=source.dtype)
            for i in range(k):
                target[i] = source[i]
    with open(tmp, "rb+") as fh:
        os.fsync(fh.fileno())
    os.replace(tmp, path)
    _fsync_dir(path.parent)


def read_pair_checkpoint(path, digest: str | None = None, names=None) -> PairRunState:
    """Read a checkpoint written by :func:`write_pair_checkpoint` (the snapshots stay in
    the file: :meth:`PairCheckpointSink.restore_snapshots` copies them).

    Parameters
    ----------
    path : path
    digest : str, optional
        Expected input hash; a checkpoint of another input is refused.
    names : iterable of str, optional
        The per-step observables the run records; a checkpoint without one is refused.

    Returns
    -------
    PairRunState

    Raises
    ------
    InputError
        One line, for a file that is not a checkpoint of the two-electron atom, of
        another format version, of another input, or without an observable.
    """
    path = Path(path)
    with open_checkpoint(path, digest) as f:
        if f.attrs.get("system") != PAIR_SYSTEM:
            raise InputError(f"the checkpoint {str(path)!r} is not one of the two-electron atom; remove it or run "
                             "without --resume", "--resume")
        version = int(f.attrs.get("format_version", 0))
        if version != _FORMAT_VERSION:
            raise InputError(f"the checkpoint {str(path)!r} has format version {version}, this tdse1d reads "
                             f"{_FORMAT_VERSION} for the two-electron atom; run without --resume", "--resume")
        stored = f["observables"]
        missing = [n for n in (names or ()) if n not in stored]
        if missing:
            raise InputError(f"the checkpoint {str(path)!r} holds no per-step {', '.join(missing)} (written by a "
                             "tdse1d recording other observables); run without --resume", "--resume")
        return PairRunState(
            step_index=int(f.attrs["step_index"]), next_event=int(f.attrs["next_event"]),
            snapshots_done=int(f.attrs["snapshots_done"]), psi=f["psi"][()],
            observables={n: stored[n][()] for n in (names if names is not None else stored)},
            absorbed=f["regions/absorbed"][()], record_force=float(f.attrs["record_force"]))


class PairCheckpointSink:
    """The checkpoint side of a run's result writer (:class:`tdse1d.io.pair_result_file.PairResultWriter`).

    Parameters
    ----------
    writer : PairResultWriter
        Its open file holds the snapshots written so far.
    path : path
        The checkpoint file.
    digest : str
        :func:`tdse1d.runs.checkpoint.input_hash` of the input.
    """

    def __init__(self, writer, path, digest: str):
        self.writer, self.path, self.digest = writer, Path(path), digest
        self.written = 0

    def checkpoint(self, state: PairRunState):
        snaps = self.writer.file["two_electron/snapshots"]
        write_pair_checkpoint(self.path, state, self.digest, (snaps["time"][()], snaps["density"]))
        self.written += 1

    def restore_snapshots(self):
        """Copy the snapshots of the checkpoint into the (new) result file, one at a time."""
        with h5py.File(self.path, "r") as f:
            if "density" not in f["snapshots"]:
                return
            density = f["snapshots/density"]
            for i in range(density.shape[0]):
                self.writer.snapshot(i, None, density[i])

    def discard(self):
        """Remove the checkpoint (after the finished result is in place)."""
        self.path.unlink(missing_ok=True)
        self.path.with_name(self.path.name + ".tmp").unlink(missing_ok=True)
