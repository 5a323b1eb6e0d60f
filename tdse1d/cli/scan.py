"""``tdse1d scan PLAN``: run a parameter scan on Dask distributed and write its summary.

One scan per directory: a second ``tdse1d scan`` (or ``--gather``) of a directory that
a scan is running in is refused in one line naming it. Job-array tasks (``--point K``)
lock their point only: tasks of different points run side by side, a second task of
the same point is refused. SIGTERM/SIGINT to a ``--point`` task writes the point's
checkpoint and exits with status 75, like ``tdse1d run``.
"""

import sys

from .program import CommandError, nonnegative_int, positive_float, scheduler_address, worker_count

HELP = "run every point of a scan plan (Dask distributed, or one point of a job array) and summarise"


def add_arguments(parser):
    parser.add_argument("plan", metavar="PLAN", help="scan plan (TOML): base input and [[axis]] tables")
    parser.add_argument("-o", "--output", default=None, metavar="SCAN_DIR",
                        help="scan directory (default: PLAN-STEM in the current directory)")
    parser.add_argument("--quiet", action="store_true", help="no progress and no summary lines")
    parser.add_argument("--scheduler", type=scheduler_address, default=None, metavar="ADDRESS",
                        help="address of a running Dask scheduler, e.g. tcp://10.0.0.5:8786 (default: a local cluster)")
    parser.add_argument("--timeout", type=positive_float, default=10.0, metavar="SECONDS",
                        help="how long to wait for the scheduler given by --scheduler (default 10 s)")
    parser.add_argument("--workers", type=worker_count, default=None, help="worker processes of the local cluster (default: cores)")
    parser.add_argument("--dashboard", action="store_true", help="serve the Dask dashboard of the local cluster on 127.0.0.1:8787")
    parser.add_argument("--fresh", action="store_true", help="delete the points already in SCAN_DIR and start again")
    parser.add_argument("--retry-failed", action="store_true", help="run again the points that failed before")
    mode = parser.add_mutually_exclusive_group()
    mode.add_argument("--point", type=nonnegative_int, default=None, metavar="K",
                      help="run point K alone in this process, no Dask (one task of a job array)")
    mode.add_argument("--gather", action="store_true", help="only assemble summary.h5 from the finished points")
    mode.add_argument("--list", action="store_true", help="list the points, their hashes and costs, and run nothing")


def main(args):
    from ..api.campaigns import scan
    from ..scans.directory import PlanMismatch
    from ..scans.execute import SchedulerUnreachable

    say = (lambda *a: None) if args.quiet else (lambda *a: print(*a))
    options = dict(scheduler=args.scheduler, timeout=args.timeout, workers=args.workers, dashboard=args.dashboard,
                   fresh=args.fresh, retry_failed=args.retry_failed, progress=not args.quiet)
    try:
        if args.point is not None:
            from ..scans.worker import install_stop_handlers, remove_stop_handlers

            # the run is in this (main) thread: SIGTERM/SIGINT stop it with a checkpoint
            install_stop_handlers(redeliver=False)
            try:
                outcome = scan(args.plan, args.output, point=args.point, **options)
            finally:
                remove_stop_handlers()
        else:
            outcome = scan(args.plan, args.output, gather=args.gather, listing=args.list, **options)
    except PlanMismatch as exc:
        raise CommandError(str(exc)) from None
    except SchedulerUnreachable as exc:
        raise CommandError(f"{exc}; nothing was run") from None
    plan, report = outcome.plan, outcome.execution
    if outcome.mode == "list":
        for p in plan.points:
            values = ", ".join(f"{a.key} = {a.values[i]}" for a, i in zip(plan.axes, p.grid_index))
            print(f"{p.index:4d}  {p.hash}  cost {p.cost:.3g}  {values}  [{outcome.states[p.index]}]")
        return 0
    if outcome.mode == "point":
        return _render_point(args, outcome, say)
    if report is not None:
        say(f"scan: {len(report.done)} points run, {len(report.skipped)} already finished, "
            f"{len(report.failed)} failed, of {report.total} (wall {report.wall:.1f} s)")
        for k, err in sorted(report.failed.items()):
            print(f"tdse1d: point {k} ({plan.points[k].hash}) failed: {err}", file=sys.stderr)
        for k, err in sorted(report.busy.items()):
            print(f"tdse1d: point {k} ({plan.points[k].hash}) not run: {err}", file=sys.stderr)
        for k in sorted(report.interrupted):
            print(f"tdse1d: point {k} ({plan.points[k].hash}) stopped by a signal; its checkpoint is kept "
                  "and the next run of the scan continues it", file=sys.stderr)
        if report.failed and not args.retry_failed:
            print("tdse1d: rerun with --retry-failed to run the failed points again", file=sys.stderr)
    summary, missing = outcome.summary, list(outcome.missing)
    say(f"wrote {summary.path} ({len(plan.points) - len(missing)} of {len(plan.points)} points)")
    if summary.fit is not None and not args.quiet:
        f = summary.fit
        say(f"  cutoff vs Up fit: slope {f['slope']:.3f} (3.17 expected), intercept {f['intercept_ev']:.2f} eV "
            f"(Ip = {f['ip_ev']:.2f} eV, 1.32 Ip = {1.32 * f['ip_ev']:.2f} eV), {f['points']} points")
    if missing:
        print(f"tdse1d: {len(missing)} points have no result yet: {missing}", file=sys.stderr)
        return 1
    return 0


def _render_point(args, outcome, say):
    """The lines of one job-array task (``--point K``)."""
    report, k = outcome.execution, args.point
    for i, err in report.failed.items():
        print(f"tdse1d: point {i} failed: {err}", file=sys.stderr)
    for i, err in report.busy.items():
        print(f"tdse1d: point {i} not run: {err}", file=sys.stderr)
    if report.interrupted:
        from .run import EXIT_INTERRUPTED

        print(f"tdse1d: point {k} {report.records[k]['error']}; run the same task again to continue", file=sys.stderr)
        return EXIT_INTERRUPTED
    if report.skipped:
        say(f"point {k} already finished in {outcome.directory}")
    elif report.done:
        from ..scans.directory import ScanDirectory

        point = outcome.plan.points[k]
        files = ", ".join(str(ScanDirectory(outcome.directory).result(point, rung)) for rung in point.rungs)
        say(f"point {k} done in {report.wall:.1f} s -> {files}")
    return 0 if report.ok else 1
