"""Numerical-health checks during a run: each symptom is provoked on a small grid and
reported with step and time, a sound run reports none, and --strict makes them errors."""

import os

import h5py
import pytest
from conftest import small_input

from tdse1d.cli import program as cli
from tdse1d.input.schema import load_input
from tdse1d.input.problem import build_problem
from tdse1d.physics.propagation import NumericalError
from tdse1d.runs.runner import simulate

BASE = small_input(points=1024, spacing=0.2, time_step=0.1, after_pulse="1.5 fs", photoelectrons="none")


def _warnings(*sets, strict=False):
    problem = build_problem(load_input("health.toml", list(sets), text=BASE))
    result = simulate(problem, strict=strict)
    return result.warnings[len(problem.warnings):]


def test_sound_run_reports_nothing():
    # 40-bohr absorbers, 0.2 bohr spacing for electrons of at most ~2.6 a.u.
    assert _warnings("absorber.width=40.0") == []


def test_thin_hard_absorber_reflects():
    # a 2-bohr layer removing almost everything in one step acts as a wall
    found = _warnings("absorber.width=2.0", "absorber.exponent=60")
    assert any(w.startswith("absorber-reflection") and "at step" in w for w in found), found


def test_no_absorber_density_reaches_edge():
    found = _warnings('absorber.type="none"', "propagation.after_pulse=\"0.5 fs\"")
    assert any(w.startswith("absorber-edge") and "t = " in w for w in found), found


def test_coarse_grid_reaches_momentum_limit():
    found = _warnings("grid.spacing=1.2", "grid.points=256", 'propagation.after_pulse="0.5 fs"')
    assert any(w.startswith("momentum-limit") for w in found), found
    with pytest.raises(NumericalError, match="momentum-limit"):
        _warnings("grid.spacing=1.2", "grid.points=256", 'propagation.after_pulse="0.5 fs"', strict=True)


def test_warnings_go_to_stderr_and_file_and_strict_fails(tmp_path, capsys):
    path = tmp_path / "in.toml"
    path.write_text(BASE.replace("points = 1024\nspacing = 0.2", "points = 256\nspacing = 1.2")
                    .replace('after_pulse = "1.5 fs"', 'after_pulse = "0.5 fs"'))
    out = tmp_path / "r.h5"
    assert cli.main(["run", str(path), "-o", str(out), "--quiet"]) == 0
    err = capsys.readouterr().err
    assert "tdse1d: warning: momentum-limit" in err
    with h5py.File(out) as f:
        assert "momentum-limit" in f.attrs["warnings"]
    out2 = tmp_path / "s.h5"
    assert cli.main(["run", str(path), "-o", str(out2), "--quiet", "--strict"]) == 1
    assert "largest momentum" in capsys.readouterr().err  # the warning made before the run
    assert not out2.exists() and not out2.with_name("s.h5.part").exists()


def _file_state(path):
    """What would change if anything wrote ``path``: existence, inode, size, mtime."""
    try:
        st = os.stat(path)
    except FileNotFoundError:
        return None
    return (st.st_ino, st.st_size, st.st_mtime_ns)


def test_runs_keep_wisdom_out_of_the_user_cache(tmp_path, monkeypatch, user_cache_home, private_cache_home):
    """The suite's autouse fixture (conftest.py) sends FFTW wisdom to a private cache: a
    run through the command line writes it there and leaves the user's cache as it was.
    Without the fixture the run below writes (or replaces) the user's file and this fails."""
    from tdse1d.io import wisdom

    monkeypatch.delenv("TDSE1D_NO_WISDOM", raising=False)
    with monkeypatch.context() as m:
        if user_cache_home is None:
            m.delenv("XDG_CACHE_HOME", raising=False)
        else:
            m.setenv("XDG_CACHE_HOME", user_cache_home)
        user_file = wisdom.wisdom_path()
    private_file = wisdom.wisdom_path()
    assert private_file.is_relative_to(private_cache_home)
    assert not private_file.is_relative_to(user_file.parent)
    before = _file_state(user_file)
    path = tmp_path / "in.toml"
    path.write_text(BASE.replace('after_pulse = "1.5 fs"', 'after_pulse = "0.2 fs"'))
    assert cli.main(["run", str(path), "-o", str(tmp_path / "r.h5"), "--quiet"]) == 0
    assert _file_state(user_file) == before
    assert private_file.exists()  # the run did save its wisdom, in the private cache
