"""Fixed costs of `tdse1d run` and `tdse1d estimate` on the shipped 800 nm input, in CPU time.

Each figure is a fresh child process (what a user pays from the shell), timed by the
operating system's accounting of the finished child (user + system CPU seconds, from
``resource.getrusage(RUSAGE_CHILDREN)``) and by a wall clock; the median of ``--repeats``
runs after one warm-up is printed with the 1-minute load average before and after. CPU
time is the figure that carries over from a loaded machine to a quiet one (it leaves
out the time other processes held the cores); wall time on a shared machine is
inflated by the load.

Rows: the imports alone of each library group a run pays for, then the two commands
with the store of solved problems warm (an input solved before) and switched off
(``TDSE1D_NO_STORE=1``: a new input). The package measured is the one on
``PYTHONPATH`` (point it at another checkout to compare two versions)::

    PYTHONPATH=. python validation/benchmarks/fixed_costs.py --repeats 5
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
INPUT = ROOT / "inputs" / "argon_800nm.toml"

IMPORTS = {
    "python alone": "pass",
    "numpy": "import numpy",
    "numpy + scipy.linalg": "import numpy, scipy.linalg",
    "scipy.constants": "import scipy.constants",
    "scipy.integrate (tunnelling estimate)": "import scipy.integrate",
    "numba": "import numba",
    "h5py": "import h5py",
    "tdse1d.units": "import tdse1d.units",
}


def _timed(argv, env=None, cwd=None):
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.monotonic()
    subprocess.run(argv, env=env, cwd=cwd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True)
    wall = time.monotonic() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return cpu, wall


def _median(argv, repeats, env=None, cwd=None):
    _timed(argv, env, cwd)  # warm-up: page cache, compiled kernels, the store
    runs = [_timed(argv, env, cwd) for _ in range(repeats)]
    return statistics.median(r[0] for r in runs), statistics.median(r[1] for r in runs)


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=5)
    args = parser.parse_args(argv)
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)  # a user's interpreter keeps its bytecode
    print(f"load average before: {os.getloadavg()[0]:.2f}; {time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())}")
    print(f"{'what':<48} {'CPU s':>7} {'wall s':>7}")
    for name, code in IMPORTS.items():
        cpu, wall = _median([sys.executable, "-c", code], args.repeats, env)
        print(f"{'import: ' + name:<48} {cpu:7.3f} {wall:7.3f}")
    with tempfile.TemporaryDirectory() as tmp:
        out = str(Path(tmp) / "run.h5")
        cli = [sys.executable, "-m", "tdse1d.cli"]
        for label, extra in (("store warm", {}), ("store off", {"TDSE1D_NO_STORE": "1"})):
            e = dict(env, **extra)
            cpu, wall = _median(cli + ["estimate", str(INPUT)], args.repeats, e, cwd=tmp)
            print(f"{'tdse1d estimate argon_800nm, ' + label:<48} {cpu:7.3f} {wall:7.3f}")
            cpu, wall = _median(cli + ["run", str(INPUT), "-o", out], args.repeats, e, cwd=tmp)
            print(f"{'tdse1d run argon_800nm, ' + label:<48} {cpu:7.3f} {wall:7.3f}")
    print(f"load average after: {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
