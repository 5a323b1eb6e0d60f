"""HDF5 results: writing a run as it goes (:class:`ResultWriter`), and reading it back
(:func:`read_result`).

The layout is a contract (``docs/output.md`` lists every dataset with its units); every
dataset carries a ``units`` attribute, and the root holds the resolved input TOML
(``input``), the tdse1d version and the grid and time step actually used. The root
attribute ``complete`` is set last, only after :func:`content_problems` found every
dataset of the contract with its expected shape and the file still carries this
writer's token; an existing ``NAME.h5`` that is not a tdse1d result (or is a directory)
is never replaced (:func:`refuse_reason`). Locks and the guarded file are in
:mod:`tdse1d.io.guarded_file`.

Snapshots are streamed into a pre-sized dataset as they come, so memory does not grow
with their number.
"""

from __future__ import annotations

import contextlib
import os
import time
import uuid
from dataclasses import dataclass
from pathlib import Path

import h5py
import numpy as np

from .. import __version__
from ..errors import OutputError
from ..semiclassical.estimates import as_attributes
from .layout import DESCRIPTION_ATTR, RESULT_LAYOUT, UNITS_ATTR, VARIABLE_UNIT, entry as layout_entry
from .guarded_file import COMPLETE_ATTR, GuardedFile, HDF5_SIGNATURE, PART_SUFFIX, WRITER_ATTR, WriterLock, lock_path


# ---------------------------------------------------------------- what is ours


def is_result_file(path) -> bool:
    """True if ``path`` is an HDF5 file written by ``tdse1d run`` (finished or not)."""
    try:
        with open(path, "rb") as fh:
            if fh.read(len(HDF5_SIGNATURE)) != HDF5_SIGNATURE:
                return False
        with h5py.File(path, "r") as f:
            return all(k in f.attrs for k in ("input", "tdse1d_version", "grid_points"))
    except (OSError, ValueError):
        return False


def refuse_reason(path) -> str | None:
    """Why a run must not write its result to ``path`` (None if it may).

    A directory, or an existing file (or link) that is not a tdse1d result file, is
    never replaced.
    """
    path = Path(path)
    if path.is_dir():
        return f"the output {str(path)!r} is a directory; give a file name"
    if path.exists() or path.is_symlink():
        if not is_result_file(path):
            return (f"the output {str(path)!r} exists and is not a tdse1d result file; "
                    "it is left alone: remove it or choose another name")
    return None


def content_problems(f, token: str | None = None) -> list[str]:
    """What a result file lacks: every dataset of the contract with its expected shape.

    Parameters
    ----------
    f : h5py.File
    token : str, optional
        The writer token the file must carry (checked before marking it complete).

    Returns
    -------
    list of str
        Empty for a whole file.
    """
    problems = []
    try:
        n = int(f.attrs["grid_points"])
        s = int(f.attrs["steps"])
    except (KeyError, ValueError, TypeError):
        return ["no grid_points/steps attributes"]
    if token is not None and f.attrs.get(WRITER_ATTR) != token:
        problems.append("written over by another writer")
    # shapes that follow from the header (the per-step series are checked against their
    # own time axis, whatever its length: a run may store them decimated)
    expected = {"grid/x": (n,), "final/psi": (n,), "states/energy": None, "spectra/harmonic/power": None,
                "spectra/harmonic/frequency": None, "ionization/probability": None, "snapshots/psi": None,
                "snapshots/time": None, "observables/time": None}
    if "two_electron" in f:  # a run of the two-electron atom has its own group instead of the 1-D states
        expected = {"two_electron/states/energy": None, "two_electron/regions/double_ionization": None,
                    "two_electron/momentum/double": (n, n), "two_electron/snapshots/time": None,
                    "ionization/probability": None, "observables/time": None}
    for name, shape in expected.items():
        if name not in f:
            problems.append(f"{name} missing")
        elif shape is not None and f[name].shape != shape:
            problems.append(f"{name} has shape {f[name].shape}, expected {shape}")
    if "observables/time" in f:
        steps = f["observables/time"].shape
        if s > 0 and not 1 < steps[0] <= s + 1:
            problems.append(f"observables/time has shape {steps} for {s} steps")
        for name in ("norm", "dipole", "momentum", "acceleration"):
            key = f"observables/{name}"
            if key not in f:
                problems.append(f"{key} missing")
            elif f[key].shape != steps:
                problems.append(f"{key} has shape {f[key].shape}, expected {steps}")
    if "spectra/harmonic/power" in f and "spectra/harmonic/frequency" in f \
            and f["spectra/harmonic/power"].shape != f["spectra/harmonic/frequency"].shape:
        problems.append("spectra/harmonic/power and frequency differ in shape")
    if "snapshots/psi" in f and "snapshots/time" in f and f["snapshots/psi"].shape[0] != f["snapshots/time"].shape[0]:
        problems.append("snapshots/psi and snapshots/time differ in length")
    return problems


def write_dataset(group, name, data=None, *, layout=RESULT_LAYOUT, units=None, create=None, **attrs):
    """Create ``group[name]`` with the unit and description its entry in the layout declares.

    Parameters
    ----------
    group : h5py.Group
    name : str
    data : array_like, optional
        The values (or None with ``create``, for a dataset filled later).
    layout : tuple of tdse1d.io.layout.Entry
        The file's layout (:data:`~tdse1d.io.layout.RESULT_LAYOUT` or ``SUMMARY_LAYOUT``).
    units : str, optional
        Only for an entry whose unit the writer states per file (``VARIABLE_UNIT``).
    create : dict, optional
        Keywords of ``create_dataset`` (shape, dtype, chunks) when ``data`` is None.
    **attrs
        Further attributes; each must be declared as ``path@name``.

    Returns
    -------
    h5py.Dataset

    Raises
    ------
    KeyError
        The dataset or one of the attributes is not declared in the layout.
    ValueError
        ``units`` given for an entry whose unit the layout fixes, or missing where it does not.
    """
    path = f"{group.name.strip('/')}/{name}".lstrip("/")
    e = layout_entry(path, layout)
    for k in attrs:
        layout_entry(f"{path}@{k}", layout)
    if (e.unit == VARIABLE_UNIT) != (units is not None):
        raise ValueError(f"{path}: the unit is {'stated by the writer' if e.unit == VARIABLE_UNIT else e.unit!r}")
    ds = group.create_dataset(name, data=data) if create is None else group.create_dataset(name, **create)
    ds.attrs[UNITS_ATTR] = units if units is not None else e.unit
    ds.attrs[DESCRIPTION_ATTR] = e.description
    for k, v in attrs.items():
        ds.attrs[k] = v
    return ds


def write_fields(group, source, names, *, layout=RESULT_LAYOUT):
    """One dataset per attribute of ``source``, each by :func:`write_dataset`.

    Parameters
    ----------
    group : h5py.Group
    source : object
        Holds the values as attributes (a result, an analysis, a spectrum).
    names : iterable of str, or dict
        Dataset names that are also the attribute names, or a mapping dataset name ->
        attribute name where the file's name differs from the object's.
    layout : tuple of tdse1d.io.layout.Entry
        As for :func:`write_dataset`.
    """
    pairs = names.items() if isinstance(names, dict) else ((n, n) for n in names)
    for dataset, attribute in pairs:
        write_dataset(group, dataset, getattr(source, attribute), layout=layout)


class GuardedWriting:
    """How a result file ends: the part of :class:`ResultWriter` that other writers of
    a whole file share (the two-electron atom's, :mod:`tdse1d.io.pair_result_file`).

    The writer holds ``self.file`` (h5py, on ``self._raw``, a guarded file), ``self.part``
    (the partial file), ``self.path`` (its final name) and ``self.lock``.
    """

    def check(self):
        """Raise the first write error (OSError) met so far, e.g. a full disk."""
        self._raw.raise_error()

    def _finish(self):
        """Mark complete (last: only a whole file carries it), sync, rename, release the lock."""
        self.file.attrs[COMPLETE_ATTR] = True
        self.file.close()
        self.file = None
        self._raw.sync()
        self.check()
        self._raw.close()
        reason = refuse_reason(self.path)  # something may have appeared there meanwhile
        if reason is not None:
            raise OutputError(reason)
        os.replace(self.part, self.path)
        _fsync_dir(self.path.parent)
        self.lock.release()

    def abort(self):
        """Close and delete the partial file, release the lock (never raises for the file)."""
        try:
            if self.file is not None:
                with contextlib.suppress(Exception):
                    self.file.close()
                self.file = None
            if self._raw is not None:
                self._raw.close()
            with contextlib.suppress(OSError):
                self.part.unlink(missing_ok=True)
        finally:
            self.lock.release()

    def __enter__(self):
        return self

    def __exit__(self, exc_type, exc, tb):
        if exc_type is not None:
            self.abort()
        return False


class ResultWriter(GuardedWriting):
    """Writes one run's HDF5 file; used as the run's snapshot sink.

    Parameters
    ----------
    path : path
        Final file name; the data go to ``path + ".part"`` until :meth:`close`.
    problem : Problem

    Use as a context manager: on an exception the partial file is removed and the lock
    released. Opening takes the lock ``path + ".lock"`` (:class:`WriterLock`) and
    writes the header, so an output that cannot be written fails here, before any
    propagation.

    Raises
    ------
    OutputError
        The output is a directory or a file that is not a tdse1d result.
    OutputBusy
        Another process is writing the same result.
    OSError
        The file cannot be created (read-only, no such directory, no space...).
    """

    def __init__(self, path, problem, snapshot_times=()):
        self.path = Path(path)
        self.part = self.path.with_name(self.path.name + PART_SUFFIX)
        reason = refuse_reason(self.path)
        if reason is not None:
            raise OutputError(reason)
        self.problem = problem
        self.file = self._raw = None
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self.lock = WriterLock(lock_path(self.path), what=str(self.path), purpose="tdse1d run").acquire()
        try:
            # we hold the lock: a .part here was left by a writer that died
            self.part.unlink(missing_ok=True)
            self._raw = GuardedFile.create(self.part, exclusive=True)
            self.file = h5py.File(self._raw, "w")
            self.token = uuid.uuid4().hex
            self.file.attrs[WRITER_ATTR] = self.token
            self._write_header(snapshot_times)
            self.check()
        except BaseException:
            self.abort()
            raise

    @property
    def note(self) -> str | None:
        """A remark for the user (a stale lock taken over), or None."""
        return self.lock.note

    # -------------------------------------------------------------- header
    def _write_header(self, snapshot_times):
        f, p = self.file, self.problem
        cfg = p.config
        f.attrs["input"] = cfg.resolved_toml
        f.attrs["input_source"] = str(cfg.source)
        f.attrs["tdse1d_version"] = __version__
        f.attrs["grid_points"] = p.grid.points
        f.attrs["grid_spacing"] = p.grid.spacing
        f.attrs["time_step"] = p.time.step
        f.attrs["steps"] = p.time.steps
        f.attrs["gauge"] = cfg.propagation.gauge
        f.attrs["splitting_order"] = cfg.propagation.order
        f.attrs["absorber"] = cfg.absorber.type
        f.attrs["absorber_width"] = p.absorber_width
        f.attrs["potential"] = p.potential.describe()
        f.attrs["warnings"] = "\n".join(p.warnings)
        f.attrs[COMPLETE_ATTR] = False
        write_dataset(f.create_group("grid"), "x", p.grid.x)
        f["grid"].attrs["spacing"] = p.grid.spacing
        states = f.create_group("states")
        write_dataset(states, "energy", p.states.energies)
        write_dataset(states, "wavefunction", p.states.wavefunctions)
        est = f.create_group("estimates")
        if p.pulse_estimates:
            for k, v in as_attributes(p.pulse_estimates[0]).items():
                est.attrs[k] = v
            for i, pe in enumerate(p.pulse_estimates):
                g = est.create_group(f"pulse_{i}")
                for k, v in as_attributes(pe).items():
                    g.attrs[k] = v
        est.attrs["units"] = "atomic units (hartree, bohr, a.u. of time and field) unless the name says otherwise"
        stride = cfg.output.snapshot_stride
        n_snap = len(snapshot_times)
        snaps = f.create_group("snapshots")
        self._snap_time = write_dataset(snaps, "time", np.asarray(snapshot_times, float))
        # every stride-th point along every axis: shape (Q, *grid.shape / stride)
        grid = p.grid
        self._every = (slice(None, None, stride),) * grid.ndim
        axes = [grid.axis(a).x[::stride] for a in range(grid.ndim)]
        write_dataset(snaps, "x", axes[0])
        for a in range(1, grid.ndim):
            write_dataset(snaps, f"x_{a}", axes[a])
        shape = tuple(len(x) for x in axes)
        self._snap = write_dataset(snaps, "psi", create=dict(shape=(n_snap, *shape), dtype=np.complex128,
                                                             chunks=(1, *shape) if n_snap else None),
                                   gauge="length")

    # ---------------------------------------------------------------- sink
    def snapshot(self, index, time, psi):
        """Store snapshot ``index`` (length gauge) at ``time`` (a.u.)."""
        self._snap[index] = psi[self._every]
        self._snap_time[index] = time
        self.check()

    # ------------------------------------------------------------- results
    @staticmethod
    def _write_derived(f, derived: dict) -> None:
        """Each derived spectrum under /spectra/{name}: its columns and, as attributes, its
        readings, as its class declares them (:mod:`tdse1d.spectra.derived`)."""
        from ..spectra.derived import DERIVED_SPECTRA

        for name, data in derived.items():
            spectrum = DERIVED_SPECTRA[name]
            g = f.create_group(f"spectra/{name}")
            for column in (spectrum.axis, *spectrum.columns):
                write_dataset(g, column.name, data[column.name])
            for reading in spectrum.readings_declared:
                g.attrs[reading.name] = float(data[reading.name])

    def write_result(self, result, extra=None):
        """Write the run's observables, spectra and ionization; ``extra`` is a callable
        given the open file to add analysis groups."""
        f = self.file
        obs = result.observables
        # the per-step series below hold every k-th step (docs/output.md, recorded time axis)
        f.attrs["record_stride"] = int(getattr(result, "record_every", 1))
        fld = f.create_group("field")
        write_fields(fld, obs, ("time", "electric", "vector_potential"))
        o = f.create_group("observables")
        write_fields(o, obs, ("time", "dipole", "momentum", "acceleration", "norm", "initial_population"))
        write_fields(o, result, ("population_time", "bound_population"))
        write_dataset(o, "absorbed", obs.norm[0] - obs.norm)
        h = f.create_group("spectra/harmonic")
        hs = result.harmonic
        write_fields(h, hs, ("frequency", "order", "power"))
        h.attrs["window"] = self.problem.config.spectra.window
        if result.cutoff is not None:
            h.attrs["cutoff_energy"] = result.cutoff.frequency
            h.attrs["cutoff_order"] = result.cutoff.order
            h.attrs["cutoff_resolved"] = bool(result.cutoff.resolved)
        self._write_derived(f, getattr(result, "derived", {}))
        for method, spec in result.photoelectrons.items():
            g = f.create_group(f"spectra/photoelectron/{method}")
            g.attrs["method"] = method
            g.attrs["split"] = spec.split
            write_fields(g, spec, ("momentum", "density_left", "density_right", "energy", "energy_density_left",
                                   "energy_density_right"))
        ion = f.create_group("ionization")
        write_dataset(ion, "probability", result.ionization_probability)
        est = getattr(result, "ionization", None)
        if est is not None:
            write_dataset(ion, "probability_band", np.array([est.lower, est.upper]))
            write_fields(ion, est, {"bound_held": "held", "bound_edge": "edge", "bound_beyond": "beyond",
                                    "bound_unheld": "unheld", "time": "time"})
            ion.attrs["states_found"] = est.states_found
            ion.attrs["states_held"] = est.states_held
            ion.attrs["states_complete"] = est.complete
            ion.attrs["top_held_energy"] = est.top_held_energy
            ion.attrs["edge_loss_rate"] = est.edge_loss_rate
            ion.attrs["converged"] = est.converged
        write_dataset(ion, "absorbed", result.absorbed)
        final = f.create_group("final")
        write_dataset(final, "psi", result.final_state, gauge="length")
        f.attrs["warnings"] = "\n".join(result.warnings)
        if extra is not None:
            extra(f)
        self.check()

    def close(self):
        """Check the content, mark complete, sync, rename to the final name, release the lock.

        Raises
        ------
        OutputError
            A dataset of the contract is missing or has the wrong shape, or the file
            was written over by another writer: the file is not marked complete.
        OSError
            A write failed.
        """
        self.check()
        self.file.flush()
        problems = content_problems(self.file, self.token)
        if problems:
            raise OutputError(f"{self.path} is not whole ({'; '.join(problems)}); it was not marked complete")
        self._finish()


def _fsync_dir(directory: Path):
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:  # pragma: no cover - platforms without directory fds
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def is_complete(path) -> bool:
    """True if ``path`` is a finished, readable result file."""
    try:
        with h5py.File(path, "r") as f:
            return bool(f.attrs.get(COMPLETE_ATTR, False))
    except (OSError, KeyError):
        return False


@dataclass
class ResultFile:
    """A result file opened for reading (use :func:`read_result`)."""

    path: Path
    file: h5py.File

    def __getitem__(self, key):
        return self.file[key][()]

    def attrs(self, key="/"):
        return dict(self.file[key].attrs)

    @property
    def input_toml(self) -> str:
        return self.file.attrs["input"]

    def close(self):
        self.file.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()


def read_result(path) -> ResultFile:
    """Open a finished result file; raises ValueError for an incomplete one."""
    path = Path(path)
    if not is_complete(path):
        raise ValueError(f"{path} is not a finished tdse1d result file")
    return ResultFile(path, h5py.File(path, "r"))
