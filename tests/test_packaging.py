"""What an installed copy of the package needs beyond its source files: the validation
cases shipped as package data and found without the source tree, the TOML reader of
the oldest declared Python, and the declared versions kept in step."""

import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from tdse1d.cli import program as cli
from tdse1d import validation as validate
from tdse1d.validation import cases
from tdse1d.input.spec import tomllib

ROOT = Path(__file__).resolve().parent.parent
PYPROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text())


def test_tomllib_is_imported_in_one_place():
    # Python 3.10 has no tomllib: every module takes the reader from tdse1d.input.spec
    offenders = []
    for path in [*(ROOT / "tdse1d").rglob("*.py"), *(ROOT / "tests").rglob("*.py")]:
        for line in path.read_text().splitlines():
            if re.match(r"\s*(import tomllib|from tomllib import)", line) and path.name != "spec.py":
                offenders.append(f"{path.relative_to(ROOT)}: {line.strip()}")
    assert not offenders


def test_classifiers_cover_the_declared_pythons():
    project = PYPROJECT["project"]
    oldest = re.fullmatch(r">=\s*3\.(\d+)", project["requires-python"]).group(1)
    declared = {int(m) for c in project["classifiers"] for m in re.findall(r"Python :: 3\.(\d+)$", c)}
    assert min(declared) == int(oldest)
    assert declared == set(range(int(oldest), max(declared) + 1))
    # .ci/run tests the oldest and the newest declared version
    ci = (ROOT / ".ci" / "run").read_text()
    assert f"3.{oldest}" in ci and f"3.{max(declared)}" in ci


def test_every_file_of_a_case_is_shipped():
    setuptools = PYPROJECT["tool"]["setuptools"]
    package = f"tdse1d.{validate.PACKAGED_CASES}"
    assert package in setuptools["packages"]
    assert setuptools["package-dir"][package] == "validation"
    patterns = setuptools["package-data"][package]
    case_files = [p for p in (ROOT / "validation").glob("*/*")
                  if p.is_file() and (p.parent / "case.toml").exists()]
    assert len(case_files) >= 2 * len(validate.discover(ROOT / "validation"))
    unshipped = [str(p.relative_to(ROOT)) for p in case_files
                 if not any(p.relative_to(ROOT / "validation").match(pat) for pat in patterns)]
    assert not unshipped


def test_installed_layout_finds_the_cases(tmp_path):
    """A copy of the package laid out as a wheel installs it (the cases inside as
    tdse1d/validation_cases, no validation/ beside it) finds every case."""
    site = tmp_path / "site"
    shutil.copytree(ROOT / "tdse1d", site / "tdse1d", ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copytree(ROOT / "validation", site / "tdse1d" / validate.PACKAGED_CASES,
                    ignore=shutil.ignore_patterns("benchmarks", "__pycache__"))
    code = ("import sys; from tdse1d import validation as validate; d = validate.default_cases_dir(); "
            "print(d); print(' '.join(c.name for c in validate.discover()))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=tmp_path,
                          env={"PYTHONPATH": str(site), "PATH": "/usr/bin:/bin"})
    assert proc.returncode == 0, proc.stderr
    folder, names = proc.stdout.splitlines()
    assert Path(folder) == site / "tdse1d" / validate.PACKAGED_CASES
    assert names.split() == [c.name for c in validate.discover(ROOT / "validation")]


def test_no_cases_found_is_one_line(tmp_path, capsys, monkeypatch):
    # the package without its cases (as a wheel built without package data was)
    monkeypatch.setattr(cases, "case_dirs_searched", lambda: [tmp_path / "a", tmp_path / "b"])
    assert cli.main(["validate", "-o", str(tmp_path / "r")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "no validation cases found" in err and str(tmp_path / "a") in err
    assert not (tmp_path / "r").exists()


@pytest.mark.parametrize("args, expected", [
    (["--cases", "EMPTY"], "no validation cases"),
    (["--cases", "MISSING"], "no such folder"),
    (["--only", "no_such_case"], "no case named no_such_case"),
])
def test_validate_without_cases_to_run_says_why(args, expected, tmp_path, capsys):
    (tmp_path / "EMPTY").mkdir()
    args = [str(tmp_path / a) if a in ("EMPTY", "MISSING") else a for a in args]
    assert cli.main(["validate", *args, "-o", str(tmp_path / "r")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and expected in err, err
