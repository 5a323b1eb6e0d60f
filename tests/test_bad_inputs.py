"""Malformed inputs are refused by the command line: exit 2, the key named, no traceback,
no file written (inputs through ``tdse1d run``, scan plans in tests/bad_inputs/scans/
through ``tdse1d scan``). Each file starts with ``# expect: FRAGMENT``, the
part of the message that must appear (the dotted key, or the kind of fault).

A property-based test feeds random values into every numeric key and checks that
``tdse1d estimate`` either succeeds or refuses cleanly with exit status 2.
"""

import math
import os
import subprocess
import sys
from pathlib import Path

import pytest
from conftest import small_input
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from tdse1d.cli import program as cli

HERE = Path(__file__).parent / "bad_inputs"
CASES = sorted(HERE.glob("*.toml"))


def _expected(path):
    first = path.read_bytes().split(b"\n", 1)[0].decode()  # the rest may not be text
    assert first.startswith("# expect: "), path
    return first[len("# expect: "):].strip()


def test_corpus_is_large_and_covers_every_key():
    from tdse1d.input.schema import _SECTIONS, AtomConfig, CentreConfig, LaserConfig
    import dataclasses

    assert len(CASES) >= 40 and len(SCANS) >= 10
    named = " ".join(_expected(p) for p in CASES)
    keys = [f"atom.{f.name}" for f in dataclasses.fields(AtomConfig) if "spec" in f.metadata]
    from tdse1d.physics.potentials import POTENTIALS
    keys += [f"atom.{p.name}" for cls in POTENTIALS.values() for p in cls.parameters]  # each model's own
    keys += [f"laser.0.{f.name}" for f in dataclasses.fields(LaserConfig) if "spec" in f.metadata]
    keys += [f"{s}.{f.name}" for s, cls in _SECTIONS.items() for f in dataclasses.fields(cls) if "spec" in f.metadata]
    missing = [k for k in keys if k not in named]
    assert not missing, f"no bad input names {missing}"
    assert any(f".centre." in _expected(p) for p in CASES)
    assert any("syntax" in _expected(p) for p in CASES)


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_bad_input_refused(path, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    out = tmp_path / "out.h5"
    code = cli.main(["run", str(path), "-o", str(out), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2, err
    assert _expected(path) in err, err
    assert "Traceback" not in err
    # one error line (after the warnings a run gives before it starts, if any)
    lines = [line for line in err.splitlines() if not line.startswith("tdse1d: warning: ")]
    assert len(lines) == 1 and lines[0].startswith("tdse1d: error: "), err
    assert list(tmp_path.iterdir()) == []


def test_refusals_do_not_echo_file_contents(tmp_path, capsys, monkeypatch):
    # a field table or an input that is not what it should be may hold anything: the
    # message says where the fault is, never what the file says
    monkeypatch.chdir(tmp_path)
    for name in ("laser_field_file_text.toml", "syntax_not_utf8.toml"):
        assert cli.main(["run", str(HERE / name), "-o", str(tmp_path / "o.h5"), "--quiet"]) == 2
        err = capsys.readouterr().err
        assert "PRIVATE-NOTE" not in err and err.count("\n") == 1, err
    cli.main(["run", str(HERE / "laser_field_file_text.toml"), "-o", str(tmp_path / "o.h5"), "--quiet"])
    assert "row 1, column 2" in capsys.readouterr().err


#: cases too large to keep as files: (name, input text, expected fragment)
GENERATED = [
    ("quantity_100kB", lambda base: base.replace('"800 nm"', '"' + "8" * 100_000 + ' nm"'),
     "laser.0.wavelength': a quantity of 100003 characters is too long"),
    ("unit_100kB", lambda base: base.replace('"800 nm"', '"800 ' + "n" * 100_000 + 'm"'),
     "laser.0.wavelength': a quantity of 100005 characters is too long"),
]


@pytest.mark.parametrize("name, make, expected", GENERATED, ids=[g[0] for g in GENERATED])
def test_generated_bad_input_refused_at_once(name, make, expected, tmp_path, capsys, monkeypatch):
    """A 100 kB quantity string took the unit parser over a minute; now it is refused
    before parsing (the refusal does not depend on timing, only on the length)."""
    monkeypatch.chdir(tmp_path)
    base = (HERE / "absorber_type_unknown.toml").read_text().replace('type = "sponge"', 'type = "mask"')
    path = tmp_path / "in.toml"
    path.write_text(make(base))
    code = cli.main(["run", str(path), "-o", str(tmp_path / "out.h5"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and expected in err and err.count("\n") == 1, err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["in.toml"]


SCANS = sorted((HERE / "scans").glob("*.toml"))


@pytest.mark.parametrize("path", SCANS, ids=[p.stem for p in SCANS])
def test_bad_scan_plan_refused(path, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code = cli.main(["scan", str(path), "-o", str(tmp_path / "scan_dir"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2, err
    assert _expected(path) in err, err
    assert "Traceback" not in err and err.startswith("tdse1d: error: ")
    assert list(tmp_path.iterdir()) == []  # no scan directory, no point run


def test_bad_input_refused_by_a_real_process(tmp_path):
    path = HERE / "laser_wavelength_bare_number.toml"
    proc = subprocess.run([sys.executable, "-m", "tdse1d.cli", "states", str(path)], capture_output=True, text=True,
                          cwd=tmp_path)
    assert proc.returncode == 2
    assert "laser.0.wavelength" in proc.stderr and "Traceback" not in proc.stderr
    assert list(tmp_path.iterdir()) == []


# ------------------------------------------------------------------ property test

GOOD = small_input(after_pulse=None, snapshots=None)

#: every numeric key of the input (quantities, ints, floats), as --set paths
NUMERIC_KEYS = [
    "atom.charge", "atom.softening", "atom.bound_states", "atom.initial_state",
    "laser.0.wavelength", "laser.0.peak_intensity", "laser.0.cycles", "laser.0.cep", "laser.0.delay",
    "laser.0.chirp", "laser.0.ramp_cycles",
    "grid.points", "grid.spacing",
    "propagation.time_step", "propagation.after_pulse", "propagation.order",
    "absorber.width", "absorber.exponent", "absorber.strength",
    "output.snapshots", "output.snapshot_stride", "output.population_interval", "output.checkpoint_interval",
]
UNITS = ["", " nm", " eV", " fs", " W/cm^2", " bohr", " au", " V/m", " rad", " s"]

numbers = st.one_of(
    st.integers(min_value=-10**12, max_value=10**12),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0, -0, 1e-300, 1e300, -1e300, 1, 2, 3, 4, 16, 256, 257]),
)
values = st.one_of(
    numbers.map(lambda v: repr(v) if not (isinstance(v, float) and not math.isfinite(v)) else
                {"nan": "nan", "inf": "inf", "-inf": "-inf"}[repr(v)]),
    st.tuples(numbers, st.sampled_from(UNITS)).map(lambda t: f'"{t[0]!r}{t[1]}"'),
    st.text(max_size=8).map(lambda s: '"' + s.replace("\\", "").replace('"', "") + '"'),
    st.sampled_from(["true", "[]", "[1, -2]", "{a = 1}", '"auto"', "[1.5]"]),
)


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(key=st.sampled_from(NUMERIC_KEYS), value=values)
@example(key="propagation.order", value="[]")  # an array for a choice: once a TypeError traceback
def test_random_values_never_crash(key, value, tmp_path_factory, capsys):
    path = tmp_path_factory.mktemp("prop") / "in.toml"
    path.write_text(GOOD)
    code = cli.main(["estimate", str(path), "--set", f"{key}={value}"])
    err = capsys.readouterr().err
    assert code in (0, 2), err
    assert "Traceback" not in err
    if code == 2:
        assert err.startswith("tdse1d: error: ")
