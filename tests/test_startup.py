"""Start-up stays light: listing the commands imports no numerics.

Checked on ``sys.modules`` in a fresh interpreter (deterministic, not timed): the
modules named here cost most of the start-up time (matplotlib, dask, scipy.signal,
numba, pint, numpy), so ``tdse1d --help`` and ``--version`` must not import them.
"""

import json
import subprocess
import sys

import pytest

from tdse1d.cli.program import COMMANDS

HEAVY = ("numpy", "scipy", "scipy.signal", "matplotlib", "dask", "numba", "pint", "h5py", "pyfftw")

_PROBE = """
import contextlib, io, json, sys
from tdse1d.cli import main
with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
    status = main({argv!r})
print(json.dumps({{"status": status, "loaded": [m for m in {heavy!r} if m in sys.modules]}}))
"""


def _loaded_after(argv):
    code = _PROBE.format(argv=list(argv), heavy=HEAVY)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    return json.loads(out.splitlines()[-1])


@pytest.mark.parametrize("argv", [["--help"], ["--version"], []])
def test_listing_the_commands_imports_no_numerics(argv):
    probe = _loaded_after(argv)
    assert probe["loaded"] == []


def test_null_a_command_that_needs_its_library_is_seen_importing_it():
    # null case: `plot --help` lists the figures, which needs matplotlib; the probe above
    # must see such an import, or it proves nothing
    probe = _loaded_after(["plot", "--help"])
    assert probe["status"] == 0
    assert "matplotlib" in probe["loaded"]


@pytest.mark.parametrize("name", sorted(COMMANDS))
def test_each_command_module_imports_only_the_standard_library(name):
    code = (f"import importlib, sys; importlib.import_module({COMMANDS[name]!r}); "
            f"print([m for m in {HEAVY!r} if m in sys.modules])")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]", f"tdse1d.cli.{name} imports {out.strip()} at module level"


def test_the_fft_module_does_not_load_dask():
    # pyfftw would import dask.array through its interfaces; the run needs none of it.
    # Dask stays importable afterwards (the null case: the mark does not linger).
    code = ("import sys; from tdse1d.physics import fft; before = 'dask' in sys.modules; "
            "import dask.array.fft; print(before, callable(dask.array.fft.fft_wrap))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.split() == ["False", "True"]


def test_the_fft_module_does_not_load_scipy_fft():
    # pyfftw.interfaces imports scipy.fftpack (scipy.fft, scipy.special) for its scipy
    # interfaces; the run needs none of it. Null case: scipy.fftpack still imports and
    # computes afterwards (the mark does not linger).
    code = ("import sys; from tdse1d.physics import fft; before = 'scipy.fft' in sys.modules; "
            "import scipy.fftpack; print(before, scipy.fftpack.fft([1.0, 1.0])[0].real)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.split() == ["False", "2.0"]


_ESTIMATE = "inputs/argon_800nm.toml"


def _estimate_loads(tmp_path, **env):
    import os
    from pathlib import Path

    root = Path(__file__).resolve().parent.parent
    environment = dict(os.environ, XDG_CACHE_HOME=str(tmp_path), **env)
    code = _PROBE.format(argv=["estimate", str(root / _ESTIMATE)], heavy=HEAVY + ("scipy.linalg", "scipy.integrate"))
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         env=environment).stdout
    return json.loads(out.splitlines()[-1])


def test_an_estimate_solved_before_imports_no_scipy_and_no_compiled_code(tmp_path):
    first = _estimate_loads(tmp_path)
    assert first["status"] == 0 and "scipy.linalg" in first["loaded"]  # solved: the fit's eigensolves
    again = _estimate_loads(tmp_path)
    assert again["status"] == 0
    assert [m for m in again["loaded"] if m != "numpy"] == []


def test_null_an_estimate_without_the_store_is_seen_importing_scipy(tmp_path):
    _estimate_loads(tmp_path)
    off = _estimate_loads(tmp_path, TDSE1D_NO_STORE="1")
    assert "scipy.linalg" in off["loaded"]
