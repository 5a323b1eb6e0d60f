"""A certified run: the run as given and its companions, in parallel on Dask.

Each companion refines one numerical parameter of the main run, from the values the
main run resolved (an "auto" grid or step is made explicit first, so the companion
changes that parameter alone):

``time_step``
    A Strang (order 2) run is repeated with the fourth-order scheme of the input's
    registry (``propagation.order = 4``) at the *same* step; a run already of order 4
    halves its step. The same step keeps the companion cheap (one run of 2.3 times
    the sub-steps instead of twice the steps); the fourth-order run's splitting error is
    far below the Strang run's at that step, so the move is the Strang run's
    time-discretisation error: error factor 1; a halved fourth-order step has the
    factor 2^4 / (2^4 - 1). (The absorber's rate per unit time does not depend on the
    step, :class:`tdse1d.physics.absorbers.CosineMask`, so either companion changes the
    time discretisation alone.)
``grid_spacing``
    The spacing times :data:`SPACING_FACTOR` (2/3) over the same box: 1.5 times the
    largest momentum of the grid. A Fourier grid converges faster than any power of
    the spacing for a smooth wavefunction (J. P. Boyd, Chebyshev and Fourier Spectral
    Methods, 2nd ed. (2001), ch. 2), so the finer grid's own error is negligible:
    error factor 1.
``box``
    The box half-width and the absorber width times :data:`BOX_FACTOR` (2), at the
    same spacing: the unabsorbed region doubles, so slow electrons and loosely bound
    Rydberg population the small box absorbs stay in it. A box of inner half-width L
    holds the Rydberg states of extent ~ n^2 up to n ~ sqrt(L); with populations
    falling as n^-3 (the density of Rydberg states) the population it loses falls as
    sum over n > sqrt(L) of n^-3 ~ 1/L: first order, so the error factor of a doubled
    box is 2 / (2 - 1) = 2 (:func:`~tdse1d.analysis.certification.richardson_factor`).

The run as given runs in the calling process while a local Dask cluster of
single-threaded worker processes starts (:func:`tdse1d.scans.execute.open_local_client`);
then the workers and the calling process take the companions from one queue, the
longest not yet started first, each when its run ends (the calling process has its
imports and compiled kernels loaded already; a worker pays seconds of start-up and
imports before its first run). Each
companion runs through :func:`tdse1d.scans.worker.run_point` (the function a scan's
points run through) and reads its quantities off its own file
(:func:`tdse1d.io.analysis_file.analyse_file`), as the report reads them.
The spreads (:mod:`tdse1d.analysis.certification`) are written into the main file
(:mod:`tdse1d.io.certification_file`); the companions' files are removed unless kept.
"""

from __future__ import annotations

import math
import os
import shutil
import time
from dataclasses import dataclass, field
from pathlib import Path

from ..analysis.certification import Certified, Tolerance, certify_quantities, richardson_factor
from ..input.schema import RunConfig, parse_input
from ..input.spec import apply_override
from ..physics.grid import fast_fft_size

__all__ = ["Companion", "CertifiedRun", "CertificationFailed", "plan_companions", "companion_config",
           "companion_directory", "certify_problem", "run_and_read", "SPACING_FACTOR", "BOX_FACTOR"]

#: grid spacing of the grid-spacing companion, relative to the main run's
SPACING_FACTOR = 2.0 / 3.0
#: box half-width and absorber width of the box companion, relative to the main run's
BOX_FACTOR = 2.0


class CertificationFailed(RuntimeError):
    """The main run or a companion failed; the message names it and says why."""


@dataclass(frozen=True)
class Companion:
    """A companion run: the main run with one numerical parameter refined.

    Attributes
    ----------
    name : str
        ``time_step``, ``grid_spacing`` or ``box`` (its file is ``NAME.h5``).
    parameter : str
        The parameter refined, a key of :data:`tdse1d.analysis.certification.PARAMETER_ADVICE`.
    overrides : tuple of (str, value)
        Dotted input keys and values (atomic units), applied to the main run's input.
    change : str
        What changes, with the values, for people.
    cost : float
        Grid points x time steps x sub-steps per step, relative to order the runs.
    error_factor : float
        The main run's error in units of its move to this companion
        (:func:`~tdse1d.analysis.certification.richardson_factor`).
    """

    name: str
    parameter: str
    overrides: tuple
    change: str
    cost: float
    error_factor: float = 1.0


def _cost(points, steps, substeps):
    return float(points) * float(steps) * float(substeps)


def plan_companions(problem) -> tuple[Companion, ...]:
    """The companions of a run, from its resolved grid, step and absorber.

    Parameters
    ----------
    problem : tdse1d.input.problem.Problem
        The main run.

    Returns
    -------
    tuple of Companion
        ``time_step``, ``grid_spacing``, ``box``.
    """
    from ..physics.schemes import DEFAULT_SCHEME_FOR_ORDER, SCHEMES

    config, grid = problem.config, problem.grid
    prop = config.propagation
    dt = prop.time_step if prop.time_step is not None else problem.advice.time_step
    dx, n, width = grid.spacing, grid.points, float(problem.absorber_width)
    steps = problem.time.steps
    substeps = len(SCHEMES[prop.scheme_name].weights)
    step = (("propagation.time_step", dt),)
    keep_width = (("absorber.width", width),) if config.absorber.type != "none" else ()
    out = []
    if prop.order == 2:
        fourth = DEFAULT_SCHEME_FOR_ORDER[4]
        out.append(Companion(
            "time_step", "time step",
            (("propagation.order", 4), ("propagation.scheme", fourth), *step, *keep_width),
            f"propagation.order 2 -> 4 ({fourth}) at the same step {dt:.4g} a.u.",
            _cost(n, steps, len(SCHEMES[fourth].weights)), 1.0))
    else:
        out.append(Companion(
            "time_step", "time step", (("propagation.time_step", dt / 2), *keep_width),
            f"propagation.time_step {dt:.4g} -> {dt / 2:.4g} a.u.",
            _cost(n, 2 * steps, substeps), richardson_factor(2.0, prop.order)))
    fine = dx * SPACING_FACTOR
    n_fine = fast_fft_size(int(math.ceil(n * dx / fine - 1e-9)))
    out.append(Companion(
        "grid_spacing", "grid spacing",
        (("grid.spacing", fine), ("grid.points", n_fine), *step, *keep_width),
        f"grid.spacing {dx:.4g} -> {fine:.4g} bohr ({n} -> {n_fine} points over the same box)",
        _cost(n_fine, steps, substeps), 1.0))
    n_box = fast_fft_size(int(math.ceil(BOX_FACTOR * n - 1e-9)))
    absorber = ((("absorber.width", BOX_FACTOR * width),) if config.absorber.type != "none" else ())
    grown = f", absorber {width:.4g} -> {BOX_FACTOR * width:.4g} bohr" if absorber else ""
    out.append(Companion(
        "box", "box",
        (("grid.spacing", dx), ("grid.points", n_box), *step, *absorber),
        f"box +-{grid.half_width:.4g} -> +-{0.5 * n_box * dx:.4g} bohr ({n} -> {n_box} points){grown}",
        _cost(n_box, steps, substeps), richardson_factor(BOX_FACTOR, 1.0)))
    return tuple(out)


def companion_config(config: RunConfig, companion: Companion) -> RunConfig:
    """The companion's input: the main input with its overrides, no snapshots, no SFA,
    and not itself certified (its ``[certification]`` table removed)."""
    raw = {k: v for k, v in config.raw.items() if k != "certification"}
    # a companion is read for the report's quantities alone: no snapshots, no SFA
    for key, value in (*companion.overrides, ("output.snapshots", 0), ("spectra.sfa", False)):
        raw = apply_override(raw, key, value)
    raw.get("output", {}).pop("file", None)  # the companion's file is named by the campaign
    return parse_input(raw, source=f"{config.source} ({companion.name} companion)", base_dir=config.base_dir)


def companion_directory(output) -> Path:
    """Folder of a certified run's companion files: ``STEM.companions`` beside ``output``."""
    output = Path(output)
    return output.with_name(output.stem + ".companions")


# --------------------------------------------------------------------- the run


def run_and_read(resolved_toml: str, source: str, base_dir: str, output: str) -> dict:
    """Run one input (:func:`tdse1d.scans.worker.run_point`) and read its quantities;
    the task a Dask worker executes.

    Returns
    -------
    dict
        ``run_point``'s record, and for a finished run ``quantities`` (quantity key ->
        value, atomic units) and ``tolerances`` (key -> (value, reason)).
    """
    from .worker import run_point

    record = run_point(resolved_toml, source, base_dir, output)
    return _read_back(record, output) if record.get("status") == "done" else record


@dataclass(frozen=True)
class CertifiedRun:
    """A certified run: the main result file and each quantity with its uncertainty.

    Attributes
    ----------
    path : Path
        The main run's result file (holds the ``certification`` group).
    quantities : dict of str to Certified
        Value, uncertainty, tolerance and note per quantity (atomic units).
    companions : tuple of Companion
    records : dict
        ``main`` and each companion's name -> the run's record (status, seconds).
    wall : float
        Wall time of the whole certified run (s).
    workers : int
    kept : Path or None
        Folder of the companion files when kept.
    """

    path: Path
    quantities: dict
    companions: tuple = field(repr=False)
    records: dict = field(repr=False)
    wall: float
    workers: int
    kept: Path | None = None

    @property
    def not_converged(self) -> dict[str, str]:
        """Quantity key -> its "not converged: ..." note."""
        return {k: q.note for k, q in self.quantities.items() if not q.converged}

    def table(self) -> list[str]:
        """One line per quantity: value +- numerical uncertainty in laboratory units, and
        the note of a quantity not converged."""
        from .. import units

        scale = {"hartree": (units.HARTREE_EV, "eV", 4), "atomic_unit_of_time": (units.au_to_fs(1.0), "fs", 4),
                 "atomic_unit_of_momentum": (1.0, "a.u.", 4), "1": (1.0, "", 4)}
        lines = []
        for key, q in self.quantities.items():
            factor, unit, digits = scale[q.unit]
            text = f"{q.value * factor:.{digits}g} +- {q.uncertainty * factor:.2g} {unit}".rstrip()
            lines.append(f"{key.replace('_', ' '):<24} {text:<28} {q.note or 'converged'}")
        return lines

    def __repr__(self) -> str:
        bad = self.not_converged
        flagged = "" if not bad else " (" + ", ".join(f"{k}: {v.removeprefix('not converged: ')}"
                                                       for k, v in list(bad.items())[:2]) + ")"
        return (f"<CertifiedRun {self.path.name}: {len(self.quantities)} quantities, {len(bad)} not converged"
                f"{flagged[:120]}; {1 + len(self.companions)} runs in {self.wall:.1f} s>")


def _read_back(record: dict, path) -> dict:
    """Add the quantities and tolerances of the finished run in ``path`` to its record
    (its analysis recomputed from the file, the field-free floor read from it)."""
    import h5py

    from ..analysis.certification import quantities, tolerances
    from ..io.analysis_file import analyse_file

    try:
        with h5py.File(path, "r") as f:
            analysis = analyse_file(f)
        record["quantities"] = quantities(analysis)
        record["tolerances"] = {k: (t.value, t.reason) for k, t in tolerances(analysis).items()}
    except (OSError, KeyError, ValueError, IndexError, ArithmeticError) as exc:
        record.update(status="failed", error=f"its result could not be analysed: {type(exc).__name__}: {exc}")
    return record


def _run_main(problem, path: Path) -> dict:
    """The run as given, in this process (its imports, problem and compiled kernels are
    already here, so it starts while the cluster's workers are still starting)."""
    from ..api.single_run import run
    from ..io.wisdom import fftw_wisdom

    started = time.perf_counter()
    with fftw_wisdom():
        run(problem, path)
    return _read_back({"status": "done", "seconds": time.perf_counter() - started}, path)


def _take(pending, lock):
    """The longest companion not yet started (removed from ``pending``), or None."""
    with lock:
        return pending.pop(0) if pending else None


def _run_companions(pending, lock, n_workers, client, records, failure):
    """Run companions taken from ``pending`` (name, config, path; longest first, shared
    with the calling process under ``lock``) on Dask, one per worker at a time, each
    worker taking the next when its run ends; fill ``records``."""
    from distributed import as_completed

    from .execute import open_local_client

    own = None
    try:
        if client is None:
            own = open_local_client(n_workers)
            client = own[1]
        names = {}

        def submit(task):
            name, cfg, path = task
            fut = client.submit(run_and_read, cfg.resolved_toml, str(cfg.source), str(cfg.base_dir), str(path),
                                key=f"tdse1d-certify-{name}-{os.getpid()}-{time.time_ns()}", pure=False, retries=0)
            names[fut.key] = name
            return fut

        first = [t for t in (_take(pending, lock) for _ in range(n_workers)) if t is not None]
        running = as_completed([submit(t) for t in first], loop=client.loop)
        for fut in running:
            name = names[fut.key]
            try:
                records[name] = fut.result()
            except Exception as exc:  # a worker died: not the run's own fault
                records[name] = {"status": "lost", "error": f"worker lost: {type(exc).__name__}: {exc}"}
            task = _take(pending, lock)
            if task is not None:
                running.add(submit(task))
    except BaseException as exc:  # handed to the caller's thread
        failure.append(exc)
    finally:
        if own is not None:
            own[1].close()
            own[0].close()


def certify_problem(problem, output, *, keep_companions: bool = False, workers: int | None = None,
                    client=None) -> CertifiedRun:
    """Run a problem and its companions in parallel and store every quantity's spread.

    The run as given runs in this process, where its problem is already built, while a
    local Dask cluster (or ``client``) starts; then this process and the workers take
    the companions from one queue, the longest not yet started first, each when its
    run ends (this process has its imports and compiled kernels loaded already).

    Parameters
    ----------
    problem : tdse1d.input.problem.Problem
        The main run, as given.
    output : path
        Its result file (written when the runs are done and certified). A kept
        companion file of the same companion input is not run again.
    keep_companions : bool
        Keep the companion files in :func:`companion_directory` (else removed).
    workers : int, optional
        Worker processes of the local Dask cluster (default: the cores but one, at
        least one, at most one per companion but one).
    client : distributed.Client, optional
        Use this client instead of a local cluster (and leave it open).

    Returns
    -------
    CertifiedRun

    Raises
    ------
    CertificationFailed
        A companion failed (the message says which and why); nothing is written to
        ``output``.
    tdse1d.errors.OutputError
        ``output`` exists and is not a tdse1d result file (it is left alone).
    InputError, tdse1d.errors.NumericalError
        As :func:`tdse1d.api.run` for the run as given.
    """
    import threading

    from ..errors import OutputError
    from ..input.problem import check_absorber
    from ..io.certification_file import write_certification
    from ..io.guarded_file import WriterLock, lock_path
    from ..io.result_file import refuse_reason
    from ..runs.resources import check_resources

    started = time.perf_counter()
    output = Path(output)
    reason = refuse_reason(output)
    if reason is not None:  # before anything runs, as a plain run
        raise OutputError(reason)
    check_absorber(problem)  # the checks of a plain run, before the companions start
    check_resources(problem, output)
    folder = companion_directory(output)
    folder.mkdir(exist_ok=True)  # in the output's folder, which must exist (as for a plain run)
    main_file = folder / "main.h5"  # moved to output once certified
    companions = plan_companions(problem)
    tasks = [(c.name, companion_config(problem.config, c), folder / f"{c.name}.h5")
             for c in sorted(companions, key=lambda c: -c.cost)]  # longest first
    # this process computes too: after the run as given it takes companions from the
    # same queue as the workers (the longest not yet started), with its imports and
    # compiled kernels already loaded, while each worker pays its start-up and imports
    # (seconds) before its first run; so the cluster gets one worker per core but this
    # one (docs/performance.md, "Certified runs")
    n_workers = workers or max(1, min((os.cpu_count() or 1) - 1, len(tasks) - 1))
    pending, lock = list(tasks), threading.Lock()
    records, failure = {}, []
    thread = threading.Thread(target=_run_companions, args=(pending, lock, n_workers, client, records, failure),
                              name="tdse1d-certify-companions", daemon=True)
    thread.start()
    # a failure of the run as given (or Ctrl-C) propagates at once; the companions' thread
    # is a daemon that closes its own cluster when its runs end, or ends with the process
    records["main"] = _run_main(problem, main_file)
    while (task := _take(pending, lock)) is not None:
        name, cfg, path = task
        records[name] = run_and_read(cfg.resolved_toml, str(cfg.source), str(cfg.base_dir), str(path))
    thread.join()
    if failure:
        raise failure[0]
    for name in ("main", *(c.name for c in companions)):
        r = records.get(name, {})
        if r.get("status") != "done":
            what = "the run as given" if name == "main" else f"the {name} companion"
            if not keep_companions:
                shutil.rmtree(folder, ignore_errors=True)
            raise CertificationFailed(f"{what} failed: {r.get('error', 'no result')}")
    main = records["main"]
    tolerance = {k: Tolerance(*v) for k, v in main["tolerances"].items()}
    moves = [(c.parameter, records[c.name]["quantities"], c.error_factor) for c in companions]
    certified = certify_quantities(main["quantities"], moves, tolerance)
    wall = time.perf_counter() - started
    rows = [{"name": c.name, "parameter": c.parameter, "change": c.change, "error_factor": c.error_factor,
             "seconds": records[c.name].get("seconds", math.nan),
             "file": os.path.relpath(folder / f"{c.name}.h5", output.parent) if keep_companions else None}
            for c in companions]
    write_certification(main_file, certified, rows, wall, n_workers)
    with WriterLock(lock_path(output), what=str(output), purpose="tdse1d run --certify"):
        os.replace(main_file, output)
    if not keep_companions:
        shutil.rmtree(folder, ignore_errors=True)
    return CertifiedRun(output, certified, companions, records, wall, n_workers, folder if keep_companions else None)
