"""What runs in a process that runs points (a Dask worker, a job-array task):
:func:`run_point` runs one point through :func:`tdse1d.api.run` under a temporary name
and renames it when complete; a SIGTERM or SIGINT makes each of the process's runs
write its checkpoint and stop (:func:`install_stop_handlers`).
"""

from __future__ import annotations

import json
import math
import os
import signal
import threading
import time
import traceback
from pathlib import Path

from ..input.schema import parse_input
from ..input.spec import tomllib
from .directory import _write_atomic
from .plan import input_hash


# --------------------------------------------------------------------- one point


def run_point(resolved_toml: str, source: str, base_dir: str, output: str, rung: str = "run") -> dict:
    """Compute one point at one rung and write its file; the function Dask workers execute.

    Never raises for a failure of the computation itself: the traceback goes to
    ``<output stem>.error`` and the returned record says ``status = "failed"``. A run
    stopped by SIGTERM/SIGINT (:func:`install_stop_handlers`) leaves its checkpoint and
    says ``"interrupted"``; a point another process is writing says ``"busy"``; neither
    leaves an ``.error`` file.

    Parameters
    ----------
    resolved_toml : str
        The point's resolved input.
    source : str
        Its name, for messages.
    base_dir : str
        Directory for relative paths in the input.
    output : str
        The point's file at this rung, ``points/<hash>.h5`` (run) or
        ``points/<hash>.sfa.h5`` (SFA).
    rung : str
        ``"run"`` (:func:`tdse1d.api.run`) or ``"sfa"`` (the strong-field approximation
        of the input, harmonic spectrum and quantum orbits, no run; :mod:`tdse1d.scans.rungs`).

    Returns
    -------
    dict
        ``status``, ``rung``, ``seconds`` (wall time), ``host``, ``pid``, ``started_at``
        (Unix time), and for a finished point ``finished_at`` (and for a run
        ``tunnelling_yield``); for a failed, busy or interrupted one ``error``.
    """
    import socket

    from ..errors import OutputBusy
    from ..runs.runner import RunInterrupted
    from .directory import MATCHES

    output = Path(output)
    error_file = output.with_suffix(".error")
    record_file = output.with_suffix(".json")
    started = time.perf_counter()
    record = {"host": socket.gethostname(), "pid": os.getpid(), "source": source, "rung": rung,
              "started_at": time.time()}
    control = None
    try:
        raw = tomllib.loads(resolved_toml)
        if MATCHES[rung](output, input_hash(raw)):
            # finished meanwhile (by another process, or by this task on a worker that was
            # stopped before it could report): not computed twice
            record.update(status="done", seconds=0.0, already_finished=True, finished_at=time.time())
            return record
        config = parse_input(raw, source=source, base_dir=base_dir)
        if rung == "sfa":
            _compute_sfa(config, output)
        else:
            from ..api import single_run as api

            control = _register(api.default_control(config))
            record.update(_compute_run(api, config, output, control))
        record.update(status="done", seconds=time.perf_counter() - started, finished_at=time.time())
        error_file.unlink(missing_ok=True)
        _write_atomic(record_file, json.dumps(record))
    except RunInterrupted as exc:
        record.update(status="interrupted", seconds=time.perf_counter() - started,
                      error=f"stopped by a signal, {exc}; checkpoint {output.name}.checkpoint")
    except OutputBusy as exc:
        record.update(status="busy", seconds=time.perf_counter() - started, error=str(exc))
    except Exception as exc:  # a failed point is reported, the scan goes on
        record.update(status="failed", seconds=time.perf_counter() - started,
                      error=f"{type(exc).__name__}: {exc}")
        try:
            _write_atomic(error_file, f"{record['error']}\n\n{traceback.format_exc()}")
        except OSError:  # e.g. the disk is full: the record still says what happened
            pass
    finally:
        if control is not None:
            _unregister(control)
    return record


def _compute_run(api, config, output, control) -> dict:
    """The time-dependent run of a point; the items it adds to the record."""
    from ..io.problem_store import problem_store
    from ..io.wisdom import fftw_wisdom

    # the store: the fit and states the scan's process solved once (scans/presolve.py)
    with problem_store(), fftw_wisdom():
        # an unfinished point continues from the checkpoint its last attempt left
        outcome = api.run(config, output, resume=True, control=control)
    items = {"tunnelling_yield": _tunnelling_yield(outcome)}
    if outcome.notes:
        items["notes"] = list(outcome.notes)
    return items


def _compute_sfa(config, output) -> None:
    """The SFA rung of a point: harmonic spectrum, quantum orbits and their readings of
    the point's pulse and ground state (as ``tdse1d sfa --no-photoelectrons``), written
    by :func:`tdse1d.io.sfa_file.write_sfa_point`."""
    from ..analysis.sfa import sfa_readings, sfa_spectra
    from ..input.problem import build_problem
    from ..io.sfa_file import write_sfa_point

    problem = build_problem(config, with_states=False)
    spectra = sfa_spectra(problem, photoelectrons=False)
    write_sfa_point(output, problem, spectra, sfa_readings(spectra))


# ------------------------------------------------------------------ stop on signals
#
# A process that runs points keeps the RunControl of every run in progress here. The
# handler only sets their stop flags (safe in a signal handler), so each run writes its
# checkpoint at its next chunk boundary and raises RunInterrupted. Dask runs tasks in
# threads while signals reach the main thread: the flag is the way across. In a Dask
# worker the signal is then delivered again to the handler that was there before (by
# default: the process ends, and the scheduler hands the point to another worker, which
# continues from the checkpoint); in a job-array task the command exits with status 75.

_ACTIVE: tuple = ()  # RunControls of the runs in progress (a tuple: read atomically by the handler)
_ACTIVE_LOCK = threading.Lock()
_PREVIOUS: dict = {}  # signal -> handler before ours
_REDELIVER = {"on": False, "pending": None}


def _register(control):
    global _ACTIVE
    with _ACTIVE_LOCK:
        _ACTIVE = _ACTIVE + (control,)
    return control


def _unregister(control):
    global _ACTIVE
    with _ACTIVE_LOCK:
        _ACTIVE = tuple(c for c in _ACTIVE if c is not control)
        left, pending = _ACTIVE, _REDELIVER["pending"]
    if not left and pending is not None and _REDELIVER["on"]:
        os.kill(os.getpid(), pending)  # handled again in the main thread, now with no run left


def _on_signal(signum, frame):
    controls = _ACTIVE
    for c in controls:
        c.request_stop()
    if controls or not _REDELIVER["on"]:
        _REDELIVER["pending"] = signum
        return
    previous = _PREVIOUS.get(signum, signal.SIG_DFL)
    signal.signal(signum, previous)
    if callable(previous):
        previous(signum, frame)
    else:
        os.kill(os.getpid(), signum)


def install_stop_handlers(signals=(signal.SIGTERM, signal.SIGINT), redeliver: bool = False) -> bool:
    """Make SIGTERM/SIGINT stop the runs of this process with a checkpoint.

    Parameters
    ----------
    signals : tuple of int
    redeliver : bool
        Once no run is left, hand the signal to the handler that was installed before
        (a Dask worker then ends as it would have); otherwise only remember it.

    Returns
    -------
    bool
        False when called outside the main thread (where signal handlers cannot be set).
    """
    if threading.current_thread() is not threading.main_thread():
        return False
    for sig in signals:
        if sig not in _PREVIOUS:
            _PREVIOUS[sig] = signal.signal(sig, _on_signal)
    _REDELIVER["on"] = redeliver
    return True


def remove_stop_handlers() -> None:
    """Put back the handlers :func:`install_stop_handlers` replaced (main thread only)."""
    for sig, previous in list(_PREVIOUS.items()):
        signal.signal(sig, previous)
        del _PREVIOUS[sig]
    _REDELIVER.update(on=False, pending=None)


def _worker_setup(stop_http: bool):
    """A Dask WorkerPlugin (made here, so that importing this module does not import
    distributed) that installs :func:`install_stop_handlers` on every worker, also one
    that joins later, and for our own local cluster stops the worker's HTTP server."""
    from distributed.diagnostics.plugin import WorkerPlugin

    class StopOnSignals(WorkerPlugin):
        name = "tdse1d-stop-on-signals"

        def __init__(self, stop_http):
            self.stop_http = stop_http

        def setup(self, worker):
            # plugins are set up in the worker's event loop, the process's main thread
            from .worker import install_stop_handlers

            install_stop_handlers(redeliver=True)
            if self.stop_http and getattr(worker, "http_server", None) is not None:
                worker.http_server.stop()

    return StopOnSignals(stop_http)


#: a run small enough to take a fraction of a second, with every part a point uses
_WARM_UP_INPUT = """
[atom]
softening = 1.4142135623730951
[[laser]]
wavelength = "800 nm"
peak_intensity = "1e14 W/cm^2"
cycles = 0.5
[grid]
points = 256
spacing = 0.4
[absorber]
width = 10
[propagation]
time_step = 0.2
after_pulse = 0
[output]
snapshots = 0
"""


#: the rungs this process has warmed up for
_WARMED: set = set()


def warm_up(rungs=("run",)) -> float:
    """Load what a point needs (the numerics, h5py, the compiled kernels) by computing a
    tiny problem in memory at each of ``rungs``, so that a worker's first point costs
    what the others do.

    Parameters
    ----------
    rungs : sequence of str
        The rungs of the scan (:mod:`tdse1d.scans.rungs`): ``"run"`` warms the
        propagation, ``"sfa"`` the SFA kernels.

    Returns
    -------
    float
        The wall time it took (s).
    """
    started = time.perf_counter()
    rungs = [r for r in rungs if r not in _WARMED]  # (the preload may have warmed the run rung)
    if not rungs:
        return 0.0
    import h5py  # noqa: F401 - loaded here, used by every point's file

    from ..input.problem import build_problem
    from ..input.schema import load_input

    problem = build_problem(load_input("warm-up", [], text=_WARM_UP_INPUT))
    if "run" in rungs:
        import tempfile

        from ..api import single_run

        # the whole path of a point, not the propagation alone: the run's analysis
        # (its scipy modules), the result file and its checks load here too. The
        # warm-up is not a point: the tests' stop-and-go handshake is not for it.
        held = os.environ.pop(single_run.HOLD_ENV, None)
        try:
            with tempfile.TemporaryDirectory(prefix="tdse1d-warm-up-") as scratch:
                single_run.run(problem, Path(scratch) / "warm-up.h5")
        finally:
            if held is not None:
                os.environ[single_run.HOLD_ENV] = held
    if "sfa" in rungs:
        from ..analysis.sfa import sfa_readings, sfa_spectra

        sfa_readings(sfa_spectra(problem, photoelectrons=False))
    _WARMED.update(rungs)
    return time.perf_counter() - started


def _stop_scheduler_http(dask_scheduler=None):
    if getattr(dask_scheduler, "http_server", None) is not None:
        dask_scheduler.http_server.stop()


def _tunnelling_yield(outcome) -> float:
    """Quasi-static tunnelling estimate of the ionization over the run's field (NaN if none);
    read from the file when the run's own analysis stored it."""
    import h5py

    from ..io.layout import path as layout_path
    from ..semiclassical.tunnelling import tunnelling_yield

    with h5py.File(outcome.path, "r") as f:
        key = layout_path("classical/tunnelling/probability")
        if key in f and f[key].size:
            return float(f[key][-1])
    obs = outcome.result.observables
    try:
        return float(tunnelling_yield(obs.time, obs.electric, outcome.problem.potential,
                                      -outcome.problem.ionization_potential)[-1])
    except (ValueError, ArithmeticError, TypeError):  # TypeError: a model of two coordinates
        return math.nan
