"""HDF5 results: writing a run as it goes, and reading it back.

The layout is a contract (``docs/output.md`` lists every dataset with its units); every
dataset carries a ``units`` attribute, and the root holds the resolved input TOML
(``input``), the tdse1d version and the grid and time step actually used.

File lifecycle (``docs/output.md``, "Atomic writing"):

* one writer per result: :class:`WriterLock` holds ``NAME.h5.lock`` (pid, host, start
  time; created atomically, and held with ``flock`` where the platform has it) for the
  whole run; a second writer is refused at once with :class:`~tdse1d.errors.OutputBusy`
  naming the holder, and the lock of a writer that died on this host is taken over;
* the data go to ``NAME.h5.part``, created exclusively (``O_EXCL``) by the lock holder,
  through :class:`GuardedFile`, which keeps a failed write (full disk, read-only file
  system) away from the HDF5 library (which cannot recover from one and crashes at
  exit) and reports it as an :class:`OSError` at the next check;
* the root attribute ``complete`` is set last, only after :func:`content_problems`
  found every dataset of the contract with its expected shape and the file still
  carries this writer's token; then the file is synced and renamed to ``NAME.h5``;
* an existing ``NAME.h5`` that is not a tdse1d result (or is a directory) is never
  replaced (:func:`refuse_reason`).

Snapshots are streamed into a pre-sized dataset as they come, so memory does not grow
with their number.
"""

from __future__ import annotations

import contextlib
import errno
import json
import os
import socket
import time
import uuid
from dataclasses import dataclass
from pathlib import Path

import h5py
import numpy as np

from .. import __version__
from ..errors import OutputBusy, OutputError
from ..semiclassical.estimates import as_attributes

try:  # advisory locks; absent on Windows, where the lock file alone decides
    import fcntl
except ImportError:  # pragma: no cover
    fcntl = None

__all__ = [
    "ResultWriter", "write_dataset", "read_result", "ResultFile", "PART_SUFFIX", "LOCK_SUFFIX", "is_complete",
    "WriterLock", "LockHolder", "GuardedFile", "new_hdf5", "content_problems", "refuse_reason",
    "is_result_file", "lock_path", "describe_os_error",
]

PART_SUFFIX = ".part"
LOCK_SUFFIX = ".lock"
COMPLETE_ATTR = "complete"
WRITER_ATTR = "writer"
HDF5_SIGNATURE = b"\x89HDF\r\n\x1a\n"


# ------------------------------------------------------------------ messages


def describe_os_error(exc: OSError, path=None, action: str | None = "write") -> str:
    """One line for a failed file operation: what, where, why (no traceback).

    ``path`` (the file the user asked for) is named rather than the helper file that
    failed (``.part``, ``.lock``); without it, the file of the error.

    ``action`` None gives ``'FILE': REASON`` (when it is not known whether a read or a
    write failed)."""
    where = path if path is not None else exc.filename
    why = exc.strerror or str(exc)
    if exc.errno == errno.ENOSPC:
        why = "no space left on the device"
    if where is None:
        return f"cannot {action}: {why}" if action else why
    return f"cannot {action} {str(where)!r}: {why}" if action else f"{str(where)!r}: {why}"


# --------------------------------------------------------------------- locks


@dataclass(frozen=True)
class LockHolder:
    """Who holds a lock file: process id, host name, start time (Unix seconds), purpose."""

    pid: int
    host: str
    started: float
    purpose: str = ""

    def describe(self) -> str:
        when = time.strftime("%Y-%m-%d %H:%M:%S UTC", time.gmtime(self.started))
        return f"pid {self.pid} on host {self.host} (since {when})"

    def on_this_host(self) -> bool:
        return self.host == socket.gethostname()


def lock_path(path) -> Path:
    """The lock file of the result (or directory) ``path``: ``path + ".lock"``."""
    path = Path(path)
    return path.with_name(path.name + LOCK_SUFFIX)


def _read_holder(path: Path) -> LockHolder | None:
    try:
        info = json.loads(Path(path).read_text(encoding="utf-8"))
        return LockHolder(int(info["pid"]), str(info["host"]), float(info["started"]), str(info.get("purpose", "")))
    except (OSError, ValueError, KeyError, TypeError):
        return None


def _pid_alive(pid: int) -> bool:
    if os.name == "nt":  # os.kill there terminates the process: never probe, assume alive
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # another user's process: alive
        return True
    except OSError:  # pragma: no cover - e.g. platforms without signal 0
        return True
    return True


def _try_flock(fd: int):
    """True: locked now; False: another process holds it; None: no flock here."""
    if fcntl is None:
        return None
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        return True
    except BlockingIOError:
        return False
    except OSError:  # e.g. ENOLCK on a file system without locks
        return None


class WriterLock:
    """An exclusive lock on a result file or a scan directory, held by one process.

    The lock is the file ``path`` holding JSON ``{pid, host, started, purpose}``. It
    is created atomically with its content (written to a unique temporary file and
    hard-linked to ``path``, which fails if it exists; ``O_CREAT | O_EXCL`` where hard
    links are not supported), and its holder keeps an ``flock`` on it. A lock whose
    ``flock`` is free and whose holder ran on this host (or, without ``flock``, whose
    pid no longer runs here) is stale: its holder died without cleaning up (SIGKILL,
    power loss), and it is taken over, with a note in :attr:`note`. A lock held from
    another host is never taken over (its liveness cannot be checked from here).

    Parameters
    ----------
    path : path
        The lock file (see :func:`lock_path`).
    what : str
        What is locked, for messages (e.g. the result file's name).
    purpose : str
        Recorded in the lock file (e.g. ``"tdse1d run"``).
    """

    def __init__(self, path, what: str | None = None, purpose: str = "tdse1d"):
        self.path = Path(path)
        self.what = what or str(self.path)
        self.purpose = purpose
        self.fd = None
        self.note = None

    def _busy(self, holder: LockHolder | None, remote: bool = False) -> OutputBusy:
        who = holder.describe() if holder is not None else "another process (the lock file is unreadable)"
        hint = (f"; if that process is gone, delete {str(self.path)!r}" if remote or holder is None
                else "; wait for it to finish or stop it")
        return OutputBusy(f"{self.what} is being written by {who}{hint}")

    def acquire(self) -> "WriterLock":
        """Take the lock or raise :class:`~tdse1d.errors.OutputBusy` naming the holder."""
        me = {"pid": os.getpid(), "host": socket.gethostname(), "started": time.time(), "purpose": self.purpose}
        stale_fds = []
        try:
            for _ in range(8):
                if self._create(json.dumps(me).encode()):
                    fd = os.open(self.path, os.O_RDWR | getattr(os, "O_CLOEXEC", 0))
                    if _try_flock(fd) is False:  # taken over by another process in between
                        os.close(fd)
                        continue
                    self.fd = fd
                    return self
                holder = _read_holder(self.path)
                try:
                    fd = os.open(self.path, os.O_RDWR | getattr(os, "O_CLOEXEC", 0))
                except FileNotFoundError:
                    continue  # released meanwhile: try again
                got = _try_flock(fd)
                remote = holder is not None and not holder.on_this_host()
                if got is False or remote:
                    os.close(fd)
                    raise self._busy(holder, remote)
                if got is None and (holder is None or _pid_alive(holder.pid)):
                    os.close(fd)
                    raise self._busy(holder)
                # stale; remove it only if the path still names the file we examined (and
                # hold its flock meanwhile, so that no other process can take it over too)
                stale_fds.append(fd)
                same = os.fstat(fd)
                try:
                    now = os.stat(self.path)
                except FileNotFoundError:
                    continue
                if (now.st_dev, now.st_ino) == (same.st_dev, same.st_ino):
                    os.unlink(self.path)
                    self.note = (f"took over the lock of {self.what} left by "
                                 f"{holder.describe() if holder else 'an unknown process'}, which no longer runs")
            raise self._busy(_read_holder(self.path))
        finally:
            for fd in stale_fds:
                os.close(fd)

    def _create(self, content: bytes) -> bool:
        """Create the lock file with ``content`` atomically; False if it exists."""
        tmp = self.path.with_name(f"{self.path.name}.{os.getpid()}.{uuid.uuid4().hex[:8]}.tmp")
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
        try:
            os.write(fd, content)
        finally:
            os.close(fd)
        try:
            os.link(tmp, self.path)
            return True
        except FileExistsError:
            return False
        except OSError as exc:  # no hard links here: create exclusively, then write
            if exc.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EXDEV, errno.EMLINK):
                raise
            try:
                fd = os.open(self.path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
            except FileExistsError:
                return False
            try:
                os.write(fd, content)
            finally:
                os.close(fd)
            return True
        finally:
            tmp.unlink(missing_ok=True)

    def release(self) -> None:
        """Remove the lock file (if it is still ours) and drop the flock."""
        if self.fd is None:
            return
        with contextlib.suppress(OSError):
            mine, now = os.fstat(self.fd), os.stat(self.path)
            if (mine.st_dev, mine.st_ino) == (now.st_dev, now.st_ino):
                os.unlink(self.path)
        os.close(self.fd)
        self.fd = None

    @staticmethod
    def holder(path) -> LockHolder | None:
        """The live holder of the lock file ``path``, or None (no lock, or a stale one)."""
        path = Path(path)
        try:
            fd = os.open(path, os.O_RDWR | getattr(os, "O_CLOEXEC", 0))
        except OSError:
            return None
        try:
            holder = _read_holder(path)
            got = _try_flock(fd)
            if got is False:
                return holder or LockHolder(-1, "?", 0.0)
            if holder is None:
                return None
            if not holder.on_this_host():
                return holder
            return holder if got is None and _pid_alive(holder.pid) else None
        finally:
            os.close(fd)

    def __enter__(self):
        return self if self.fd is not None else self.acquire()

    def __exit__(self, *exc):
        self.release()
        return False


# ------------------------------------------------------------- guarded files


def _pwrite(fd, data, offset):
    if hasattr(os, "pwrite"):
        return os.pwrite(fd, data, offset)
    os.lseek(fd, offset, os.SEEK_SET)  # pragma: no cover - platforms without pwrite
    return os.write(fd, data)


def _pread(fd, n, offset):
    if hasattr(os, "pread"):
        return os.pread(fd, n, offset)
    os.lseek(fd, offset, os.SEEK_SET)  # pragma: no cover - platforms without pread
    return os.read(fd, n)


class GuardedFile:
    """A binary file for h5py's ``fileobj`` driver that never reports a failed write.

    The HDF5 library cannot recover from a failed write (a full disk, a file system
    turned read-only): later calls fail, and it crashes in its exit handler. This
    object writes with ``os.pwrite``; after the first failure it keeps every further
    write in memory (so that what HDF5 reads back is consistent and it can close the
    file cleanly) and remembers the error, which :meth:`raise_error` raises as the
    original :class:`OSError`. Used for every HDF5 file tdse1d writes.

    Parameters
    ----------
    fd : int
        Descriptor opened for reading and writing.
    path : path
        For messages.
    """

    def __init__(self, fd: int, path):
        self.fd = fd
        self.path = Path(path)
        self.pos = 0
        self.size = os.fstat(fd).st_size
        self.error: OSError | None = None
        self._overlay: list[tuple[int, bytes]] = []

    @classmethod
    def create(cls, path, exclusive: bool = True) -> "GuardedFile":
        """Create ``path`` (``O_EXCL`` if ``exclusive``, else truncating it)."""
        flags = os.O_RDWR | os.O_CREAT | getattr(os, "O_CLOEXEC", 0)
        flags |= os.O_EXCL if exclusive else os.O_TRUNC
        return cls(os.open(path, flags, 0o644), path)

    def seek(self, offset, whence=0):
        self.pos = offset if whence == 0 else (self.pos + offset if whence == 1 else self.size + offset)
        return self.pos

    def tell(self):
        return self.pos

    def write(self, data):
        view = memoryview(data).cast("B")
        n = len(view)
        if self.error is None:
            try:
                done = 0
                while done < n:
                    done += _pwrite(self.fd, view[done:], self.pos + done)
            except OSError as exc:
                self.error = exc
        if self.error is not None:
            self._overlay.append((self.pos, bytes(view)))
        self.pos += n
        self.size = max(self.size, self.pos)
        return n

    def readinto(self, buffer):
        view = memoryview(buffer).cast("B")
        n = len(view)
        data = _pread(self.fd, n, self.pos) if n else b""
        view[: len(data)] = data
        view[len(data):] = bytes(n - len(data))
        for offset, chunk in self._overlay:  # writes kept in memory after a failure
            lo, hi = max(offset, self.pos), min(offset + len(chunk), self.pos + n)
            if lo < hi:
                view[lo - self.pos: hi - self.pos] = chunk[lo - offset: hi - offset]
        self.pos += n
        return n

    def read(self, n=-1):
        n = self.size - self.pos if n is None or n < 0 else n
        buffer = bytearray(max(n, 0))
        self.readinto(buffer)
        return bytes(buffer)

    def truncate(self, size=None):
        size = self.pos if size is None else size
        if self.error is None:
            try:
                os.ftruncate(self.fd, size)
            except OSError as exc:
                self.error = exc
        self.size = size
        return size

    def flush(self):
        pass  # os.pwrite is unbuffered

    def sync(self):
        """fsync the file (an error is remembered like a failed write)."""
        if self.error is None:
            try:
                os.fsync(self.fd)
            except OSError as exc:
                self.error = exc

    def raise_error(self):
        """Raise the first write error, if any (as the original OSError, with the file name)."""
        if self.error is not None:
            exc = self.error
            raise OSError(exc.errno, exc.strerror or str(exc), str(self.path)) from None

    def close(self):
        if self.fd is not None:
            os.close(self.fd)
            self.fd = None


@contextlib.contextmanager
def new_hdf5(path, exclusive: bool = False):
    """Write a new HDF5 file through a :class:`GuardedFile`; on any failure it is removed.

    Raises the write error (OSError) after closing the file cleanly.
    """
    path = Path(path)
    raw = GuardedFile.create(path, exclusive)
    ok = False
    try:
        with h5py.File(raw, "w") as f:
            yield f
        raw.sync()
        raw.raise_error()
        ok = True
    finally:
        raw.close()
        if not ok:
            path.unlink(missing_ok=True)


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


def write_dataset(group, name, data, units, **attrs):
    """Create ``group[name]`` holding ``data`` with its ``units`` attribute (and others)."""
    ds = group.create_dataset(name, data=data)
    ds.attrs["units"] = units
    for k, v in attrs.items():
        ds.attrs[k] = v
    return ds


class ResultWriter:
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

    def check(self):
        """Raise the first write error (OSError) met so far, e.g. a full disk."""
        self._raw.raise_error()

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
        f.attrs["order"] = cfg.propagation.order
        f.attrs["absorber"] = cfg.absorber.type
        f.attrs["absorber_width"] = p.absorber_width
        f.attrs["potential"] = p.potential.describe()
        f.attrs["warnings"] = "\n".join(p.warnings)
        f.attrs[COMPLETE_ATTR] = False
        write_dataset(f.create_group("grid"), "x", p.grid.x, "bohr")
        f["grid"].attrs["spacing"] = p.grid.spacing
        states = f.create_group("states")
        write_dataset(states, "energy", p.states.energies, "hartree")
        write_dataset(states, "wavefunction", p.states.wavefunctions, "bohr^-1/2")
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
        self._snap_time = write_dataset(snaps, "time", np.asarray(snapshot_times, float), "atomic_unit_of_time")
        x = p.grid.x[::stride]
        write_dataset(snaps, "x", x, "bohr")
        self._stride = stride
        self._snap = snaps.create_dataset(
            "psi", shape=(n_snap, len(x)), dtype=np.complex128,
            chunks=(1, len(x)) if n_snap else None,
        )
        self._snap.attrs["units"] = "bohr^-1/2"
        self._snap.attrs["gauge"] = "length"

    # ---------------------------------------------------------------- sink
    def snapshot(self, index, time, psi):
        """Store snapshot ``index`` (length gauge) at ``time`` (a.u.)."""
        self._snap[index] = psi[:: self._stride]
        self._snap_time[index] = time
        self.check()

    # ------------------------------------------------------------- results
    def write_result(self, result, extra=None):
        """Write the run's observables, spectra and ionization; ``extra`` is a callable
        given the open file to add analysis groups."""
        f = self.file
        obs = result.observables
        fld = f.create_group("field")
        write_dataset(fld, "time", obs.time, "atomic_unit_of_time")
        write_dataset(fld, "electric", obs.electric, "atomic_unit_of_electric_field")
        write_dataset(fld, "vector_potential", obs.vector_potential, "atomic_unit_of_vector_potential")
        o = f.create_group("observables")
        write_dataset(o, "time", obs.time, "atomic_unit_of_time")
        write_dataset(o, "dipole", obs.dipole, "bohr", description="<x>, dipole moment per electron charge")
        write_dataset(o, "momentum", obs.momentum, "atomic_unit_of_momentum", description="kinetic momentum <p>")
        write_dataset(o, "acceleration", obs.acceleration, "atomic_unit_of_acceleration",
                 description="Ehrenfest dipole acceleration -<dV/dx> - E(t) N(t)")
        write_dataset(o, "norm", obs.norm, "1")
        write_dataset(o, "initial_population", obs.initial_population, "1")
        write_dataset(o, "population_time", result.population_time, "atomic_unit_of_time")
        write_dataset(o, "bound_population", result.bound_population, "1",
                 description="|<phi_n|psi>|^2 at population_time, shape (time, state)")
        write_dataset(o, "absorbed", obs.norm[0] - obs.norm, "1", description="norm removed by the absorber so far")
        h = f.create_group("spectra/harmonic")
        hs = result.harmonic
        write_dataset(h, "frequency", hs.frequency, "hartree", description="angular frequency = photon energy")
        write_dataset(h, "order", hs.order, "1", description="frequency / carrier frequency of the first pulse")
        write_dataset(h, "power", hs.power, "atomic_units", description="|FFT of windowed acceleration|^2")
        h.attrs["window"] = self.problem.config.spectra.window
        if result.cutoff is not None:
            h.attrs["cutoff_frequency"] = result.cutoff.frequency
            h.attrs["cutoff_order"] = result.cutoff.order
            h.attrs["cutoff_resolved"] = bool(result.cutoff.resolved)
        for method, spec in result.photoelectrons.items():
            g = f.create_group(f"spectra/photoelectron/{method}")
            g.attrs["method"] = method
            g.attrs["split"] = spec.split
            write_dataset(g, "momentum", spec.momentum, "atomic_unit_of_momentum", description="|p|")
            write_dataset(g, "density_left", spec.density_left, "1/atomic_unit_of_momentum")
            write_dataset(g, "density_right", spec.density_right, "1/atomic_unit_of_momentum")
            write_dataset(g, "energy", spec.energy, "hartree")
            write_dataset(g, "energy_density_left", spec.energy_density_left, "1/hartree")
            write_dataset(g, "energy_density_right", spec.energy_density_right, "1/hartree")
        ion = f.create_group("ionization")
        write_dataset(ion, "probability", result.ionization_probability, "1",
                      description="1 - population of all bound states (held + edge + beyond), docs/analysis.md")
        est = getattr(result, "ionization", None)
        if est is not None:
            write_dataset(ion, "probability_band", np.array([est.lower, est.upper]), "1",
                          description="lower and upper ends of the band covering the estimate's error")
            write_dataset(ion, "bound_held", est.held, "1", description="population of the bound states the box holds")
            write_dataset(ion, "bound_edge", est.edge, "1",
                          description="population of the grid's E < 0 states reaching into the absorber")
            write_dataset(ion, "bound_beyond", est.beyond, "1",
                          description="estimated population of Rydberg states above the grid's highest level")
            write_dataset(ion, "bound_unheld", est.unheld, "1",
                          description="bound_edge + bound_beyond: population in bound states the box cannot hold")
            write_dataset(ion, "time", est.time, "atomic_unit_of_time",
                          description="when the populations were read: first record at or after the field's end")
            ion.attrs["states_found"] = est.states_found
            ion.attrs["states_held"] = est.states_held
            ion.attrs["states_complete"] = est.complete
            ion.attrs["top_held_energy"] = est.top_held_energy
            ion.attrs["edge_loss_rate"] = est.edge_loss_rate
            ion.attrs["converged"] = est.converged
        write_dataset(ion, "absorbed", result.absorbed, "1", description="norm removed by the absorber")
        final = f.create_group("final")
        write_dataset(final, "psi", result.final_state, "bohr^-1/2", gauge="length")
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
        self.file.attrs[COMPLETE_ATTR] = True  # last: only a whole file carries it
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
