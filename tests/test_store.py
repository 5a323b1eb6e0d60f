"""The life of a result file: one writer at a time, complete only when whole, never over a
file that is not ours, and a failed write (full disk, read-only file system) reported in
one line with nothing half-written under the final name and the earlier result intact."""

import errno
import json
import os
import socket
import subprocess
import sys
from pathlib import Path

import h5py
import numpy as np
import pytest
from conftest import Handshake, small_input

from tdse1d import api
from tdse1d.cli import program as cli
from tdse1d.io import guarded_file, result_file
from tdse1d.input.spec import InputError
from tdse1d.input.schema import load_input
from tdse1d.errors import OutputBusy, OutputError
from tdse1d.input.problem import build_problem
from tdse1d.io.result_file import ResultWriter, is_complete
from tdse1d.io.guarded_file import WriterLock, lock_path

SMALL = small_input(snapshots=5)


def _input(directory: Path, name="in.toml", extra="") -> Path:
    directory.mkdir(parents=True, exist_ok=True)
    path = directory / name
    path.write_text(SMALL + extra)
    return path


@pytest.fixture(scope="module")
def problem(tmp_path_factory):
    return build_problem(load_input(_input(tmp_path_factory.mktemp("p"))))


def _cli(*args, env=None, **kw):
    return subprocess.run([sys.executable, "-m", "tdse1d.cli", *map(str, args)], capture_output=True, text=True,
                          env=env, timeout=300, **kw)


def _errors(stderr: str) -> list[str]:
    """The stderr lines that are not the run's physics warnings."""
    return [ln for ln in stderr.splitlines() if ln.strip() and "warning:" not in ln]


# ------------------------------------------------------------------- one writer


def test_second_writer_is_refused_naming_the_first(problem, tmp_path):
    out = tmp_path / "r.h5"
    first = ResultWriter(out, problem, ())
    try:
        with pytest.raises(OutputBusy, match=f"pid {os.getpid()} on host {socket.gethostname()}"):
            ResultWriter(out, problem, ())
        # the refused writer touched nothing of the first one
        assert first.part.exists() and lock_path(out).exists()
        assert first.file.attrs["writer"] == first.token
    finally:
        first.abort()
    assert not first.part.exists() and not lock_path(out).exists()


def test_concurrent_runs_of_one_input_leave_one_whole_file(tmp_path):
    """Two `tdse1d run` of the same input and output: the second is refused at once in one
    line naming the first (pid and host); the first finishes a whole, complete file."""
    path = _input(tmp_path)
    out = tmp_path / "same.h5"
    handshake = Handshake(tmp_path / "hold")
    hold = handshake.directory
    env = {**os.environ, **handshake.environment}
    first = subprocess.Popen([sys.executable, "-m", "tdse1d.cli", "run", str(path), "-o", str(out), "--quiet"],
                             env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        holder = handshake.wait("propagation", lambda: first.poll() is None)["pid"]
        second = _cli("run", path, "-o", out, "--quiet")
        assert second.returncode == 1, second.stderr
        lines = _errors(second.stderr)
        assert len(lines) == 1 and f"pid {holder} on host {socket.gethostname()}" in lines[0], second.stderr
        (hold / "go").touch()
        _, err = first.communicate(timeout=300)
    finally:
        if first.poll() is None:
            first.kill()
    assert first.returncode == 0, err
    assert is_complete(out) and not lock_path(out).exists()
    with h5py.File(out, "r") as f:
        assert result_file.content_problems(f) == []
        # the early datasets were not truncated away: the run starts normalised
        assert abs(f["observables/norm"][0] - 1) < 1e-10 and np.any(f["observables/dipole"][()] != 0)


def test_stale_lock_of_a_dead_writer_is_taken_over(problem, tmp_path):
    out = tmp_path / "s.h5"
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    pid = int(dead.stdout)
    lock_path(out).write_text(json.dumps({"pid": pid, "host": socket.gethostname(), "started": 1.0}))
    out.with_name(out.name + ".part").write_bytes(b"left by the dead writer")
    outcome = api.run_problem(problem, out)
    assert is_complete(out) and not lock_path(out).exists()
    assert any("took over" in n and f"pid {pid}" in n for n in outcome.notes), outcome.notes


def test_lock_held_from_another_host_is_not_taken_over(problem, tmp_path):
    out = tmp_path / "h.h5"
    lock_path(out).write_text(json.dumps({"pid": 1, "host": "another-node.example", "started": 1.0}))
    with pytest.raises(OutputBusy, match="another-node.example.*delete"):
        api.run_problem(problem, out)
    assert lock_path(out).exists() and not out.exists()


def test_lock_holder_query(tmp_path):
    path = tmp_path / "x.lock"
    assert WriterLock.holder(path) is None
    with WriterLock(path, purpose="test"):
        h = WriterLock.holder(path)
        assert h is not None and h.pid == os.getpid()
    assert WriterLock.holder(path) is None and not path.exists()


# --------------------------------------------------------------- completeness


def test_a_file_missing_a_dataset_is_not_marked_complete(problem, tmp_path):
    out = tmp_path / "c.h5"
    with pytest.raises(OutputError, match="observables/norm missing"):
        with ResultWriter(out, problem, ()) as w:
            from tdse1d.runs.runner import simulate

            w.write_result(simulate(problem))
            del w.file["observables/norm"]
            w.close()
    assert not out.exists() and not w.part.exists() and not lock_path(out).exists()


def test_a_file_written_over_by_another_writer_is_not_marked_complete(problem, tmp_path):
    out = tmp_path / "o.h5"
    with pytest.raises(OutputError, match="another writer"):
        with ResultWriter(out, problem, ()) as w:
            from tdse1d.runs.runner import simulate

            w.write_result(simulate(problem))
            w.file.attrs["writer"] = "someone else"
            w.close()
    assert not out.exists()


# ----------------------------------------------------------------- output path


def test_output_file_is_relative_to_the_input_and_never_replaces_a_foreign_file(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    notes = tmp_path / "project" / "notes.txt"
    notes.parent.mkdir()
    notes.write_text("my notes\n")
    inp = _input(tmp_path / "project" / "inputs", extra='file = "../notes.txt"\n')
    proc = _cli("run", inp, "--quiet")
    assert proc.returncode == 2, proc.stderr
    lines = _errors(proc.stderr)
    assert len(lines) == 1 and "not a tdse1d result" in lines[0] and "output.file" in lines[0]
    assert notes.read_text() == "my notes\n"
    # '..' to a fresh name is fine, and lands beside the input's folder, not in the working directory
    inp.write_text(SMALL + 'file = "../results/r.h5"\n')
    proc = _cli("run", inp, "--quiet")
    assert proc.returncode == 0, proc.stderr
    assert is_complete(tmp_path / "project" / "results" / "r.h5")
    assert not (tmp_path / "results").exists()


def test_an_absolute_output_over_a_foreign_file_is_refused(problem, tmp_path):
    target = tmp_path / "data.bin"
    target.write_bytes(b"\x89HDF\r\n\x1a\n not ours")
    with pytest.raises(InputError, match="not a tdse1d result"):
        api.run_problem(problem, target)
    assert target.read_bytes() == b"\x89HDF\r\n\x1a\n not ours"
    # an HDF5 file of someone else's is not ours either
    other = tmp_path / "other.h5"
    with h5py.File(other, "w") as f:
        f["x"] = np.arange(3)
    before = other.read_bytes()
    with pytest.raises(InputError, match="not a tdse1d result"):
        api.run_problem(problem, other)
    assert other.read_bytes() == before


def test_an_earlier_result_is_replaced(problem, tmp_path):
    """The null case of the refusal: a tdse1d result is ours to replace."""
    out = tmp_path / "again.h5"
    api.run_problem(problem, out)
    first = out.stat().st_ino
    api.run_problem(problem, out)
    assert is_complete(out) and out.stat().st_ino != first


def test_output_directory_is_refused_before_the_run(problem, tmp_path):
    steps = []
    with pytest.raises(InputError, match="is a directory"):
        api.run_problem(problem, tmp_path, progress=lambda k, n: steps.append(k))
    assert steps == []  # nothing was propagated
    proc = _cli("run", _input(tmp_path / "i"), "-o", tmp_path, "--quiet")
    assert proc.returncode == 2 and len(_errors(proc.stderr)) == 1, proc.stderr


# ------------------------------------------------------------ failed writes


def _fail_writes_after(monkeypatch, calls: int, code: int):
    """os.pwrite of the store fails with ``code`` from call ``calls`` on (a full disk, ...)."""
    real = os.pwrite
    count = {"n": 0}

    def pwrite(fd, data, offset):
        count["n"] += 1
        if count["n"] > calls:
            raise OSError(code, os.strerror(code))
        return real(fd, data, offset)

    monkeypatch.setattr(guarded_file.os, "pwrite", pwrite)
    return count


@pytest.mark.parametrize("when", [0.0, 0.5, 1.0])
def test_full_disk_keeps_the_earlier_result(problem, tmp_path, monkeypatch, when):
    """The disk fills at the first write, half-way, or at the very last write."""
    out = tmp_path / "full.h5"
    with monkeypatch.context() as m:
        total = _fail_writes_after(m, 10**9, errno.ENOSPC)  # counts the writes of a whole run
        api.run_problem(problem, out)
    before = out.read_bytes()
    calls = min(int(when * total["n"]), total["n"] - 1)
    count = _fail_writes_after(monkeypatch, calls, errno.ENOSPC)
    with pytest.raises(OutputError) as info:
        api.run_problem(problem, out)
    assert count["n"] > calls  # the failure was really met
    message = str(info.value)
    assert "\n" not in message and "no space left" in message and str(out) in message
    assert out.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["full.h5"]  # no .part, .lock, .tmp


def test_full_disk_while_writing_a_checkpoint_keeps_the_previous_one(problem, tmp_path, monkeypatch):
    from tdse1d.runs.checkpoint import checkpoint_path, read_checkpoint
    from tdse1d.runs.runner import RunControl, RunInterrupted

    out = tmp_path / "cp.h5"
    control = RunControl()

    def stop(k, n):
        if k > n // 3:
            control.request_stop()

    with pytest.raises(RunInterrupted):
        api.run_problem(problem, out, progress=stop, control=control)
    state, _ = read_checkpoint(checkpoint_path(out))
    _fail_writes_after(monkeypatch, 200, errno.ENOSPC)
    control = RunControl(interval=1e-9)  # a checkpoint at every chunk
    with pytest.raises(OutputError, match="no space left"):
        api.run_problem(problem, out, control=control, resume=True)
    again, _ = read_checkpoint(checkpoint_path(out))
    assert again.step_index >= state.step_index
    assert not out.exists() and not checkpoint_path(out).with_name(checkpoint_path(out).name + ".tmp").exists()


def test_read_only_file_system_is_one_line(problem, tmp_path, monkeypatch):
    def refuse(path, exclusive=True):
        raise OSError(errno.EROFS, os.strerror(errno.EROFS), str(path))

    monkeypatch.setattr(guarded_file.GuardedFile, "create", staticmethod(refuse))
    steps = []
    with pytest.raises(OutputError, match="Read-only file system") as info:
        api.run_problem(problem, tmp_path / "ro.h5", progress=lambda k, n: steps.append(k))
    assert "\n" not in str(info.value) and steps == []  # found before the run
    assert list(tmp_path.iterdir()) == []


def test_a_file_where_a_directory_should_be(tmp_path):
    """A real failure that root meets too: the output's folder is a regular file."""
    blocker = tmp_path / "blocker"
    blocker.write_text("a file\n")
    for args in (["run", _input(tmp_path / "i"), "-o", blocker / "r.h5", "--quiet"],):
        proc = _cli(*args)
        assert proc.returncode == 1, proc.stderr
        lines = _errors(proc.stderr)
        assert len(lines) == 1 and "Traceback" not in proc.stderr, proc.stderr
    assert blocker.read_text() == "a file\n"


def _mount(*args) -> bool:
    return subprocess.run(["mount", *map(str, args)], capture_output=True).returncode == 0


@pytest.fixture
def small_tmpfs(tmp_path):
    """A real 8 MB file system (needs root with mount rights; skipped elsewhere)."""
    where = tmp_path / "small"
    where.mkdir()
    if os.geteuid() != 0 or not _mount("-t", "tmpfs", "-o", "size=8m", "tmpfs", where):
        pytest.skip("cannot mount a tmpfs here")
    try:
        yield where
    finally:
        subprocess.run(["umount", str(where)])


def test_really_full_disk_is_one_line_and_no_crash(small_tmpfs, tmp_path):
    """The HDF5 library crashed at exit after a failed write (exit status 139).

    The disk estimate made before a run (tdse1d.runs.resources) passes: the disk is filled
    while the run is held at its first chunk (the test handshake, docs/checkpoints.md),
    so that the failure comes in the middle of writing, as on a shared disk."""
    inp = _input(tmp_path / "i", extra="")
    text = inp.read_text().replace("points = 256", "points = 4096").replace("snapshots = 5", "snapshots = 40")
    inp.write_text(text)  # 40 snapshots x 4096 points x 16 bytes = 2.6 MB < 8 MB free at the start
    handshake = Handshake(tmp_path / "hold")
    hold = handshake.directory
    env = {**os.environ, **handshake.environment, "TDSE1D_TEST_HOLD_AT": "propagation"}
    proc = subprocess.Popen([sys.executable, "-m", "tdse1d.cli", "run", str(inp), "-o", str(small_tmpfs / "r.h5"),
                             "--quiet"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
    handshake.wait("propagation", lambda: proc.poll() is None)  # the run waits there
    filler = small_tmpfs / "filler"
    with open(filler, "wb") as f:  # fill what is left of the disk
        try:
            while True:
                f.write(b"\0" * 65536)
                f.flush()
        except OSError:
            pass
    (hold / "go").touch()
    _, err = proc.communicate(timeout=300)
    assert proc.returncode == 1, (proc.returncode, err[-2000:])
    lines = _errors(err)
    assert len(lines) == 1 and "no space left" in lines[0], err[-2000:]
    assert sorted(p.name for p in small_tmpfs.iterdir()) == ["filler"]


@pytest.fixture
def read_only_dir(tmp_path):
    """A directory on a read-only bind mount (root cannot be stopped by chmod)."""
    where = tmp_path / "ro"
    where.mkdir()
    inp = _input(where)
    out = where / "r.h5"
    assert cli.main(["run", str(inp), "-o", str(out), "--quiet"]) == 0
    (where / "plan.toml").write_text('base = "in.toml"\n[[axis]]\nkey = "laser.0.cycles"\nvalues = [2]\n')
    if os.geteuid() == 0:
        if not (_mount("--bind", where, where) and _mount("-o", "remount,ro,bind", where)):
            subprocess.run(["umount", str(where)])
            pytest.skip("cannot make a read-only bind mount here")
    else:
        where.chmod(0o555)
    try:
        yield where
    finally:
        if os.geteuid() == 0:
            subprocess.run(["umount", str(where)])
        else:
            where.chmod(0o755)


@pytest.mark.parametrize("command", [
    ["run", "in.toml", "--quiet"],
    ["scan", "plan.toml", "--quiet", "--workers", "1"],
    ["scan", "plan.toml", "--quiet", "--point", "0"],
    ["plot", "r.h5"],
    ["export", "r.h5", "-o", "h.csv"],
    ["validate", "--cases", Path(__file__).resolve().parents[1] / "validation", "--only", "ground_state_softcore",
     "-o", "report"],
])
def test_read_only_directory_is_one_line_for_every_command(read_only_dir, command):
    before = (read_only_dir / "r.h5").read_bytes()
    with pytest.raises(OSError):
        (read_only_dir / "probe").write_text("x")  # really read-only, also for root
    proc = _cli(*command, cwd=read_only_dir)
    assert proc.returncode == 1, proc.stderr
    lines = _errors(proc.stderr)
    assert len(lines) == 1 and ("Read-only file system" in lines[0] or "Permission denied" in lines[0]), proc.stderr
    assert "Traceback" not in proc.stderr
    assert (read_only_dir / "r.h5").read_bytes() == before
