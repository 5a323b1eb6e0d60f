"""The library functions (tdse1d.api) against the commands: each command is a thin layer
over one function, so what the command prints must be what the function's object holds
(one route against the other, in this process, no subprocess). And every object they
return has a short repr, so a notebook cell showing one stays a line or two.

The case is a tiny run (256 points, one cycle, about a second). These are checks of
the interface, not of the physics: the physics of the same numbers is tested against
outside references in the other test files.
"""

import json
import math
import types
from pathlib import Path

import numpy as np
import pytest
from conftest import small_input

from tdse1d import api
from tdse1d.cli import program as cli
from tdse1d.input.schema import load_input

TINY = small_input(cycles=1, absorber_width="15 bohr", after_pulse="0.2 fs", snapshots=3)

#: invented demo data (a made-up measured spectrum, not a measurement)
DEMO_CSV = "# x: photon_energy eV\n2, 1\n10, 0.5\n20, 0.01\n30, 0.001\n"

#: a notebook cell shows a repr in full; a few lines at most (common practice, no source)
REPR_LIMIT = 300


@pytest.fixture(scope="module")
def case(tmp_path_factory):
    root = tmp_path_factory.mktemp("library")
    (root / "tiny.toml").write_text(TINY)
    (root / "measured.csv").write_text(DEMO_CSV)
    outcome = api.run(load_input(root / "tiny.toml"), root / "tiny.h5")
    return types.SimpleNamespace(root=root, input=root / "tiny.toml", path=outcome.path, outcome=outcome,
                                 csv=root / "measured.csv")


def _out(capsys, argv):
    assert cli.main([str(a) for a in argv]) == 0
    return capsys.readouterr().out


# ------------------------------------------------------------------ one route vs the other


def test_states_prints_what_find_states_returns(case, capsys):
    found = api.find_states(case.input, count=2)
    assert json.loads(_out(capsys, ["states", case.input, "--count", "2", "--json"])) == found.to_json()
    lines = _out(capsys, ["states", case.input, "--count", "2"]).splitlines()[3:]
    assert len(lines) == len(found.states.energies) == 2
    for line, e, r in zip(lines, found.states.energies, found.rms_extent):
        n, energy, _, extent = line.split()
        assert float(energy) == pytest.approx(e, abs=1e-12) and float(extent) == pytest.approx(r, abs=1e-3)
    assert api.states is api.find_states  # the command's name for the same function


def test_estimate_prints_what_estimate_returns(case, capsys):
    numbers = api.estimate(case.input)
    printed = json.loads(_out(capsys, ["estimate", case.input, "--json"]))
    assert printed == numbers.to_json()
    assert printed["resources"]["steps"] == numbers.resources.steps > 0
    # the null case: without the resources the two would differ
    assert api.estimate(case.input, resources=False).to_json() != printed


def test_run_prints_what_run_returns(case, capsys, tmp_path):
    out = _out(capsys, ["run", case.input, "-o", tmp_path / "again.h5"])
    line = next(s for s in out.splitlines() if "ionization probability" in s)
    printed = float(line.split()[2])
    # the run is deterministic: the command's run and the library's agree to the 5 digits printed
    assert printed == pytest.approx(case.outcome.result.ionization_probability, rel=1e-4)
    assert f"wrote {tmp_path / 'again.h5'}" in out


def test_report_prints_what_report_returns(case, capsys):
    report = api.report(case.path)
    assert json.loads(_out(capsys, ["report", case.path, "--json"])) == json.loads(json.dumps(report.to_json()))
    assert _out(capsys, ["report", case.path]) == report.table() + "\n" == str(report) + "\n"
    assert {r.quantity for r in report.rows} >= {"ionization potential Ip", "harmonic cutoff"}


def test_export_prints_what_export_returns(case, capsys):
    table = api.export(case.path, "harmonic", "eV")
    lines = _out(capsys, ["export", case.path, "--what", "harmonic", "--units", "eV"]).splitlines()
    assert lines[0] == table.header == "photon_energy [eV],harmonic_order [1],power [a.u.]"
    printed = np.loadtxt(lines[1:], delimiter=",")
    np.testing.assert_allclose(printed, table.data, rtol=1e-9)  # %.10g: ten digits
    assert table.path is None
    np.testing.assert_allclose(table.column("harmonic_order") * table.column("photon_energy")[1] /
                               table.column("harmonic_order")[1], table.column("photon_energy"), rtol=1e-9)


def test_plot_prints_the_files_plot_returns(case, capsys, tmp_path):
    printed = _out(capsys, ["plot", case.path, "--what", "all", "-o", tmp_path / "cli.png"]).splitlines()
    figures = api.plot(case.path, "all", tmp_path / "lib.png")
    assert [s.replace("cli-", "lib-") for s in printed] == [f"wrote {p}" for p in figures.paths]
    assert all(p.stat().st_size > 5_000 for p in figures.paths)


def test_compare_prints_what_compare_returns(case, capsys):
    result = api.compare(case.path, case.csv, resolution=0.5)
    printed = json.loads(_out(capsys, ["compare", case.path, case.csv, "--resolution", "0.5", "--json"]))
    assert printed == json.loads(json.dumps(result.to_json()))
    text = _out(capsys, ["compare", case.path, case.csv, "--resolution", "0.5"])
    assert text.startswith(f"cutoff computed ({result.label})")


def test_scan_point_and_gather_print_what_scan_returns(case, capsys, tmp_path):
    (tmp_path / "tiny.toml").write_text(TINY)
    plan = tmp_path / "plan.toml"
    plan.write_text('base = "tiny.toml"\n[[axis]]\nkey = "laser.0.peak_intensity"\nvalues = ["1e14 W/cm^2"]\n')
    one = api.scan(plan, tmp_path / "lib", point=0)
    assert one.mode == "point" and one.missing == () and one.result(0).exists()
    out = _out(capsys, ["scan", plan, "-o", tmp_path / "cli", "--point", "0"])
    assert out.startswith("point 0 done in ")
    assert out.endswith(f" -> {tmp_path / 'cli' / one.result(0).relative_to(tmp_path / 'lib')}\n")
    gathered = api.scan(plan, tmp_path / "lib", gather=True)
    assert gathered.summary is not None and Path(gathered.summary.path).exists()
    out = _out(capsys, ["scan", plan, "-o", tmp_path / "cli", "--gather"])
    assert out.splitlines()[0] == f"wrote {tmp_path / 'cli' / Path(gathered.summary.path).name} (1 of 1 points)"
    listed = api.scan(plan, tmp_path / "lib", listing=True)
    assert listed.states == {0: "done"}
    assert _out(capsys, ["scan", plan, "-o", tmp_path / "lib", "--list"]).rstrip().endswith("[done]")


# ------------------------------------------------------------------ short reprs


def test_every_returned_object_has_a_short_repr(case, tmp_path):
    (tmp_path / "tiny.toml").write_text(TINY)
    plan = tmp_path / "plan.toml"
    plan.write_text('base = "tiny.toml"\n[[axis]]\nkey = "laser.0.peak_intensity"\nvalues = ["1e14 W/cm^2"]\n')
    api.scan(plan, tmp_path / "scan", point=0)
    validation = api.campaigns.ValidationReport(
        [types.SimpleNamespace(case=types.SimpleNamespace(name=f"case{k}"), passed=k != 1) for k in range(3)],
        tmp_path / "report.md", 12.0, {"suite": "quick"})
    objects = {
        "run": case.outcome,
        "states": api.find_states(case.input),
        "estimate": api.estimate(case.input),
        "report": api.report(case.path),
        "plot": api.plot(case.path, "all", tmp_path / "f.png"),
        "export": api.export(case.path, "photoelectron", "eV", tmp_path / "pe.csv"),
        "compare": api.compare(case.path, case.csv),
        "scan": api.scan(plan, tmp_path / "scan", gather=True),
        "validate": validation,
    }
    lengths = {name: len(repr(o)) for name, o in objects.items()}
    assert all(n <= REPR_LIMIT for n in lengths.values()), lengths
    assert all(repr(o).startswith("<") for o in objects.values())
    assert "tiny.h5" in repr(case.outcome) and "P_ion" in repr(case.outcome)
    assert "2 passed, 1 failed" in repr(validation)
    # the null case: the objects inside (the run's arrays) would flood the cell, so the
    # limit is a real test of the reprs above, not a bound anything meets
    assert len(repr(case.outcome.result)) > REPR_LIMIT
    assert math.isfinite(case.outcome.result.ionization_probability)


# ------------------------------------------------------------------ interrupted writes


def test_an_interrupted_figure_or_table_leaves_the_earlier_file(case, tmp_path, monkeypatch):
    """plot and export write to a temporary name and rename when done: a write that
    fails half-way leaves the earlier file byte for byte, and no temporary file behind.
    Null: the same failing writer aimed at the final name truncates it, so the byte
    comparison would catch a plot or export that wrote in place."""
    import matplotlib.figure

    from tdse1d.api import results as results_module

    figure = api.plot(case.path, "harmonic", tmp_path / "h.png").paths[0]
    table = api.export(case.path, "harmonic", "eV", tmp_path / "h.csv").path
    before = {p: p.read_bytes() for p in (figure, table)}

    def failing_savefig(self, fname, **kwargs):
        Path(fname).write_bytes(b"half a figure")
        raise OSError(28, "No space left on device")

    def failing_write(self, file):
        Path(file).write_bytes(b"half a table")
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(matplotlib.figure.Figure, "savefig", failing_savefig)
    monkeypatch.setattr(results_module.Table, "write", failing_write)
    with pytest.raises(OSError):
        api.plot(case.path, "harmonic", tmp_path / "h.png")
    with pytest.raises(OSError):
        api.export(case.path, "harmonic", "eV", tmp_path / "h.csv")
    assert {p: p.read_bytes() for p in before} == before
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(p.name for p in before)
    # the null: written in place, the same failure leaves a truncated file
    with pytest.raises(OSError):
        failing_write(None, table)
    assert table.read_bytes() != before[table]
