"""What another local user or a planted file must not be able to do, and what a batch
system's signals must leave behind: FFTW wisdom is never unpickled, the local Dask
cluster takes no client without its credentials and serves no HTTP unless asked, scan
workers and job-array tasks checkpoint on SIGTERM, and one scan directory has one
writer at a time."""

import http.client
import json
import os
import pickle
import signal
import socket
import subprocess
import sys
import threading
import warnings
from pathlib import Path

import h5py
import pytest
from conftest import Handshake, small_input

from tdse1d.cli import program as cli
from tdse1d.scans.directory import ScanDirectory, result_matches
from tdse1d.scans.execute import open_local_client, run_one, run_scan
from tdse1d.scans.plan import load_plan
from tdse1d.runs.checkpoint import checkpoint_path, read_checkpoint
from tdse1d.io.result_file import is_complete
from tdse1d.io.guarded_file import lock_path

BASE = small_input(intensity="1.0e14 W/cm^2", envelope="sin2", spacing=0.3, absorber_width=12.0, time_step=0.1,
                   photoelectrons="none")


def _plan(directory: Path, values=("1.0e14 W/cm^2",)) -> Path:
    directory.mkdir(parents=True, exist_ok=True)
    (directory / "base.toml").write_text(BASE)
    items = ", ".join(f'"{v}"' for v in values)
    path = directory / "plan.toml"
    path.write_text(f'base = "base.toml"\n[[axis]]\nkey = "laser.0.peak_intensity"\nvalues = [{items}]\n')
    return path


# ------------------------------------------------------------------ FFTW wisdom


class _Planted:
    """Unpickling this creates a file: the proof that a pickle ran code."""

    def __init__(self, marker):
        self.marker = str(marker)

    def __reduce__(self):
        return (Path.touch, (Path(self.marker),))


def test_planted_pickle_wisdom_is_never_executed(tmp_path, monkeypatch):
    from tdse1d.io import wisdom
    from tdse1d.physics.fft import InPlaceFFT

    monkeypatch.delenv("TDSE1D_NO_WISDOM", raising=False)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    cache = tmp_path / "tdse1d"
    cache.mkdir()
    marker = tmp_path / "code-ran"
    payload = pickle.dumps(_Planted(marker))
    # the null case: the payload does run code when unpickled
    pickle.loads(payload)
    assert marker.exists()
    marker.unlink()
    # planted under the old name and under the new one
    (cache / "fftw_wisdom.pickle").write_bytes(payload)
    wisdom.wisdom_path().write_bytes(payload)
    with pytest.warns(wisdom.WisdomWarning, match="ignoring"):
        with wisdom.fftw_wisdom():
            InPlaceFFT(64, "FFTW_ESTIMATE").forward()
    assert not marker.exists()
    # the bad file was replaced by data-only wisdom, which the next run reads without a warning
    doc = json.loads(wisdom.wisdom_path().read_text())
    assert doc["format"] == "tdse1d-fftw-wisdom" and all(isinstance(w, str) for w in doc["wisdom"])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        with wisdom.fftw_wisdom():
            pass
    assert not marker.exists()


@pytest.mark.parametrize("blob", [
    b"not json",
    b'{"format": "tdse1d-fftw-wisdom", "version": 99, "wisdom": []}',
    b'{"format": "tdse1d-fftw-wisdom", "version": 1, "wisdom": [1, 2, 3]}',
    b'{"format": "tdse1d-fftw-wisdom", "version": 1, "wisdom": ["@@@"]}',
    b'{"format": "something else", "version": 1, "wisdom": ["AA=="]}',
])
def test_malformed_wisdom_is_refused(blob):
    from tdse1d.physics.fft import WisdomError, export_wisdom, import_wisdom

    with pytest.raises(WisdomError):
        import_wisdom(blob)
    assert import_wisdom(export_wisdom())  # the round trip is accepted


# ----------------------------------------------------------- the local cluster


def _listening_ports(pids):
    import psutil

    return sorted({c.laddr.port for c in psutil.net_connections("tcp") if c.status == "LISTEN" and c.pid in pids})


def _answers_http(port) -> bool:
    try:
        conn = http.client.HTTPConnection("127.0.0.1", port, timeout=5)
        conn.request("GET", "/")
        conn.getresponse()
        return True
    except (OSError, http.client.HTTPException):
        return False


def _cluster_pids():
    import psutil

    me = psutil.Process()
    return {me.pid} | {p.pid for p in me.children(recursive=True)}


def test_local_cluster_takes_no_foreign_client_and_serves_no_http():
    from distributed import Client
    from distributed.security import Security

    cluster, client = open_local_client(workers=1)
    try:
        assert client.submit(os.getpid).result(timeout=60) != os.getpid()  # our client works
        address = cluster.scheduler_address
        assert address.startswith("tls://127.0.0.1:")
        # a client without the cluster's credentials: plain TCP, or TLS with its own certificate
        for attempt in (address.replace("tls://", "tcp://"), address):
            kw = {} if attempt.startswith("tcp://") else {"security": Security.temporary()}
            with pytest.raises(Exception):
                intruder = Client(attempt, timeout=3, set_as_default=False, **kw)
                intruder.close()
        ports = _listening_ports(_cluster_pids())
        assert len(ports) >= 3  # scheduler, nanny, worker at least
        assert [p for p in ports if _answers_http(p)] == []
    finally:
        client.close()
        cluster.close()


def test_dashboard_when_asked_answers_http():
    """The null case of the test above: the probe does see an HTTP server when there is one."""
    cluster, client = open_local_client(workers=1, dashboard=True)
    try:
        port = int(cluster.dashboard_link.split(":")[2].split("/")[0])
        assert _answers_http(port)
    finally:
        client.close()
        cluster.close()


# ------------------------------------------------------------- signals in scans


def test_sigterm_to_a_scan_worker_leaves_a_checkpoint_that_the_scan_continues(tmp_path, monkeypatch):
    handshake = Handshake(tmp_path / "hold")
    hold = handshake.directory
    monkeypatch.setenv("TDSE1D_TEST_HOLD", str(hold))  # inherited by the worker processes
    plan = load_plan(_plan(tmp_path))
    out = tmp_path / "out"
    point = plan.points[0]
    result = {}

    def go():
        result["report"] = run_scan(plan, out, workers=1, progress=False)

    thread = threading.Thread(target=go)
    thread.start()
    try:
        first = handshake.wait("propagation", thread.is_alive)
        assert first["resumed_from"] is None and 0 < first["step"] < first["steps"]
        os.kill(first["pid"], signal.SIGTERM)  # the worker process running the point
        cp = checkpoint_path(out / "points" / f"{point.hash}.h5")
        handshake.wait("checkpoint", thread.is_alive)
        state, _ = read_checkpoint(cp)
        assert first["step"] <= state.step_index < first["steps"]
        (hold / "go").touch()  # later attempts run through
    finally:
        (hold / "go").touch()
        thread.join(300)
    assert not thread.is_alive()
    report = result["report"]
    if point.index not in report.done:  # the interrupted record reached the scan before the worker ended
        assert report.interrupted == [point.index] or point.index in report.failed, report
        report = run_scan(plan, out, workers=1, progress=False)
    assert report.done == [point.index]
    again = [json.loads(p.read_text()) for p in hold.glob("propagation.*.json")
             if p.name != f"propagation.{first['pid']}.json"]
    assert again and all(a["resumed_from"] is not None and a["resumed_from"] >= state.step_index for a in again)
    assert result_matches(out / "points" / f"{point.hash}.h5", point.hash) and not cp.exists()


def test_sigterm_to_a_job_array_task_checkpoints_and_exits_75(tmp_path):
    handshake = Handshake(tmp_path / "hold")
    hold = handshake.directory
    plan_path = _plan(tmp_path)
    out = tmp_path / "array"
    env = {**os.environ, **handshake.environment}
    args = [sys.executable, "-m", "tdse1d.cli", "scan", str(plan_path), "-o", str(out), "--point", "0"]
    proc = subprocess.Popen(args, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        info = handshake.wait("propagation", lambda: proc.poll() is None)
        assert info["pid"] == proc.pid
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=120)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 75, err
    assert "Traceback" not in err and "checkpoint" in err
    point = load_plan(plan_path).points[0]
    result = out / "points" / f"{point.hash}.h5"
    assert checkpoint_path(result).exists() and not result.exists()
    assert not result.with_suffix(".error").exists()  # a stop is not a failure
    (hold / "go").touch()
    done = subprocess.run(args + ["--quiet"], env=env, capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert is_complete(result) and not checkpoint_path(result).exists()
    resumed = [json.loads(p.read_text()) for p in hold.glob("propagation.*.json") if p.name != f"propagation.{proc.pid}.json"]
    assert resumed and resumed[0]["resumed_from"] > 0


# ------------------------------------------------------------- one writer per scan


def _holder_process(code: str):
    """A process that runs ``code`` (taking a lock), says so on stdout, and waits for stdin."""
    proc = subprocess.Popen([sys.executable, "-c", code + "\nprint('held', flush=True)\nsys.stdin.read()\n"],
                            stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True)
    assert proc.stdout.readline().strip() == "held"
    return proc


def test_second_scan_of_a_directory_is_refused_naming_the_first(tmp_path, capsys):
    plan_path = _plan(tmp_path)
    out = tmp_path / "out"
    holder = _holder_process(f"import sys\nfrom tdse1d.scans.directory import ScanDirectory\nlock = ScanDirectory({str(out)!r}).lock()")
    try:
        assert cli.main(["scan", str(plan_path), "-o", str(out), "--quiet", "--workers", "1"]) == 1
        err = capsys.readouterr().err
        lines = [ln for ln in err.splitlines() if ln.strip()]
        assert len(lines) == 1 and f"pid {holder.pid} on host {socket.gethostname()}" in lines[0], err
        assert not (out / "points").exists()  # nothing was run
    finally:
        holder.communicate("")
    # once the first is gone, the scan runs
    assert cli.main(["scan", str(plan_path), "-o", str(out), "--quiet", "--workers", "1"]) == 0


def test_job_array_task_of_a_point_being_written_is_refused(tmp_path, capsys):
    plan_path = _plan(tmp_path)
    out = tmp_path / "array"
    point = load_plan(plan_path).points[0]
    result = out / "points" / f"{point.hash}.h5"
    result.parent.mkdir(parents=True)
    holder = _holder_process(f"import sys\nfrom tdse1d.io.guarded_file import WriterLock\n"
                             f"lock = WriterLock({str(lock_path(result))!r}).acquire()")
    try:
        assert cli.main(["scan", str(plan_path), "-o", str(out), "--point", "0", "--quiet"]) == 1
        err = capsys.readouterr().err
        assert f"pid {holder.pid}" in err and "not run" in err
        assert not result.exists() and not result.with_suffix(".error").exists()
        # --fresh does not delete what another process is writing
        assert cli.main(["scan", str(plan_path), "-o", str(out), "--fresh", "--quiet", "--workers", "1"]) == 1
        assert lock_path(result).exists()
    finally:
        holder.communicate("")
    assert cli.main(["scan", str(plan_path), "-o", str(out), "--point", "0", "--quiet"]) == 0
    assert is_complete(result)


def test_a_point_file_missing_data_is_not_skipped(tmp_path):
    plan = load_plan(_plan(tmp_path))
    out = tmp_path / "out"
    report = run_one(plan, out, 0)
    assert report.done == [0]
    path = out / "points" / f"{plan.points[0].hash}.h5"
    with h5py.File(path, "r+") as f:  # still says complete, and still holds power and acceleration
        assert f.attrs["complete"]
        del f["observables/norm"]
    assert ScanDirectory(out).state(plan.points[0]) == "todo"
    again = run_one(plan, out, 0)
    assert again.done == [0] and not again.skipped
    assert result_matches(path, plan.points[0].hash)


def test_full_disk_while_writing_the_summary_keeps_the_earlier_one(tmp_path, monkeypatch):
    import errno

    from tdse1d.io import guarded_file
    from tdse1d.scans.summary import write_summary

    plan = load_plan(_plan(tmp_path))
    out = tmp_path / "out"
    assert run_one(plan, out, 0).done == [0]
    write_summary(plan, out)
    before = (out / "summary.h5").read_bytes()

    def full(fd, data, offset):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(guarded_file.os, "pwrite", full)
    with pytest.raises(OSError) as info:
        write_summary(plan, out)
    assert info.value.errno == errno.ENOSPC
    assert (out / "summary.h5").read_bytes() == before
    assert not list(out.glob("*.tmp"))
