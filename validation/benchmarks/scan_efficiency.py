"""Parallel efficiency and scheduling overhead of ``tdse1d scan`` on the local Dask cluster.

    python validation/benchmarks/scan_efficiency.py [--workers 2] [--points 4] [--cycles 6]

The points are runs of a soft-core atom (softening given, so no fit) at 800 nm whose
pulse length sets their duration (about 10 s each with the defaults on an idle core).
Steps, each on the same ``LocalCluster`` of single-threaded worker processes:

1. warm-up: one tiny run on every worker (imports, compiled kernels), not counted;
2. single-point times t_k: each point run alone, one after the other, on the cluster;
3. the scan: all points submitted at once, longest first, through :func:`tdse1d.scans.execute.run_scan`;
   wall time W and the time s_k of each point inside the scan.

Reported: parallel efficiency ``sum(t_k) / (workers x W)`` (target >= 0.9), the same with
the in-scan times ``sum(s_k) / (workers x W)`` (how well the workers were kept busy,
whatever slows each point down), the scheduling overhead per point (mean time a worker
waits between the end of one point and the start of its next, from the time stamps
of the run records; target < 0.2 s), the idle worker time per point
``(workers x W - sum(s_k)) / points`` (which also counts start-up and the tail when
points end unevenly), and the round trip of an empty task through the scheduler.

The numbers depend on what else runs on the machine; run it on an otherwise idle one.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import tempfile
import time
from pathlib import Path

BASE = """
[atom]
softening = 1.4142135623730951
[[laser]]
wavelength = "800 nm"
peak_intensity = "1.2e14 W/cm^2"
envelope = "sin2"
cycles = {cycles}
[propagation]
after_pulse = "1 fs"
[output]
snapshots = 0
"""


def _plan(directory: Path, points: int, cycles: float, name: str) -> Path:
    (directory / "base.toml").write_text(BASE.format(cycles=cycles))
    # a small spread of intensities: equal costs, distinct inputs
    values = ", ".join(f'"{1.2e14 * (1 + 0.01 * k):.6g} W/cm^2"' for k in range(points))
    path = directory / f"{name}.toml"
    path.write_text(f'base = "base.toml"\n[[axis]]\nkey = "laser.0.peak_intensity"\nvalues = [{values}]\n')
    return path


def _noop():
    return None


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--points", type=int, default=4, help="points of the scan (default 4: two per worker)")
    parser.add_argument("--cycles", type=float, default=6.0, help="pulse length, sets the point duration")
    parser.add_argument("--json", default=None, help="write the numbers to this file")
    args = parser.parse_args(argv)

    from distributed import Client

    from tdse1d.scans.directory import ScanDirectory
    from tdse1d.scans.execute import _args, local_cluster, run_scan
    from tdse1d.scans.plan import load_plan
    from tdse1d.scans.worker import run_point

    os.environ.setdefault("TDSE1D_NO_WISDOM", "1")  # all workers plan their FFTs alike
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        cluster = local_cluster(args.workers)
        client = Client(cluster, set_as_default=False)
        try:
            client.wait_for_workers(args.workers)
            # 1. warm-up, one tiny run pinned to each worker
            warm = load_plan(_plan(tmp, args.workers, 0.5, "warm"))
            (tmp / "warm" / "points").mkdir(parents=True)
            futures = [client.submit(run_point, *_args(warm, ScanDirectory(tmp / "warm"), p),
                                     workers=[w], pure=False)
                       for p, w in zip(warm.points, client.scheduler_info()["workers"])]
            client.gather(futures)

            plan = load_plan(_plan(tmp, args.points, args.cycles, "plan"))
            # 2. single-point times, one at a time
            single_dir = ScanDirectory(tmp / "single")
            single_dir.claim(plan)
            single = []
            for p in plan.points:
                record = client.submit(run_point, *_args(plan, single_dir, p), pure=False).result()
                assert record["status"] == "done", record
                single.append(record["seconds"])
            # 3. the scan
            submitted = time.time()
            report = run_scan(plan, tmp / "scan", client=client, progress=False)
            assert report.ok and len(report.done) == args.points, report.failed
            records = [report.records[p.index] for p in plan.points]
            inside = [r["seconds"] for r in records]
            wall = report.wall
            # idle time of a worker between the end of one point and the start of the next
            gaps = []
            for pid in {r["pid"] for r in records}:
                mine = sorted((r for r in records if r["pid"] == pid), key=lambda r: r["started_at"])
                gaps += [b["started_at"] - a["finished_at"] for a, b in zip(mine, mine[1:])]
            first_start = min(r["started_at"] for r in records) - submitted
            # round trip of empty tasks through the scheduler
            started = time.perf_counter()
            for _ in range(50):
                client.submit(_noop, pure=False).result()
            round_trip = (time.perf_counter() - started) / 50
        finally:
            client.close()
            cluster.close()

    w = args.workers
    numbers = {
        "workers": w,
        "points": args.points,
        "single_point_seconds": single,
        "in_scan_point_seconds": inside,
        "scan_wall_seconds": wall,
        "efficiency_single": sum(single) / (w * wall),
        "efficiency_in_scan": sum(inside) / (w * wall),
        "idle_per_point_seconds": (w * wall - sum(inside)) / args.points,
        "gap_between_points_seconds": gaps,
        "overhead_per_point_seconds": sum(gaps) / len(gaps) if gaps else float("nan"),
        "submit_to_first_start_seconds": first_start,
        "empty_task_round_trip_seconds": round_trip,
        "cpu_count": os.cpu_count(),
        "load_average_1min": os.getloadavg()[0],
    }
    print(f"workers {w}, points {args.points}")
    print(f"single-point times (s): {', '.join(f'{t:.2f}' for t in single)}")
    print(f"in-scan point times (s): {', '.join(f'{t:.2f}' for t in inside)}")
    print(f"scan wall time: {wall:.2f} s")
    print(f"parallel efficiency sum(single)/(workers x wall): {numbers['efficiency_single']:.3f}  (target >= 0.9)")
    print(f"busy fraction sum(in-scan)/(workers x wall):      {numbers['efficiency_in_scan']:.3f}")
    print(f"scheduling overhead per point (mean gap between consecutive points on a worker): "
          f"{numbers['overhead_per_point_seconds']:.3f} s  (target < 0.2 s)")
    print(f"idle worker time per point (workers x wall - sum(in-scan)) / points: "
          f"{numbers['idle_per_point_seconds']:.3f} s; submit to first start {first_start:.3f} s")
    print(f"empty-task round trip: {1e3 * round_trip:.1f} ms; load average {numbers['load_average_1min']:.2f} "
          f"on {os.cpu_count()} cores")
    if args.json:
        Path(args.json).write_text(json.dumps(numbers, indent=1))
    return 0


if __name__ == "__main__":
    sys.exit(main())
