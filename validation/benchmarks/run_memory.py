"""Peak memory (resident set) against run length: does a ten times longer run need less than twice the memory?

Two measurements, each in a fresh child process whose peak RSS the operating system
reports (``os.wait4``):

* ``propagation``: a 1-D propagation alone (N = 4096, Strang, mask, all observables) of
  S and 10 S steps, recording every step and every k-th step (k from
  :func:`tdse1d.physics.observables.record_stride` for a cutoff of 2 hartree);
* ``run`` (with ``--run``): ``tdse1d run`` on the shipped 800 nm example, and the same with
  ``propagation.after_pulse`` lengthened so that the run has about ten times the steps.

Run: python validation/benchmarks/run_memory.py [--steps S] [--run]
Prints, per case, the peak RSS of the short and the long run (MiB) and their ratio.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]

_PROPAGATION = """
import numpy as np, sys
from tdse1d.physics.absorbers import CosineMask
from tdse1d.physics.grid import Grid
from tdse1d.physics.potentials import Centre, SoftCore
from tdse1d.physics.propagation import Propagator, Strang
from tdse1d.physics.pulses import AnalyticPulse, Field, Sin2
steps, every = int(sys.argv[1]), int(sys.argv[2])
grid = Grid(4096, 0.2)
field = Field([AnalyticPulse(Sin2(steps * 0.05), 0.057, 0.05)])
times = field.start + 0.05 * np.arange(steps + 1)
psi0 = np.exp(-grid.x**2).astype(complex)
psi0 /= np.sqrt(grid.integrate(abs(psi0) ** 2))
mask = CosineMask().step_factor(grid, 0.1 * grid.half_width, 0.05)
prop = Propagator(grid, SoftCore((Centre(0.0, 1.0, 1.0),)), field, times, "length", Strang,
                  absorber_factor=mask, reference=psi0, record_every=every)
prop.start(psi0)
while prop.advance(1024):
    pass
prop.finish()
"""


def peak_rss_mib(cmd, env=None):
    """Peak resident set (MiB) of the finished child process running ``cmd``."""
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env, cwd=ROOT)
    _, status, usage = os.wait4(proc.pid, 0)
    proc.returncode = os.waitstatus_to_exitcode(status)
    err = proc.stderr.read().decode()
    proc.stderr.close()
    if proc.returncode:
        raise RuntimeError(f"{cmd} failed: {err[-400:]}")
    return usage.ru_maxrss / 1024  # kB on Linux


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--steps", type=int, default=40000)
    parser.add_argument("--run", action="store_true", help="also time tdse1d run on the shipped example")
    args = parser.parse_args()
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    from tdse1d.physics.observables import record_stride

    k = record_stride(0.05, 2.0)
    print(f"{'case':<34} {'short (MiB)':>11} {'long (MiB)':>10} {'ratio':>6}")
    for every in (1, k):
        short, long = (peak_rss_mib([sys.executable, "-c", _PROPAGATION, str(s), str(every)], env)
                       for s in (args.steps, 10 * args.steps))
        print(f"{f'propagation, record every {every}':<34} {short:>11.1f} {long:>10.1f} {long / short:>6.2f}",
              flush=True)
    if args.run:
        example = ROOT / "inputs" / "argon_800nm.toml"
        with tempfile.TemporaryDirectory() as tmp:
            rss = []
            # the 10-cycle pulse lasts about 26.7 fs; 2 fs after it is the shipped input
            for after in ("2 fs", "270 fs"):
                cmd = [sys.executable, "-m", "tdse1d.cli", "run", str(example), "--quiet",
                       "--set", f'propagation.after_pulse="{after}"', "-o", str(Path(tmp) / "r.h5")]
                rss.append(peak_rss_mib(cmd, env))
        print(f"{'tdse1d run argon_800nm, x10 steps':<34} {rss[0]:>11.1f} {rss[1]:>10.1f} {rss[1] / rss[0]:>6.2f}")


if __name__ == "__main__":
    main()
