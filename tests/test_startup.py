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
