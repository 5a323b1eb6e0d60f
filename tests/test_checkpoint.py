"""Checkpoints and resume: a resumed run equals an uninterrupted one, signals leave a
checkpoint, a checkpoint of another input is refused, SIGKILL leaves nothing finished.

The signal tests use the run's test handshake (``TDSE1D_TEST_HOLD``, docs/checkpoints.md):
the run announces that it reached a known point and waits there, so the signal lands
where the test means it to, however fast the machine."""

import json
import os
import signal
import socket
import subprocess
import sys

import h5py
import numpy as np
import pytest
from conftest import Handshake, small_input

from tdse1d import api
from tdse1d.runs.checkpoint import checkpoint_path, read_checkpoint
from tdse1d.input.spec import InputError
from tdse1d.input.schema import load_input
from tdse1d.input.problem import build_problem
from tdse1d.runs.runner import RunControl, RunInterrupted
from tdse1d.io.result_file import is_complete

SMALL = small_input(intensity="{intensity}", gauge="{gauge}", snapshots=7)

COMPARED = [
    "observables/norm", "observables/dipole", "observables/momentum", "observables/acceleration",
    "observables/initial_population", "observables/bound_population", "snapshots/psi", "snapshots/time",
    "final/psi", "spectra/harmonic/power", "spectra/photoelectron/surface_flux/density_left",
    "spectra/photoelectron/surface_flux/density_right", "ionization/probability",
]


def _input(tmp_path, name="in.toml", intensity="1e14 W/cm^2", gauge="length", extra=""):
    path = tmp_path / name
    path.write_text(SMALL.format(intensity=intensity, gauge=gauge) + extra)
    return path


class _StopAt:
    """Progress callback asking the run to stop once it passed ``step``."""

    def __init__(self, control, step):
        self.control, self.step = control, step

    def __call__(self, step, steps):
        if step >= self.step:
            self.control.request_stop()


def _read(path):
    with h5py.File(path, "r") as f:
        return {k: f[k][()] for k in COMPARED}


@pytest.mark.parametrize("gauge", ["length", "velocity"])
def test_resumed_run_equals_uninterrupted(tmp_path, gauge):
    cfg = load_input(_input(tmp_path, gauge=gauge))
    problem = build_problem(cfg)
    full = tmp_path / "full.h5"
    api.run_problem(problem, full)
    out = tmp_path / "cut.h5"
    # stop twice, at steps that are not analysis events, then finish
    for stop in (problem.time.steps // 3, 2 * problem.time.steps // 3):
        control = RunControl()
        with pytest.raises(RunInterrupted):
            api.run_problem(problem, out, progress=_StopAt(control, stop), resume=True, control=control)
        assert checkpoint_path(out).exists() and not out.exists()
        assert not out.with_name(out.name + ".part").exists()
        state, _ = read_checkpoint(checkpoint_path(out))
        assert stop <= state.step_index < problem.time.steps
    api.run_problem(problem, out, resume=True)
    assert is_complete(out) and not checkpoint_path(out).exists()
    a, b = _read(full), _read(out)
    for key in COMPARED:
        np.testing.assert_allclose(b[key], a[key], rtol=1e-12, atol=1e-12 * np.max(np.abs(a[key])), err_msg=key)


def test_checkpoint_of_another_input_is_refused(tmp_path):
    out = tmp_path / "r.h5"
    problem = build_problem(load_input(_input(tmp_path)))
    control = RunControl()
    with pytest.raises(RunInterrupted):
        api.run_problem(problem, out, progress=_StopAt(control, 10), control=control)
    other = build_problem(load_input(_input(tmp_path, "other.toml", intensity="2e14 W/cm^2")))
    with pytest.raises(InputError, match="different input"):
        api.run_problem(other, out, resume=True)
    # and through the command line: exit status 2, one line, no traceback
    proc = subprocess.run([sys.executable, "-m", "tdse1d.cli", "run", str(tmp_path / "other.toml"), "-o", str(out),
                           "--resume", "--quiet"], capture_output=True, text=True)
    assert proc.returncode == 2, proc.stderr
    assert "different input" in proc.stderr and "Traceback" not in proc.stderr
    assert checkpoint_path(out).exists() and not out.exists()


def test_checkpoint_format_version_and_observables_are_checked_on_read(tmp_path):
    # a checkpoint of another format version, or one missing a per-step observable of
    # this program's table, is refused in one line; the untouched one reads back
    out = tmp_path / "r.h5"
    problem = build_problem(load_input(_input(tmp_path)))
    control = RunControl()
    with pytest.raises(RunInterrupted):
        api.run_problem(problem, out, progress=_StopAt(control, 10), control=control)
    cp = checkpoint_path(out)
    state, _ = read_checkpoint(cp)  # null case: the file as written is accepted
    from tdse1d.physics.observables import per_step_names
    assert sorted(state.observables) == sorted(per_step_names())
    with h5py.File(cp, "r+") as f:
        f.attrs["format_version"] = int(f.attrs["format_version"]) + 1
    with pytest.raises(InputError, match="format version"):
        read_checkpoint(cp)
    with h5py.File(cp, "r+") as f:
        f.attrs["format_version"] = int(f.attrs["format_version"]) - 1
        del f["observables/dipole"]
    with pytest.raises(InputError, match="no per-step dipole"):
        read_checkpoint(cp)


def _start(tmp_path, out, *extra, toml_extra="", hold_at="propagation"):
    """Start ``tdse1d run`` and return once it announced it reached ``hold_at`` (and waits)."""
    path = _input(tmp_path, "slow.toml", extra=toml_extra)
    # long enough that, once released, the run is still writing checkpoints when polled
    path.write_text(path.read_text().replace('after_pulse = "0.5 fs"', 'after_pulse = "80 fs"'))
    hold = Handshake(tmp_path / f"hold-{hold_at}")
    env = {**os.environ, **hold.environment, "TDSE1D_TEST_HOLD_AT": hold_at}
    proc = subprocess.Popen([sys.executable, "-m", "tdse1d.cli", "run", str(path), "-o", str(out), "--quiet", *extra],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
    info = hold.wait(hold_at, lambda: proc.poll() is None)
    assert info["pid"] == proc.pid
    return path, proc, hold, info


def test_sigterm_writes_checkpoint_and_resume_completes(tmp_path):
    out = tmp_path / "t.h5"
    path, proc, _, info = _start(tmp_path, out)
    assert 0 < info["step"] < info["steps"]  # mid-propagation, by construction
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == 75, err
    assert "--resume" in err and "Traceback" not in err
    assert checkpoint_path(out).exists() and not out.exists()
    state, _ = read_checkpoint(checkpoint_path(out))
    assert info["step"] <= state.step_index < info["steps"]
    done = subprocess.run([sys.executable, "-m", "tdse1d.cli", "run", str(path), "-o", str(out), "--quiet", "--resume"],
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert is_complete(out) and not checkpoint_path(out).exists()
    with h5py.File(out) as f:
        norm = f["observables/norm"][()]
    assert np.all(np.isfinite(norm)) and abs(norm[0] - 1) < 1e-10


def test_sigterm_during_the_analysis_finishes_the_run(tmp_path):
    """After the last step a stop request lets the run finish its analysis and write its
    result (docs/checkpoints.md): exit status 0, a complete file, no checkpoint left."""
    out = tmp_path / "a.h5"
    _, proc, _, info = _start(tmp_path, out, hold_at="analysis")
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == 0, err
    assert "after the last time step" in err and "Traceback" not in err
    assert is_complete(out) and not checkpoint_path(out).exists()
    assert not out.with_name(out.name + ".lock").exists()


def test_sigkill_leaves_no_finished_file(tmp_path):
    out = tmp_path / "k.h5"
    # checkpoints back to back, so that the kill is likely to land inside one
    _, proc, hold, _ = _start(tmp_path, out, toml_extra='checkpoint_interval = "1 ms"\n')
    hold.release()
    cp = checkpoint_path(out)
    hold.wait("checkpoint", lambda: proc.poll() is None)
    os.kill(proc.pid, signal.SIGKILL)
    proc.communicate(timeout=60)
    assert not out.exists() and not is_complete(out.with_name(out.name + ".part"))
    assert cp.exists()
    state, _ = read_checkpoint(cp)  # the last good checkpoint, complete
    assert state.step_index > 0 and np.all(np.isfinite(state.psi))
    # the killed writer's lock is left behind; the next run on this host takes it over
    lock = out.with_name(out.name + ".lock")
    assert json.loads(lock.read_text())["host"] == socket.gethostname()
    done = subprocess.run([sys.executable, "-m", "tdse1d.cli", "run", str(tmp_path / "slow.toml"), "-o", str(out),
                           "--resume"], capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert "took over the lock" in done.stderr and f"pid {proc.pid}" in done.stderr
    assert is_complete(out) and not lock.exists()
