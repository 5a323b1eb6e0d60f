"""Checkpoint files: everything a run needs to continue after it was stopped.

A run whose output is ``RESULT.h5`` keeps its checkpoint beside it, as
``RESULT.h5.checkpoint`` (:func:`checkpoint_path`). The checkpoint is an HDF5 file
holding

* the wavefunction in the propagation gauge and the step index it belongs to;
* the index of the next analysis event (population or snapshot step) to handle;
* every per-step observable recorded so far (the entries of
  :data:`tdse1d.physics.observables.PER_STEP_OBSERVABLES`) and the bound-state
  populations projected so far;
* the surface-flux accumulator (photoelectron amplitudes through each surface, Volkov
  phases, step);
* the snapshots written so far (as stored, i.e. with the output's snapshot stride);
* the SHA-256 hash of the resolved input (:func:`input_hash`), so that a checkpoint
  is never continued with another input.

On resume the result file is written anew and the snapshots taken before the stop
are copied into it from the checkpoint, so the partial ``RESULT.h5.part`` left by a
killed run is never trusted (a file killed during a write may be corrupt).

Atomicity: a checkpoint is written to ``RESULT.h5.checkpoint.tmp``, flushed to disk
(fsync), then renamed over the previous one with :func:`os.replace`, and the
directory is synced. A SIGKILL at any moment therefore leaves either the previous
complete checkpoint or none; a stray ``.tmp`` is never read. The checkpoint is
removed once the finished result file is in place.
"""

from __future__ import annotations

import hashlib
import os
import time
from pathlib import Path

import h5py
import numpy as np

from .. import __version__
from ..input.spec import InputError
from ..physics.observables import per_step_names

__all__ = [
    "CHECKPOINT_SUFFIX",
    "checkpoint_path",
    "input_hash",
    "write_checkpoint",
    "read_checkpoint",
    "open_checkpoint",
    "CheckpointSink",
]

CHECKPOINT_SUFFIX = ".checkpoint"
_FORMAT = "tdse1d-checkpoint"
_FORMAT_VERSION = 2  # 2: surface-flux accumulator replaces the mask one


def checkpoint_path(output) -> Path:
    """The checkpoint beside the result file ``output``: ``output + ".checkpoint"``."""
    output = Path(output)
    return output.with_name(output.name + CHECKPOINT_SUFFIX)


def input_hash(config) -> str:
    """SHA-256 (hex) of the resolved input TOML of a :class:`~tdse1d.input.schema.RunConfig`."""
    return hashlib.sha256(config.resolved_toml.encode("utf-8")).hexdigest()


def _fsync_dir(directory: Path):
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:  # pragma: no cover - platforms without directory fds
        return
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def write_checkpoint(path, state, digest: str, snapshots=None):
    """Write a run state atomically to ``path``.

    Parameters
    ----------
    path : path
        The checkpoint file.
    state : tdse1d.runs.runner.RunState
    digest : str
        :func:`input_hash` of the run's input.
    snapshots : tuple of (ndarray, ndarray), optional
        ``(times, psi)`` of the snapshots stored so far (``state.snapshots_done`` rows).
    """
    path = Path(path)
    tmp = path.with_name(path.name + ".tmp")
    # through a GuardedFile: a full disk raises OSError here (tmp removed, the previous
    # checkpoint intact) instead of leaving the HDF5 library in a state that crashes at exit
    from ..io.guarded_file import new_hdf5

    with new_hdf5(tmp) as f:
        f.attrs["format"] = _FORMAT
        f.attrs["format_version"] = _FORMAT_VERSION
        f.attrs["tdse1d_version"] = __version__
        f.attrs["input_hash"] = digest
        f.attrs["step_index"] = state.step_index
        f.attrs["next_event"] = state.next_event
        f.attrs["snapshots_done"] = state.snapshots_done
        f.attrs["written_unix_time"] = time.time()
        f.create_dataset("psi", data=state.psi)
        obs = f.create_group("observables")
        for name in per_step_names():
            obs.create_dataset(name, data=state.observables[name])
        f.create_dataset("bound_population", data=state.bound_population)
        if state.surface_flux is not None:
            g = f.create_group("surface_flux")
            for name, value in state.surface_flux.items():
                g.create_dataset(name, data=value)
        snaps = f.create_group("snapshots")
        if snapshots is not None:
            snaps.create_dataset("time", data=snapshots[0])
            snaps.create_dataset("psi", data=snapshots[1])
    with open(tmp, "rb+") as fh:
        os.fsync(fh.fileno())
    os.replace(tmp, path)
    _fsync_dir(path.parent)


def open_checkpoint(path, digest: str | None = None) -> h5py.File:
    """Open a checkpoint of any system for reading, its format and input checked.

    Parameters
    ----------
    path : path
    digest : str, optional
        Expected :func:`input_hash`; a checkpoint of another input is refused.

    Returns
    -------
    h5py.File
        Open for reading (use it as a context manager).

    Raises
    ------
    InputError
        One line, for a file that cannot be read, is not a tdse1d checkpoint, or was
        written for another input.
    """
    path = Path(path)
    try:
        f = h5py.File(path, "r")
    except OSError as exc:
        raise InputError(f"cannot read the checkpoint {str(path)!r} ({exc})", "--resume") from None
    try:
        if f.attrs.get("format") != _FORMAT:
            raise InputError(f"{str(path)!r} is not a tdse1d checkpoint", "--resume")
        if digest is not None and f.attrs.get("input_hash") != digest:
            raise InputError(
                f"the checkpoint {str(path)!r} was written for a different input (resolved-input hash "
                f"{str(f.attrs.get('input_hash'))[:12]}..., this input {digest[:12]}...); remove it or run without "
                "--resume", "--resume")
    except InputError:
        f.close()
        raise
    return f


def read_checkpoint(path, digest: str | None = None):
    """Read a checkpoint written by :func:`write_checkpoint`.

    Parameters
    ----------
    path : path
    digest : str, optional
        Expected input hash; a checkpoint of another input is refused.

    Returns
    -------
    state : tdse1d.runs.runner.RunState
    snapshots : tuple of (ndarray, ndarray)
        Times and stored wavefunctions of the snapshots taken before the stop.

    Raises
    ------
    InputError
        If the file is not a tdse1d checkpoint or belongs to another input.
    """
    from .runner import RunState

    path = Path(path)
    with open_checkpoint(path, digest) as f:
        version = int(f.attrs.get("format_version", 0))
        if version != _FORMAT_VERSION:
            raise InputError(
                f"the checkpoint {str(path)!r} has format version {version}, this tdse1d reads "
                f"{_FORMAT_VERSION} (the photoelectron accumulator changed); run without --resume",
                "--resume",
            )
        missing = [name for name in per_step_names() if name not in f["observables"]]
        if missing:
            raise InputError(f"the checkpoint {str(path)!r} holds no per-step {', '.join(missing)} (written by a "
                             "tdse1d recording other observables); run without --resume", "--resume")
        flux = {k: v[()] for k, v in f["surface_flux"].items()} if "surface_flux" in f else None
        state = RunState(
            step_index=int(f.attrs["step_index"]),
            next_event=int(f.attrs["next_event"]),
            snapshots_done=int(f.attrs["snapshots_done"]),
            psi=f["psi"][()],
            observables={name: f["observables"][name][()] for name in per_step_names()},
            bound_population=f["bound_population"][()],
            surface_flux=flux,
        )
        snaps = f["snapshots"]
        if "psi" in snaps:
            snapshots = (snaps["time"][()], snaps["psi"][()])
        else:
            snapshots = (np.zeros(0), np.zeros((0, 0), complex))
    return state, snapshots


class CheckpointSink:
    """A run's sink that also writes checkpoints: wraps a :class:`~tdse1d.io.result_file.ResultWriter`.

    Snapshots go to the writer; :meth:`checkpoint` copies the snapshots stored so far
    from the writer's open file into the checkpoint with the run state.

    Parameters
    ----------
    writer : ResultWriter
    path : path
        The checkpoint file.
    digest : str
        :func:`input_hash` of the input.
    """

    def __init__(self, writer, path, digest: str):
        self.writer = writer
        self.path = Path(path)
        self.digest = digest
        self.written = 0

    def snapshot(self, index, time_, psi):
        self.writer.snapshot(index, time_, psi)

    def restore_snapshots(self, snapshots):
        """Put the snapshots of a checkpoint back into the (new) result file."""
        times, psi = snapshots
        snap = self.writer.file["snapshots"]
        for i in range(len(times)):
            snap["psi"][i] = psi[i]
            snap["time"][i] = times[i]

    def checkpoint(self, state):
        snap = self.writer.file["snapshots"]
        k = state.snapshots_done
        snapshots = (snap["time"][:k], snap["psi"][:k])
        write_checkpoint(self.path, state, self.digest, snapshots)
        self.written += 1

    def discard(self):
        """Remove the checkpoint (after the finished result is in place)."""
        self.path.unlink(missing_ok=True)
        self.path.with_name(self.path.name + ".tmp").unlink(missing_ok=True)
