"""The store of solved problem parts (tdse1d.io.problem_store): a stored answer is the
answer the code computes, bit for bit; a changed input, changed code or a damaged file
is never answered from the store.

The reference is the project's own computation with no store (the store claims to
return exactly what the functions return, so equality to the last bit is the only
tolerance that states that claim). The null case is a store whose key leaves out the
arguments: it returns the answer of another input, and the staleness check below
catches it.
"""

from __future__ import annotations

import numpy as np
import pytest

from tdse1d.input import problem as problem_module
from tdse1d.input.problem import build_problem
from tdse1d.input.schema import load_input
from tdse1d.io.problem_store import ProblemStore, problem_store
from tdse1d.physics import states as states_module

# a small, fast input of our own: a fitted argon-like atom, 2 cycles, a coarse box
INPUT = """
[atom]
ionization_potential = "{ip} eV"

[[laser]]
wavelength = "800 nm"
peak_intensity = "1e14 W/cm^2"
envelope = "sin2"
cycles = 2

[grid]
points = 512
spacing = {spacing}

[propagation]
after_pulse = "0.5 fs"
"""


def _config(tmp_path, ip=15.76, spacing=0.4, name="in.toml"):
    path = tmp_path / name
    path.write_text(INPUT.format(ip=ip, spacing=spacing))
    return load_input(path)


@pytest.fixture(autouse=True)
def fresh_memo():
    """Each build starts with an empty per-process memo, so only the store can answer."""
    problem_module._MEMO.clear()
    yield
    problem_module._MEMO.clear()


def _numbers(p):
    return (p.potential.centres[0].softening, p.time.step, p.states.energies.copy(), p.states.wavefunctions.copy(),
            tuple(e.barrier_suppression_field for e in p.pulse_estimates))


def _same(a, b):
    return (a[0] == b[0] and a[1] == b[1] and np.array_equal(a[2], b[2]) and np.array_equal(a[3], b[3])
            and np.array_equal(np.array(a[4]), np.array(b[4]), equal_nan=True))


def _no_solves(monkeypatch):
    def refuse():
        raise AssertionError("an eigensolve was made although the store holds the answer")

    monkeypatch.setattr(states_module, "_linalg", refuse)


def test_stored_answers_are_the_computed_ones_bit_for_bit(tmp_path, monkeypatch):
    config = _config(tmp_path)
    fresh = _numbers(build_problem(config))                    # no store installed
    problem_module._MEMO.clear()
    with problem_store(tmp_path / "store") as store:
        first = _numbers(build_problem(config))
        assert store.hits == 0 and store.misses > 0
    assert _same(fresh, first)
    problem_module._MEMO.clear()
    _no_solves(monkeypatch)
    with problem_store(tmp_path / "store") as store:
        second = _numbers(build_problem(config))
        assert store.misses == 0 and store.hits >= 5          # fits, ground state, states, step, barrier
    assert _same(fresh, second)


@pytest.mark.parametrize("change", [dict(ip=13.6), dict(spacing=0.35)])
def test_a_changed_input_misses(tmp_path, change):
    with problem_store(tmp_path / "store"):
        build_problem(_config(tmp_path))
    problem_module._MEMO.clear()
    other = _config(tmp_path, name="other.toml", **change)
    expected = _numbers(build_problem(other))                  # computed, no store
    problem_module._MEMO.clear()
    with problem_store(tmp_path / "store") as store:
        got = _numbers(build_problem(other))
        assert store.misses > 0
    assert _same(expected, got)


def test_a_changed_tolerance_misses_the_step(tmp_path):
    config = _config(tmp_path)
    with problem_store(tmp_path / "store"):
        build_problem(config)
    problem_module._MEMO.clear()
    tight = load_input(config.source, ["propagation.tolerance=1e-9"])
    with problem_store(tmp_path / "store") as store:
        p = build_problem(tight)
        assert store.misses >= 1
    assert p.time.step < build_problem(config).time.step


def test_changed_code_misses(tmp_path):
    config = _config(tmp_path)
    problem_module.use_store(ProblemStore(tmp_path / "store", fingerprint="code A"))
    try:
        build_problem(config)
        problem_module._MEMO.clear()
        other = ProblemStore(tmp_path / "store", fingerprint="code B")
        problem_module.use_store(other)
        build_problem(config)
        assert other.hits == 0
    finally:
        problem_module.use_store(None)


def test_damaged_files_are_ignored_and_replaced(tmp_path):
    config = _config(tmp_path)
    expected = _numbers(build_problem(config))
    problem_module._MEMO.clear()
    with problem_store(tmp_path / "store"):
        build_problem(config)
    files = sorted((tmp_path / "store").glob("*.npz"))
    assert files
    for k, f in enumerate(files):
        # garbage, a truncated file, and a valid archive of the wrong shape in turn
        if k % 3 == 0:
            f.write_bytes(b"not a numpy archive")
        elif k % 3 == 1:
            f.write_bytes(f.read_bytes()[:40])
        else:
            np.savez(f, key=np.array("another key"), kind=np.array("float"), value=np.array(1.0))
    problem_module._MEMO.clear()
    with problem_store(tmp_path / "store") as store:
        got = _numbers(build_problem(config))
        assert store.hits == 0
    assert _same(expected, got)
    problem_module._MEMO.clear()
    with problem_store(tmp_path / "store") as store:         # replaced by good files
        assert _same(expected, _numbers(build_problem(config)))
        assert store.misses == 0


class _KeyWithoutArguments(ProblemStore):
    """The null store: its key names the function only."""

    def key_text(self, name, args, kwargs):
        return super().key_text(name, (), ())


def test_null_a_key_without_the_arguments_returns_stale_answers(tmp_path):
    problem_module.use_store(_KeyWithoutArguments(tmp_path / "null"))
    try:
        build_problem(_config(tmp_path))
        problem_module._MEMO.clear()
        other = _config(tmp_path, ip=13.6, name="other.toml")
        stale = _numbers(build_problem(other))
    finally:
        problem_module.use_store(None)
    problem_module._MEMO.clear()
    assert not _same(_numbers(build_problem(other)), stale)   # the check above would catch it


def test_no_store_when_switched_off(tmp_path, monkeypatch):
    monkeypatch.setenv("TDSE1D_NO_STORE", "1")
    with problem_store(tmp_path / "store") as store:
        build_problem(_config(tmp_path))
    assert store is None
    assert not (tmp_path / "store").exists()
