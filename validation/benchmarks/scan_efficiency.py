"""Parallel efficiency of ``tdse1d scan`` as a user meets it: a whole scan command on the
local cluster against the same points run one after the other in one process.

    python validation/benchmarks/scan_efficiency.py [--workers 2] [--points 4] [--cycles 4] [--repeats 2]

The points are runs of an argon-like soft-core atom (its softening fitted to Ip, as the
shipped inputs do) at 800 nm on a 4096-point grid, with slightly different intensities
(equal costs, distinct inputs). Both sides are timed from outside, as whole processes
started from the shell, so each pays what a user pays:

* serial: ``python -c`` running ``tdse1d.api.run`` on each point in turn (one process:
  imports once, the fit and the bound states once, FFT plans once; the store of solved
  problems and the FFTW wisdom used as ``tdse1d run`` uses them);
* scan: ``python -m tdse1d.cli scan PLAN --workers W`` in a fresh directory (cluster
  start, worker warm-up, the points, the summary, shut-down).

Parallel efficiency = serial wall / (W x scan wall) (target >= 0.9 at W = 2, 4 points).
By default both commands start cold (an empty store of solved problems, no FFTW wisdom);
``--warm`` runs the scan once untimed first and then times both with that store and
wisdom, as a user's repeated scans of one atom and grid meet them.
Each side is run ``--repeats`` times, alternating, and the medians are compared; the
load average is printed beside them. The machine's other work shows in the numbers: run
it on an otherwise idle machine.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

BASE = """
[atom]
ionization_potential = "15.76 eV"
[[laser]]
wavelength = "800 nm"
peak_intensity = "1.2e14 W/cm^2"
envelope = "sin2"
cycles = {cycles}
[grid]
points = 4096
spacing = 0.2
[propagation]
after_pulse = "1 fs"
[output]
snapshots = 0
"""

SERIAL = """
import sys, time
from pathlib import Path
from tdse1d.api import run
from tdse1d.input.schema import load_input
from tdse1d.io.problem_store import problem_store
from tdse1d.io.wisdom import fftw_wisdom
values = sys.argv[2:]
base = Path(sys.argv[1])
spans = []
with problem_store(), fftw_wisdom():  # as tdse1d run and a scan's points use them
    for k, v in enumerate(values):
        started = time.time()
        run(load_input(base, [f'laser.0.peak_intensity="{v}"']), base.parent / f"serial-{k}.h5")
        spans.append((started, time.time()))
print(*(t for span in spans for t in span))
"""


def _intensities(points):
    return [f"{1.2e14 * (1 + 0.01 * k):.6g} W/cm^2" for k in range(points)]


def _timed(command, cwd, env) -> tuple[float, float, str]:
    """Wall time of a whole command, its start (Unix time) and its standard output."""
    started_at = time.time()
    started = time.perf_counter()
    done = subprocess.run(command, cwd=cwd, env=env, check=True, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL,
                          text=True)
    return time.perf_counter() - started, started_at, done.stdout


def _scan_points_span(directory: Path) -> tuple[float, float]:
    """First start and last end (Unix time) of the scan's points, from their records."""
    records = [json.loads(p.read_text()) for p in (directory / "points").glob("*.json")]
    return min(r["started_at"] for r in records), max(r["finished_at"] for r in records)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--points", type=int, default=4)
    parser.add_argument("--cycles", type=float, default=4.0)
    parser.add_argument("--repeats", type=int, default=2)
    parser.add_argument("--warm", action="store_true",
                        help="both sides with the store of solved problems and the FFTW wisdom warm (one scan "
                             "of the same points first, not timed), as for a user's repeated scans")
    args = parser.parse_args(argv)
    # cold (default): no wisdom, each command an empty store; warm: one shared cache, filled first
    env = dict(os.environ) if args.warm else dict(os.environ, TDSE1D_NO_WISDOM="1")
    serial, scan, parts = [], [], []
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        base = tmp / "base.toml"
        base.write_text(BASE.format(cycles=args.cycles))
        values = ", ".join(f'"{v}"' for v in _intensities(args.points))
        plan = tmp / "plan.toml"
        plan.write_text(f'base = "base.toml"\n[[axis]]\nkey = "laser.0.peak_intensity"\nvalues = [{values}]\n')
        if args.warm:
            env["XDG_CACHE_HOME"] = str(tmp / "cache-warm")
            _timed([sys.executable, "-m", "tdse1d.cli", "scan", str(plan), "-o", str(tmp / "scan-warming"),
                    "--workers", str(args.workers), "--quiet"], tmp, env)
        for r in range(args.repeats):
            # cold: each command starts with an empty store of solved problems (the serial
            # process solves the fit and states once in memory, the scan once into the store)
            cold = env if args.warm else dict(env, XDG_CACHE_HOME=str(tmp / f"cache-{r}"))
            wall, start, out = _timed([sys.executable, "-c", SERIAL, str(base), *_intensities(args.points)], tmp, cold)
            spans = [float(v) for v in out.split()]
            serial.append(wall)
            # a point's own cost: the median of the points after the first (which also
            # pays the imports, the fit and the bound states); the rest of the serial
            # command is what one process pays once, and workers cannot share
            point = statistics.median(b - a for a, b in zip(spans[2::2], spans[3::2]))
            serial_fixed = wall - args.points * point
            cold = env if args.warm else dict(env, XDG_CACHE_HOME=str(tmp / f"cache-scan-{r}"))
            out_dir = tmp / f"scan-{r}"
            wall, start, _ = _timed([sys.executable, "-m", "tdse1d.cli", "scan", str(plan), "-o", str(out_dir),
                                     "--workers", str(args.workers), "--quiet"], tmp, cold)
            first, last = _scan_points_span(out_dir)
            scan.append(wall)
            parts.append((serial_fixed, point, first - start, last - first, start + wall - last))
    s, w = statistics.median(serial), statistics.median(scan)
    med = [statistics.median(p[i] for p in parts) for i in range(5)]
    print(f"{args.points} points of 4096-point, {args.cycles:g}-cycle runs; {args.workers} workers; "
          f"{os.cpu_count()} cores; load average {os.getloadavg()}")
    print(f"serial, one process (s): {', '.join(f'{t:.1f}' for t in serial)}; median {s:.1f}")
    print(f"scan command (s):        {', '.join(f'{t:.1f}' for t in scan)}; median {w:.1f}")
    print(f"parallel efficiency serial / (workers x scan): {s / (args.workers * w):.3f}  (target >= 0.9)")
    print(f"serial: a point {med[1]:.2f} s (median of the points after the first); paid once, "
          f"serial - points x point: {med[0]:.2f} s (interpreter, imports, fit, bound states, FFT plans)")
    print(f"scan:   {med[2]:.2f} s before its first point starts (interpreter, imports, cluster, presolve, "
          f"warm-up), {med[3]:.2f} s from the first start to the last end, {med[4]:.2f} s after (summary, shut-down)")
    print(f"points alone: points x point / (workers x scan span) = "
          f"{args.points * med[1] / (args.workers * med[3]):.3f}")
    # Amdahl: what the serial command pays once cannot be shared by the workers either
    ideal = med[0] + args.points * med[1] / args.workers
    print(f"bound: serial / (workers x (paid once + points x point / workers)) = {s / (args.workers * ideal):.3f}"
          f" (a scan with no cost of its own)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
