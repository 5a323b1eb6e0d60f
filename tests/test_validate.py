"""`tdse1d validate --quick` runs the quick validation cases, all of which pass, and writes a
report that names, per case, the reference, its source and the comparison."""

import re

from tdse1d.cli import program as cli
from tdse1d import validation as validate


def test_quick_validation_passes(tmp_path, capsys):
    out = tmp_path / "report"
    code = cli.main(["validate", "--quick", "-o", str(out)])
    captured = capsys.readouterr()
    assert code == 0, captured.out + captured.err
    text = (out / "report.md").read_text()
    quick = [c.name for c in validate.discover(quick=True)]
    assert len(quick) >= 5
    for name in quick:
        assert f"## {name}" in text
    assert "**FAIL**" not in text
    assert re.search(r"passed \d+, failed 0", text)
    for fig in re.findall(r"!\[[^]]*\]\(([^)]+)\)", text):
        assert (out / fig).stat().st_size > 1000


def test_failing_case_gives_exit_1(tmp_path, capsys):
    cases = tmp_path / "cases" / "wrong_level"
    cases.mkdir(parents=True)
    (cases / "input.toml").write_text('[atom]\nmodel = "harmonic"\ntrap_frequency = 1.0\nbound_states = 2\n'
                                      "[grid]\npoints = 128\nspacing = 0.2\n")
    # the ground level of a unit harmonic oscillator is 0.5 Hartree, not 0.6
    (cases / "case.toml").write_text('kind = "bound_energy"\nquantity = "E0"\nsource = "exact: w/2"\n'
                                     'input = "input.toml"\nreference = 0.6\nunits = "hartree"\ntolerance = 1e-6\n')
    code = cli.main(["validate", "--cases", str(tmp_path / "cases"), "-o", str(tmp_path / "r")])
    assert code == 1
    text = (tmp_path / "r" / "report.md").read_text()
    assert "**FAIL**" in text and "0.5" in text
