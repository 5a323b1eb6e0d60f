"""What a certified run costs against a plain run of the same input, in wall time.

    python validation/benchmarks/certify_cost.py [--input inputs/argon_800nm.toml] [--pairs 3]

Each pair runs, as whole processes one after the other, ``tdse1d run INPUT --quiet``
(plain) and ``tdse1d run INPUT --quiet --certify`` (the run and its three companions:
the longest on a local Dask cluster of single-threaded worker processes, one per core
but the calling one, the others in the calling process after the run), alternating which
goes first, and reports the wall time of each and their ratio per pair. A ratio per
pair holds better than a ratio of means when the load of a shared machine drifts: the
1-minute load average is recorded before every run, with the date. Each certified run
also reports the wall time of each of its runs (from the run records), so that the
start-up of the cluster can be told from the runs themselves.

Target (issue: a certified run of the shipped argon example costs no more than 4
times a plain run in wall time on 2 cores): the median ratio <= 4.
"""

from __future__ import annotations

import argparse
import datetime
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def _run(args, cwd) -> tuple[float, float, float]:
    """Wall time (s), 1-minute load before, CPU time (user + sys of the process and every
    process it started and waited for, the Dask workers included; s)."""
    load = os.getloadavg()[0]
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    started = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "tdse1d.cli", "run", *args], cwd=cwd, capture_output=True,
                          text=True, env={**os.environ, "OPENBLAS_NUM_THREADS": "1"})
    wall = time.perf_counter() - started
    if proc.returncode != 0:
        raise SystemExit(f"tdse1d run {' '.join(args)} failed:\n{proc.stderr}")
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, load, cpu


def _companion_seconds(path: Path) -> str:
    import h5py

    with h5py.File(path, "r") as f:
        g = f["certification"]
        names = [n.decode() for n in g["companions/name"][()]]
        secs = g["companions/run_seconds"][()]
        return ", ".join(f"{n} {s:.1f} s" for n, s in zip(names, secs)) + f"; certified wall {g.attrs['wall_seconds']:.1f} s"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--input", default=str(ROOT / "inputs" / "argon_800nm.toml"))
    parser.add_argument("--pairs", type=int, default=3)
    args = parser.parse_args(argv)
    print(f"# {datetime.datetime.now(datetime.timezone.utc):%Y-%m-%d %H:%M} UTC, {os.cpu_count()} cores, "
          f"input {Path(args.input).name}")
    print("| pair | plain wall (s) | load | certified wall (s) | load | wall ratio | CPU plain / certified (s) "
          "| CPU ratio | runs inside the certified one |")
    print("|---|---|---|---|---|---|---|---|---|")
    ratios, cpu_ratios = [], []
    with tempfile.TemporaryDirectory() as tmp:
        for i in range(args.pairs):
            plain_args = [args.input, "-o", "plain.h5", "--quiet"]
            cert_args = [args.input, "-o", f"certified{i}.h5", "--quiet", "--certify"]
            if i % 2 == 0:
                (p, lp, pc), (c, lc, cc) = _run(plain_args, tmp), _run(cert_args, tmp)
            else:
                (c, lc, cc), (p, lp, pc) = _run(cert_args, tmp), _run(plain_args, tmp)
            Path(tmp, "plain.h5").unlink()
            ratios.append(c / p)
            cpu_ratios.append(cc / pc)
            inside = _companion_seconds(Path(tmp, f"certified{i}.h5"))
            print(f"| {i + 1} | {p:.1f} | {lp:.2f} | {c:.1f} | {lc:.2f} | {c / p:.2f} | {pc:.1f} / {cc:.1f} "
                  f"| {cc / pc:.2f} | {inside} |", flush=True)
    print(f"\nmedian wall ratio certified / plain: {statistics.median(ratios):.2f} (target <= 4); "
          f"median CPU ratio {statistics.median(cpu_ratios):.2f} (on 2 free cores the wall ratio is at least "
          "half of it)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
