"""Executing a scan plan on Dask distributed, one result file per point.

:func:`run_scan` holds ``SCAN_DIR/scan.lock`` for the whole scan (a second scan of the
same directory is refused at once, naming the holder) and submits the points, longest
first (cost :func:`estimate_cost` = grid points x time steps, from the semiclassical grid
advice without computing bound states), to a Dask ``distributed`` cluster: by default a
``LocalCluster`` of single-threaded worker processes on the loopback interface, or an
existing scheduler given by address. :func:`run_one` runs one point in this process (job
arrays; it never writes a point that another process is writing), and
:func:`tdse1d.scans.summary.write_summary` assembles ``summary.h5``. The plan is read by
:mod:`tdse1d.scans.plan`, the directory kept by :mod:`tdse1d.scans.directory`, the points
run by :mod:`tdse1d.scans.worker`. Each rung a point asks for (:mod:`tdse1d.scans.rungs`:
the run, the SFA) is one task with its own file; a point is done when all its rungs are.
"""

from __future__ import annotations

import math
import os
import sys
import time
from dataclasses import dataclass, field

from .directory import MATCHES, ScanDirectory
from .plan import ScanPlan, ScanPoint
from .worker import _stop_scheduler_http, _worker_setup, run_point, warm_up


class SchedulerUnreachable(RuntimeError):
    """No Dask scheduler answered at the given address."""


# ------------------------------------------------------------------ the scan run


@dataclass
class ScanReport:
    """What a scan did: point indices by outcome, and the per-point records."""

    total: int
    done: list = field(default_factory=list)
    skipped: list = field(default_factory=list)
    failed: dict = field(default_factory=dict)  # index -> error message
    busy: dict = field(default_factory=dict)  # index -> who else is writing it
    interrupted: list = field(default_factory=list)  # stopped by a signal, checkpoint left
    records: dict = field(default_factory=dict)  # index -> run_point record
    wall: float = 0.0

    @property
    def ok(self) -> bool:
        return not self.failed and not self.busy and not self.interrupted


@dataclass(frozen=True)
class Task:
    """One point at one rung: what a worker computes into one file."""

    point: ScanPoint
    rung: str = "run"

    @property
    def index(self) -> int:
        return self.point.index

    @property
    def cost(self) -> float:
        """For ordering and progress: the run's grid points x time steps; an SFA task
        counts 1, negligible beside any run (and equal among SFA tasks)."""
        if self.rung != "run":
            return 1.0
        return self.point.cost if math.isfinite(self.point.cost) else math.inf

    @property
    def key(self) -> str:
        """The Dask key (the run's as before rungs existed)."""
        tag = "point" if self.rung == "run" else self.rung
        return f"tdse1d-{tag}-{self.point.hash}"


def _prepare(plan: ScanPlan, directory: ScanDirectory, fresh: bool, retry_failed: bool, report: ScanReport):
    """Claim the directory and sort the tasks (:class:`Task`: a point at a rung) into
    to-run, returned longest first, and the rest, filed in ``report``."""
    directory.claim(plan, fresh=fresh)
    todo = []
    for p in plan.points:
        if directory.state(p) == "done":
            report.skipped.append(p.index)
            continue
        for rung in p.rungs:
            state = directory.state(p, rung)
            if state == "busy":
                holder = directory.writer_of(p, rung)
                report.busy[p.index] = _at(rung, f"being written by {holder.describe() if holder else 'another process'}")
            elif state == "failed" and not retry_failed:
                report.failed[p.index] = _at(rung, directory.error(p, rung).read_text(encoding="utf-8").splitlines()[0])
            elif state != "done":
                directory.error(p, rung).unlink(missing_ok=True)
                todo.append(Task(p, rung))
    # longest first, so that the last tasks to finish are short ones (the SFA's: seconds)
    todo.sort(key=lambda task: (-task.cost, task.index))
    return todo


def _at(rung: str, message: str) -> str:
    """A task's message, naming its rung unless it is the run."""
    return message if rung == "run" else f"{rung}: {message}"


def _args(plan: ScanPlan, directory: ScanDirectory, p: ScanPoint, rung: str = "run"):
    return (p.resolved_toml, f"{plan.source} point {p.index}", str(plan.base_dir), str(directory.result(p, rung)),
            rung)


def run_one(plan: ScanPlan, directory, index: int, fresh: bool = False, retry_failed: bool = True) -> ScanReport:
    """Run point ``index`` of ``plan`` in this process (one task of a job array), at every
    rung the plan asks for.

    A finished point (rung) is not run again. Raises IndexError for an index outside the plan.
    """
    directory = ScanDirectory(directory)
    if not 0 <= index < len(plan.points):
        raise IndexError(f"point {index} does not exist: the plan has points 0 to {len(plan.points) - 1}")
    report = ScanReport(total=1)
    directory.claim(plan, fresh=fresh)
    p = plan.points[index]
    if directory.state(p) == "done":
        report.skipped.append(index)
        return report
    started = time.perf_counter()
    for rung in p.rungs:
        state = directory.state(p, rung)
        if state == "done":
            continue
        if state == "busy":
            holder = directory.writer_of(p, rung)
            report.busy[index] = _at(rung, f"being written by {holder.describe() if holder else 'another process'}")
            break
        if state == "failed" and not retry_failed:
            report.failed[index] = _at(rung, directory.error(p, rung).read_text(encoding="utf-8").splitlines()[0])
            break
        record = run_point(*_args(plan, directory, p, rung))
        _file_record(report, index, record, record["status"] == "done", rung)
        if record["status"] != "done":
            break
    report.wall = time.perf_counter() - started
    if not (report.failed or report.busy or report.interrupted):
        report.done.append(index)
    return report


def _file_record(report: ScanReport, index: int, record: dict, done: bool, rung: str = "run") -> None:
    """Sort a task's record into the report by its outcome: a point whose every task is
    done goes to ``done`` (the caller's business), any other outcome of a task files the
    point under it. ``records`` keeps the run's record of a point (else its last task's)."""
    status = record.get("status")
    if rung == "run" or index not in report.records:
        report.records[index] = record
    if done:
        return
    if status == "busy":
        report.busy[index] = _at(rung, record.get("error", "being written by another process"))
    elif status == "interrupted":
        report.interrupted.append(index)
    else:
        report.failed[index] = _at(rung, record.get("error", "no result file"))


def local_cluster(workers: int | None = None, dashboard: bool = False):
    """A ``LocalCluster`` of single-threaded worker processes on 127.0.0.1, closed to
    other local users.

    Every connection (client, scheduler, workers) uses TLS with credentials made for
    this cluster alone (``distributed.security.Security.temporary``, kept in memory
    and handed to the worker processes through their start-up pipe): a process without
    them cannot attach a client, so cannot run code as the user. Dask starts an HTTP
    server in the scheduler and in each worker whatever its options say; they serve no
    routes and are stopped once the cluster is up (:func:`run_scan`), unless
    ``dashboard`` asks for the scheduler's.

    Parameters
    ----------
    workers : int, optional
        Number of worker processes (default: the number of cores).
    dashboard : bool
        Serve the Dask dashboard on 127.0.0.1:8787 (off by default).
    """
    import dask
    from distributed import LocalCluster
    from distributed.security import Security

    n = workers or os.cpu_count() or 1
    routes = {} if dashboard else {"distributed.scheduler.http.routes": []}
    with dask.config.set({**routes, "distributed.worker.http.routes": []}):
        return LocalCluster(
            n_workers=n,
            threads_per_worker=1,
            processes=True,
            host="127.0.0.1",
            protocol="tls://",
            security=Security.temporary(),
            dashboard_address="127.0.0.1:8787" if dashboard else "127.0.0.1:0",
            silence_logs=40,  # logging.ERROR: a restarted worker is reported by the scan itself
            # each worker loads the numerics as it starts, while this process solves the
            # shared problems (scans/presolve.py), not after the cluster is up
            preload=["tdse1d.scans.worker_preload"],
        )


def open_local_client(workers: int | None = None, dashboard: bool = False):
    """A :func:`local_cluster` and a client of it, with the HTTP servers stopped (the
    scheduler's kept with ``dashboard``) and the workers' signal handlers installed.

    Returns
    -------
    cluster, client
        Close both when done.
    """
    from distributed import Client

    cluster = local_cluster(workers, dashboard)
    try:
        client = Client(cluster, set_as_default=False)
        try:
            if not dashboard:
                client.run_on_scheduler(_stop_scheduler_http)
            client.register_plugin(_worker_setup(stop_http=True), name="tdse1d-stop-on-signals")
        except BaseException:
            client.close()
            raise
    except BaseException:
        cluster.close()
        raise
    return cluster, client


def connect(address: str, timeout: float = 10.0):
    """A Dask client of the scheduler at ``address``; :class:`SchedulerUnreachable` if none answers."""
    from distributed import Client

    try:
        return Client(address, timeout=timeout, set_as_default=False)
    except (OSError, TimeoutError) as exc:
        raise SchedulerUnreachable(f"no Dask scheduler answered at {address} within {timeout:g} s ({exc})") from None


class _Progress:
    """Points done / total and time left, as a tqdm bar on a terminal, else one line per point."""

    def __init__(self, total, cost_total, enabled, stream=sys.stderr):
        self.total, self.cost_total = total, cost_total
        self.enabled, self.stream = enabled, stream
        self.started = time.perf_counter()
        self.cost_done = 0.0
        self.count = 0
        self.bar = None
        if enabled and stream.isatty() and total:
            from tqdm import tqdm

            self.bar = tqdm(total=total, unit="point", desc="scan", file=stream, dynamic_ncols=True)

    def left(self) -> float:
        if self.cost_done <= 0:
            return math.nan
        elapsed = time.perf_counter() - self.started
        return elapsed * (self.cost_total - self.cost_done) / self.cost_done

    def update(self, point: ScanPoint, record: dict, cost: float):
        self.count += 1
        self.cost_done += cost if math.isfinite(cost) else 0.0
        if not self.enabled:
            return
        status = record.get("status", "failed")
        rung = "" if record.get("rung", "run") == "run" else f" ({record['rung']})"
        left = self.left()
        left_text = f"~{left:.0f} s left" if math.isfinite(left) else "time left unknown"
        if self.bar is not None:
            self.bar.update(1)
            self.bar.set_postfix_str(f"{left_text}, last: point {point.index}{rung} {status}", refresh=True)
        else:
            print(f"scan: {self.count}/{self.total} tasks, point {point.index}{rung} {status} "
                  f"({record.get('seconds', math.nan):.1f} s), {left_text}", file=self.stream, flush=True)

    def close(self):
        if self.bar is not None:
            self.bar.close()


def run_scan(plan: ScanPlan, directory, *, scheduler: str | None = None, timeout: float = 10.0, workers: int | None = None,
             dashboard: bool = False, fresh: bool = False, retry_failed: bool = False,
             progress: bool = True, client=None) -> ScanReport:
    """Run every point of ``plan`` that has no finished result in ``directory``, on Dask.

    Parameters
    ----------
    plan : ScanPlan
    directory : path
        The scan directory (created).
    scheduler : str, optional
        Address of an existing Dask scheduler, e.g. ``tcp://10.0.0.5:8786``; default a
        :func:`local_cluster`.
    timeout : float
        Seconds to wait for that scheduler.
    workers : int, optional
        Workers of the local cluster (default: the cores).
    dashboard : bool
        Serve the dashboard of the local cluster.
    fresh : bool
        Delete another plan's points instead of refusing the directory.
    retry_failed : bool
        Run again the points that failed before (otherwise they are reported).
    progress : bool
        Report progress on stderr.
    client : distributed.Client, optional
        Use this client (and leave it open).

    Returns
    -------
    ScanReport

    Raises
    ------
    PlanMismatch, SchedulerUnreachable
    tdse1d.errors.OutputBusy
        Another scan holds the directory (the message names it).
    """
    directory = ScanDirectory(directory)
    report = ScanReport(total=len(plan.points))
    with directory.lock():  # a second scan of this directory is refused here, naming this one
        return _run_locked(plan, directory, report, scheduler, timeout, workers, dashboard, fresh,
                           retry_failed, progress, client)


def _warm_up_workers(client, todo) -> None:
    """Every worker loads the numerics at once, before the points are handed out, so the
    first point on each costs what the others do (a worker that joins later pays it in
    its first point; a worker that cannot, fails its points instead), at the rungs the
    tasks ask for."""
    client.run(warm_up, tuple(sorted({t.rung for t in todo})), on_error="ignore")


def _start_local_presolving(todo, workers, dashboard):
    """:func:`open_local_client` and the workers' warm-up in a background thread while
    this process solves the problems the points share
    (:func:`tdse1d.scans.presolve.presolve_shared`) into the store the workers read: the
    workers start and load the numerics while the shared fit and states are solved once
    here, instead of by every worker at once for its first point.

    Returns
    -------
    cluster, client
    """
    from concurrent.futures import ThreadPoolExecutor

    from .presolve import presolve_shared

    def start():
        cluster, client = open_local_client(workers, dashboard)
        try:
            _warm_up_workers(client, todo)
        except BaseException:
            client.close()
            cluster.close()
            raise
        return cluster, client

    with ThreadPoolExecutor(max_workers=1, thread_name_prefix="tdse1d-cluster") as pool:
        starting = pool.submit(start)
        try:
            presolve_shared([t.point for t in todo if t.rung == "run"])
        except BaseException:  # Ctrl-C: the cluster is still closed
            cluster, client = starting.result()
            client.close()
            cluster.close()
            raise
        return starting.result()


def _run_locked(plan, directory, report, scheduler, timeout, workers, dashboard, fresh, retry_failed,
                progress, client):
    from distributed import as_completed

    todo = _prepare(plan, directory, fresh, retry_failed, report)
    started = time.perf_counter()
    if not todo:
        return report
    own_cluster = own_client = None
    try:
        if client is None:
            if scheduler is not None:
                client = own_client = connect(scheduler, timeout)
            else:
                own_cluster, client = _start_local_presolving(todo, workers, dashboard)
                own_client = client
        if own_cluster is None:
            # workers stop their runs with a checkpoint on SIGTERM/SIGINT (also workers that join later)
            client.register_plugin(_worker_setup(stop_http=False), name="tdse1d-stop-on-signals")
            _warm_up_workers(client, todo)  # (our own cluster's workers warmed while it started)
        by_key = {}
        futures = []
        for rank, task in enumerate(todo):
            # priority keeps the longest-first order when workers free up
            fut = client.submit(run_point, *_args(plan, directory, task.point, task.rung), key=task.key,
                                pure=False, priority=len(todo) - rank, retries=0)
            by_key[fut.key] = task
            futures.append(fut)
        left = {}  # point index -> its tasks not finished yet
        for task in todo:
            left[task.index] = left.get(task.index, 0) + 1
        bar = _Progress(len(todo), sum(t.cost for t in todo if math.isfinite(t.cost)), progress)
        try:
            for fut in as_completed(futures, loop=client.loop):
                task = by_key[fut.key]
                p, rung = task.point, task.rung
                try:
                    record = fut.result()
                except Exception as exc:
                    # the worker died (KilledWorker) or the task was lost: not the point's
                    # own fault, so no .error file and a plain rerun runs it again
                    record = {"status": "lost", "rung": rung, "error": f"worker lost: {type(exc).__name__}: {exc}"}
                done = record["status"] == "done" and MATCHES[rung](directory.result(p, rung), p.hash)
                _file_record(report, p.index, record, done, rung)
                left[p.index] -= 1
                if not left[p.index] and not (p.index in report.failed or p.index in report.busy
                                              or p.index in report.interrupted):
                    report.done.append(p.index)
                bar.update(p, record, task.cost)
        finally:
            bar.close()
    finally:
        if own_client is not None:
            own_client.close()
        if own_cluster is not None:
            own_cluster.close()
    report.wall = time.perf_counter() - started
    return report
