"""Checkpoints and ``--resume`` for runs of the two-electron atom (docs/checkpoints.md).

A small run (48^2 points, 272 steps) is stopped by SIGTERM at its first chunk boundary
through the run's test handshake (conftest.Handshake: the run announces where it is and
waits, no sleeps), leaves a checkpoint and exits 75; ``tdse1d run --resume`` then writes
a result file equal to an uninterrupted run's to the bit: every dataset and every
attribute but the writer's token and the wall time. The resumed run takes the same
steps from the same state with the same sums (the region readings' absorbed norm is
in the checkpoint), so nothing less than equality is expected (an exact law, no
tolerance). The runs go through the command line, which keeps FFTW's wisdom between
processes (in the suite's private cache), so the three processes use the same plans.

Nulls: a checkpoint whose absorbed norm was zeroed gives a different file (so the
comparison sees a resume that drops the readings' history, and the resumed run does
start from the checkpoint, not from the beginning); a checkpoint of a different input
is refused in one line with exit status 2.
"""

import os
import shutil
import signal
import subprocess
import sys

import h5py
import numpy as np
import pytest
from conftest import Handshake, small_pair_input

from tdse1d.runs.checkpoint import checkpoint_path
from tdse1d.runs.pair_checkpoint import read_pair_checkpoint


#: what differs between two runs of one input however they ran: the writer's token and
#: the wall-clock time of the propagation
NOT_COMPARED = {"@writer", "two_electron@wall_time"}


def _cli(*args, env=None):
    return subprocess.run([sys.executable, "-m", "tdse1d.cli", *map(str, args)], capture_output=True, text=True,
                          timeout=300, env=env)


def _contents(path) -> dict:
    """Every dataset and attribute of a file, by path (``group@name`` for attributes)."""
    out = {}
    with h5py.File(path, "r") as f:
        def visit(name, obj):
            if isinstance(obj, h5py.Dataset):
                out[name] = obj[()]
            for key, value in obj.attrs.items():
                out[f"{name}@{key}"] = value

        visit("", f)
        f.visititems(visit)
    return {k: v for k, v in out.items() if k not in NOT_COMPARED}


def _differences(a: dict, b: dict) -> list:
    """Keys whose values are not the same bits (NaN equals NaN), and keys in one only."""
    bad = sorted(set(a) ^ set(b))
    for key in set(a) & set(b):
        x, y = np.asarray(a[key]), np.asarray(b[key])
        if x.dtype.kind in "OSU":
            same = x.shape == y.shape and bool(np.all(x == y))
        else:
            same = x.shape == y.shape and x.dtype == y.dtype and x.tobytes() == y.tobytes()
        if not same:
            bad.append(key)
    return bad


@pytest.fixture(scope="module")
def interrupted(tmp_path_factory):
    """An uninterrupted run's file, and the checkpoint a SIGTERM left (kept aside)."""
    base = tmp_path_factory.mktemp("pair-resume")
    path = base / "he.toml"
    path.write_text(small_pair_input(field=0.3, snapshots=5))
    full = base / "full.h5"
    done = _cli("run", path, "-o", full, "--quiet")
    assert done.returncode == 0, done.stderr
    hold = Handshake(base / "hold")
    out = base / "cut.h5"
    proc = subprocess.Popen([sys.executable, "-m", "tdse1d.cli", "run", str(path), "-o", str(out), "--quiet"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            env={**os.environ, **hold.environment})
    try:
        info = hold.wait("propagation", lambda: proc.poll() is None)
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=120)
    finally:
        if proc.poll() is None:
            proc.kill()
        hold.close()
    assert proc.returncode == 75, err
    assert "--resume" in err and "Traceback" not in err
    assert 0 < info["step"] < info["steps"]  # mid-propagation, by construction
    cp = checkpoint_path(out)
    assert cp.exists() and not out.exists() and not out.with_name(out.name + ".part").exists()
    kept = base / "kept.checkpoint"
    shutil.copy(cp, kept)
    return {"input": path, "full": full, "checkpoint": kept, "step": info["step"], "steps": info["steps"]}


def _resume_from(checkpoint, input_path, out, tamper=None):
    shutil.copy(checkpoint, checkpoint_path(out))
    if tamper is not None:
        with h5py.File(checkpoint_path(out), "r+") as f:
            tamper(f)
    return _cli("run", input_path, "-o", out, "--resume", "--quiet")


def test_the_checkpoint_holds_the_state_at_the_stop(interrupted):
    state = read_pair_checkpoint(interrupted["checkpoint"])
    assert interrupted["step"] <= state.step_index < interrupted["steps"]
    assert state.psi.shape == (48, 48) and np.all(np.isfinite(state.psi))
    norm = state.observables["norm"]
    # recorded up to the stop, NaN after it (every step is a record step here)
    assert np.all(np.isfinite(norm[:state.step_index + 1])) and np.all(np.isnan(norm[state.step_index + 1:]))
    assert state.absorbed.shape == (3, 3)


def test_resumed_run_equals_an_uninterrupted_one_to_the_bit(interrupted, tmp_path):
    out = tmp_path / "resumed.h5"
    done = _resume_from(interrupted["checkpoint"], interrupted["input"], out)
    assert done.returncode == 0, done.stderr
    assert out.exists() and not checkpoint_path(out).exists()
    full, resumed = _contents(interrupted["full"]), _contents(out)
    assert "two_electron/regions/double_ionization" in full and "two_electron/snapshots/density" in full
    assert _differences(full, resumed) == []


def test_null_a_checkpoint_without_the_absorbed_norm_gives_another_file(interrupted, tmp_path):
    # the absorbers have taken norm before the stop (else zeroing it would change nothing)
    assert np.any(read_pair_checkpoint(interrupted["checkpoint"]).absorbed > 0)
    out = tmp_path / "tampered.h5"

    def zero_absorbed(f):
        f["regions/absorbed"][...] = 0.0

    done = _resume_from(interrupted["checkpoint"], interrupted["input"], out, tamper=zero_absorbed)
    assert done.returncode == 0, done.stderr
    bad = _differences(_contents(interrupted["full"]), _contents(out))
    # the absorbers lie beyond every radius, so they take norm from the ionized regions only
    assert "two_electron/regions/single_ionization" in bad and "two_electron/regions/double_ionization" in bad


def test_a_checkpoint_of_another_input_is_refused_in_one_line(interrupted, tmp_path):
    other = tmp_path / "other.toml"
    other.write_text(small_pair_input(field=0.31, snapshots=5))
    out = tmp_path / "other.h5"
    done = _resume_from(interrupted["checkpoint"], other, out)
    assert done.returncode == 2, done.stderr
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and "different input" in lines[0] and "Traceback" not in done.stderr
    assert checkpoint_path(out).exists() and not out.exists()  # the checkpoint is left alone


def test_a_stop_after_the_last_step_lets_the_run_finish(interrupted, tmp_path):
    """As for one electron (docs/checkpoints.md): a SIGTERM while the run analyses and
    writes its result finishes it, exit status 0, a complete file, no checkpoint."""
    from tdse1d.io.result_file import is_complete

    hold = Handshake(tmp_path / "hold")
    out = tmp_path / "late.h5"
    proc = subprocess.Popen([sys.executable, "-m", "tdse1d.cli", "run", str(interrupted["input"]), "-o", str(out),
                             "--quiet"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            env={**os.environ, **hold.environment, "TDSE1D_TEST_HOLD_AT": "analysis"})
    try:
        hold.wait("analysis", lambda: proc.poll() is None)
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=120)
    finally:
        if proc.poll() is None:
            proc.kill()
        hold.close()
    assert proc.returncode == 0, err
    assert "after the last time step" in err and "Traceback" not in err
    assert is_complete(out) and not checkpoint_path(out).exists()
    assert _differences(_contents(interrupted["full"]), _contents(out)) == []


def test_two_stops_in_the_velocity_gauge_at_fourth_order_resume_to_the_bit(tmp_path):
    """In one process (the same FFTW plans): stopped twice through the library's
    RunControl, in the other gauge and with a fourth-order scheme, the resumed file
    equals the uninterrupted one to the bit."""
    from tdse1d import api
    from tdse1d.input.pair_problem import build_pair_problem
    from tdse1d.input.schema import load_input
    from tdse1d.runs.runner import RunControl, RunInterrupted

    path = tmp_path / "hev.toml"
    path.write_text(small_pair_input(field=0.3, snapshots=5, propagation='gauge = "velocity"\norder = 4'))
    problem = build_pair_problem(load_input(path))
    full = api.run(problem, tmp_path / "full.h5").path
    out = tmp_path / "cut.h5"
    steps = problem.time.steps
    for stop in (steps // 3, 2 * steps // 3):
        control = RunControl()

        def ask(step, _steps, control=control, stop=stop):
            if step >= stop:
                control.request_stop()

        with pytest.raises(RunInterrupted):
            api.run(problem, out, progress=ask, control=control, resume=True)
        assert stop <= read_pair_checkpoint(checkpoint_path(out)).step_index < steps
    api.run(problem, out, resume=True)
    assert not checkpoint_path(out).exists()
    assert _differences(_contents(full), _contents(out)) == []
