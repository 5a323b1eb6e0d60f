"""Problems a scan's points share are solved once, in the scan's own process, and the
points read them from the store (tdse1d.scans.presolve).

The reference is the project's own computation with no store: the store hands back the
computed arrays, so a point built after the presolve must be bit for bit the point built
alone, with no eigensolve made. Null cases: points that share nothing are not presolved,
and with the store switched off nothing is kept, so the point solves for itself.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest
from test_problem_store import INPUT as PROBLEM_STORE_INPUT

from tdse1d.input import problem as problem_module
from tdse1d.input.problem import build_problem
from tdse1d.input.spec import InputError
from tdse1d.io.problem_store import problem_store
from tdse1d.physics import states as states_module
from tdse1d.scans.plan import load_plan
from tdse1d.scans.presolve import presolve_shared, shared_problems

# the fitted argon-like atom of the store's tests (a small input of our own), scanned over the intensity
BASE = PROBLEM_STORE_INPUT.format(ip=15.76, spacing=0.4)


def _points(tmp_path, values=("1e14 W/cm^2", "1.4e14 W/cm^2")):
    (tmp_path / "base.toml").write_text(BASE)
    items = ", ".join(f'"{v}"' for v in values)
    (tmp_path / "plan.toml").write_text(f'base = "base.toml"\n[[axis]]\nkey = "laser.0.peak_intensity"\n'
                                        f'values = [{items}]\n')
    return load_plan(tmp_path / "plan.toml").points


@pytest.fixture(autouse=True)
def fresh_memo(tmp_path, monkeypatch):
    """An empty per-process memo and a store of this test's own, so only it can answer."""
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))
    problem_module._MEMO.clear()
    yield
    problem_module._MEMO.clear()


def _refuse_solves(monkeypatch):
    def refuse():
        raise AssertionError("an eigensolve was made although the scan's process solved it")

    monkeypatch.setattr(states_module, "_linalg", refuse)


def test_groups_are_the_points_with_the_same_atom_grid_and_propagation():
    def point(intensity, spacing):
        return SimpleNamespace(raw={"atom": {"ionization_potential": "15.76 eV"}, "grid": {"spacing": spacing},
                                    "laser": [{"peak_intensity": intensity}], "propagation": {}})

    a, b, c, d, e = point(1, 0.4), point(2, 0.4), point(3, 0.4), point(1, 0.3), point(2, 0.3)
    assert shared_problems([a, b, c, d, e]) == [a, d]
    # the null: points that share nothing are each solved on their worker, none here
    assert shared_problems([a, d]) == []
    assert shared_problems([]) == []


def test_a_point_reads_the_presolved_fit_and_states_bit_for_bit(tmp_path, monkeypatch):
    first, second = _points(tmp_path)
    alone = build_problem(second.config)  # no store: the reference
    problem_module._MEMO.clear()
    assert presolve_shared([first, second]) == 1
    problem_module._MEMO.clear()  # a worker's process: nothing in its memo
    _refuse_solves(monkeypatch)
    with problem_store() as store:
        read = build_problem(second.config)
        assert store.hits > 0
    assert read.potential == alone.potential and read.time.step == alone.time.step
    assert np.array_equal(read.states.energies, alone.states.energies)
    assert np.array_equal(read.states.wavefunctions, alone.states.wavefunctions)


def test_null_with_the_store_off_nothing_is_kept_and_the_point_solves(tmp_path, monkeypatch):
    first, second = _points(tmp_path)
    monkeypatch.setenv("TDSE1D_NO_STORE", "1")
    assert presolve_shared([first, second]) == 0
    monkeypatch.delenv("TDSE1D_NO_STORE")
    problem_module._MEMO.clear()
    _refuse_solves(monkeypatch)
    with problem_store(), pytest.raises(AssertionError, match="eigensolve"):
        build_problem(second.config)


def test_a_bad_point_is_left_to_report_its_own_error(tmp_path):
    """An Ip no softening reaches on this grid: the presolve solves nothing and raises
    nothing; the point's own run reports the input error."""
    from dataclasses import replace

    points = _points(tmp_path)
    bad = [SimpleNamespace(raw=p.raw, config=replace(p.config, atom=replace(p.config.atom, ionization_potential=20.0)))
           for p in points]  # 20 Hartree: no softening reaches it on this grid
    assert presolve_shared(bad) == 0
    with pytest.raises(InputError, match="ionization potential"):  # what the point itself will report
        build_problem(bad[0].config)
