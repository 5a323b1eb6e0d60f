"""The two-electron validation kinds (tdse1d/validation/pair_kinds.py) on small cases.

The physics they check is tested beside tdse1d's own solvers already
(tests/test_two_electron.py: ground state and ion against an independent
finite-difference solution; tests/test_pair_run.py: gauge invariance of the yields as
a law); here the kinds themselves: that the ground-state kind passes on a small grid
where the energies are within the 1e-3 Hartree band (64 points of 0.4 bohr, as in
tests/test_two_electron.py), that its comparison fails when the reference is wrong (the
null), and that its independent solver reproduces the values remembered for the
standard 1-D helium model (-2.238 and -1.483 Hartree, from memory, 4 digits: within
5e-4 of the true ones plus the solver's own error, 1e-3 in all).
"""

from pathlib import Path

import pytest

from tdse1d.validation import pair_kinds
from tdse1d.validation.cases import Case

INPUT = """
[atom]
model = "two-electron"
charge = 2
softening = "1 bohr"
repulsion_softening = "1 bohr"

[grid]
points = 64
"""


def _case(tmp_path: Path) -> Case:
    (tmp_path / "input.toml").write_text(INPUT)
    spec = {"kind": "pair_ground_state", "input": "input.toml", "tolerance": 1e-3, "units": "hartree",
            "source": "test", "params": {"memory": {"atom": -2.238, "ion": -1.483}}}
    return Case("small_helium", tmp_path, spec)


def test_the_independent_solver_gives_the_remembered_values():
    (atom, atom_err), (ion, ion_err) = pair_kinds.extrapolated_energies(2.0, 1.0, 1.0)
    assert abs(atom - (-2.238)) < 1e-3 and abs(ion - (-1.483)) < 1e-3
    assert atom_err < 1e-4 and ion_err < 1e-4
    # null: without the repulsion the atom is two independent ions, 2 x -1.483
    (free, _), _ = pair_kinds.extrapolated_energies(2.0, 1.0, 1e3)
    assert abs(free - atom) > 0.5


def test_ground_state_kind_passes_on_a_small_grid(tmp_path):
    rows = pair_kinds.PairGroundState(_case(tmp_path), None, tmp_path).run()
    assert all(r.passed for r in rows), [(r.quantity, r.deviation) for r in rows if not r.passed]
    assert any(r.quantity.startswith("null") for r in rows)


def test_ground_state_kind_fails_a_wrong_reference(tmp_path, monkeypatch):
    # null: a reference 5e-3 Hartree off (five bands) must fail the atom's row
    right = pair_kinds.extrapolated_energies(2.0, 1.0, 1.0)
    monkeypatch.setattr(pair_kinds, "extrapolated_energies",
                        lambda *a: ((right[0][0] + 5e-3, right[0][1]), right[1]))
    rows = pair_kinds.PairGroundState(_case(tmp_path), None, tmp_path).run()
    atom = [r for r in rows if r.quantity.startswith("atom's ground state")]
    assert len(atom) == 1 and not atom[0].passed
