"""Files written safely: one writer per file (:class:`WriterLock`), HDF5 data written
through :class:`GuardedFile` (a failed write is kept away from the HDF5 library and
reported as an :class:`OSError`), and one-line messages for operating-system errors
(:func:`describe_os_error`). The result file (:mod:`tdse1d.io.result_file`), the
checkpoint and the scan summary are written through it.

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

from ..errors import OutputBusy


try:  # advisory locks; absent on Windows, where the lock file alone decides
    import fcntl
except ImportError:  # pragma: no cover
    fcntl = None

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
def replaced_when_written(path):
    """A temporary name beside ``path`` to write to; renamed onto ``path`` when the block
    ends without an error, removed otherwise. A figure or table that fails half-way (a
    full disk, Ctrl-C) leaves the earlier file intact, never a truncated one.

    Parameters
    ----------
    path : path
        The final file. The temporary name keeps its suffix (``NAME.<pid>.tmp.png``), so a
        writer that picks the format from the suffix (matplotlib) picks the right one.

    Yields
    ------
    pathlib.Path
        The temporary file to write.
    """
    path = Path(path)
    tmp = path.with_name(f"{path.stem}.{os.getpid()}.tmp{path.suffix}")
    ok = False
    try:
        yield tmp
        os.replace(tmp, path)
        ok = True
    finally:
        if not ok:
            tmp.unlink(missing_ok=True)


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
