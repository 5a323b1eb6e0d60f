"""The memory and disk estimate of a run (tdse1d.runs.resources): it bounds what a run really
allocates, and a run that needs more than the machine has is refused before it starts."""

import json
import tracemalloc

import pytest
from conftest import small_input

from tdse1d import api
from tdse1d.cli import program as cli
from tdse1d.runs import resources
from tdse1d.input.spec import InputError
from tdse1d.input.schema import load_input
from tdse1d.input.problem import build_problem

BASE = small_input()


def _problem(*overrides):
    return build_problem(load_input("mem.toml", list(overrides), text=BASE))


def _measured_peak(problem, path):
    tracemalloc.start()
    try:
        api.run_problem(problem, path)
        return tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()


def test_estimate_bounds_the_memory_a_run_allocates(tmp_path):
    """tracemalloc sees every numpy array of the run (not the interpreter and libraries,
    which the estimate counts apart as BASE_BYTES). The estimate is used to refuse runs:
    it must not be below what the run allocates (a run it lets start must not die for
    memory), and should not be above twice that (or it refuses runs that fit in half the
    machine). Both bounds are set from that use, before measuring; checked where the
    per-step series matter: 9e3 steps with the surface flux method at 4th order (the most arrays
    per step), 1.8e4 steps at 2nd order without it (the fewest)."""
    _measured_peak(_problem("laser.0.cycles=1"), tmp_path / "warm.h5")  # compile once, outside the count
    for step, extra in (("0.05", "propagation.order=4"), ("0.025", 'spectra.photoelectrons="none"')):
        problem = _problem("laser.0.cycles=4", f"propagation.time_step={step}", extra)
        estimate = resources.estimate_resources(problem).memory - resources.BASE_BYTES
        measured = _measured_peak(problem, tmp_path / "r.h5")
        assert measured <= estimate <= 2 * measured, (extra, problem.time.steps, measured, estimate)


def test_estimate_grows_with_the_steps_and_the_snapshots():
    short, long_ = (resources.estimate_resources(_problem(f"laser.0.cycles={c}")) for c in (2, 200))
    assert long_.steps > 50 * short.steps
    # above the bounded work blocks, memory grows at least by the series kept per step
    assert long_.memory - short.memory >= 8 * 8 * (long_.steps - short.steps)
    with_snaps = resources.estimate_resources(_problem("output.snapshots=50"))
    assert with_snaps.disk_parts["snapshots, in the result and a checkpoint"] >= 2 * 50 * 256 * 16
    # more snapshots than steps are no more than one per step
    every = resources.estimate_resources(_problem("output.snapshots=1000000"))
    assert every.snapshots == every.steps + 1


def test_run_refused_above_available_memory(tmp_path, monkeypatch, capsys):
    problem = _problem("laser.0.cycles=40")
    need = resources.estimate_resources(problem).memory
    monkeypatch.setattr(resources, "available_memory", lambda: need // 2)
    calls = []
    with pytest.raises(InputError, match=r"laser\.0\.cycles.*GiB|laser\.0\.cycles.*MiB") as err:
        api.run_problem(problem, tmp_path / "r.h5", progress=lambda *a: calls.append(a))
    assert "available" in str(err.value) and "time steps" in str(err.value)
    assert not calls and list(tmp_path.iterdir()) == []  # refused before propagating
    # the null case: with enough memory the same run starts
    monkeypatch.setattr(resources, "available_memory", lambda: 4 * need)
    api.run_problem(_problem(), tmp_path / "ok.h5")
    # through the command line: one line, exit status 2, nothing written
    path = tmp_path / "in.toml"
    path.write_text(BASE)
    monkeypatch.setattr(resources, "available_memory", lambda: 1000)
    assert cli.main(["run", str(path), "-o", str(tmp_path / "c.h5"), "--quiet"]) == 2
    err = capsys.readouterr().err
    lines = [line for line in err.splitlines() if not line.startswith("tdse1d: warning:")]
    assert len(lines) == 1 and "of memory" in lines[0] and "laser.0.cycles" in lines[0]
    assert not (tmp_path / "c.h5").exists()


def test_run_refused_above_free_disk(tmp_path, monkeypatch):
    problem = _problem("output.snapshots=400")
    est = resources.estimate_resources(problem)
    monkeypatch.setattr(resources, "free_disk", lambda path: est.disk // 2)
    with pytest.raises(InputError, match="output.snapshots") as err:
        api.run_problem(problem, tmp_path / "r.h5")
    assert "free at" in str(err.value)
    assert list(tmp_path.iterdir()) == []


def test_estimate_command_shows_the_resources(tmp_path, capsys):
    path = tmp_path / "in.toml"
    path.write_text(BASE)
    assert cli.main(["estimate", str(path)]) == 0
    out = capsys.readouterr().out
    assert "memory (peak)" in out and "disk (result and checkpoint)" in out
    assert cli.main(["estimate", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["resources"]["memory_bytes"] > data["resources"]["steps"] * 8 * 8


def test_machine_probes_answer():
    assert resources.available_memory() > 0
    assert resources.free_disk("no/such/folder/r.h5") > 0  # measured where the folder will be made
    assert resources.format_bytes(19.3 * 2**30) == "19.3 GiB"
