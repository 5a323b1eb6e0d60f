"""The library functions of many runs and of measured data: :func:`scan` (a parameter
scan and its summary), :func:`compare` (a computed harmonic spectrum beside a measured
one) and :func:`validate` (the validation suite). The commands ``tdse1d scan``,
``tdse1d compare`` and ``tdse1d validate`` parse their arguments, call one of these,
and render what it returns. Signals are the command's business: a caller that wants a
checkpoint on SIGTERM installs the handlers (:mod:`tdse1d.scans.worker`) around the call.
"""

from __future__ import annotations

import os
import platform
import subprocess
import time
from dataclasses import dataclass, field, replace
from datetime import datetime, timezone
from pathlib import Path

from ..input.spec import InputError

__all__ = ["scan", "certify", "compare", "validate", "ScanOutcome", "ValidationReport"]


# ------------------------------------------------------------------------ scan


@dataclass(frozen=True)
class ScanOutcome:
    """What :func:`scan` did in a scan directory.

    ``execution`` is the :class:`tdse1d.scans.execute.ScanReport` of the points run (None
    when only gathered or listed); ``summary`` the written summary (None for a single
    point or a listing); ``missing`` the indices of points without a result;
    ``states`` the state of every point (listing only).
    """

    plan: object = field(repr=False)
    directory: Path
    mode: str
    """``all``, ``point``, ``gather`` or ``list``."""
    execution: object = field(default=None, repr=False)
    summary: object = field(default=None, repr=False)
    missing: tuple = ()
    states: dict = field(default_factory=dict, repr=False)

    @property
    def total(self) -> int:
        return len(self.plan.points)

    def result(self, index: int, rung: str = "run") -> Path:
        """File of point ``index`` at ``rung``: ``"run"`` (its result file, the default)
        or ``"sfa"`` (its SFA file), of the plan's ``rungs`` (:mod:`tdse1d.scans.rungs`)."""
        from ..input.spec import InputError
        from ..scans.directory import ScanDirectory

        if rung not in self.plan.rungs:
            raise InputError(f"the plan computes {', '.join(self.plan.rungs)}, not {rung!r}", "rungs")
        return ScanDirectory(self.directory).result(self.plan.points[index], rung)

    def __repr__(self) -> str:
        parts = [f"{self.total - len(self.missing)} of {self.total} points done"] if self.mode != "list" else \
            [f"{self.total} points"]
        if self.execution is not None:
            e = self.execution
            parts.append(f"{len(e.done)} run, {len(e.skipped)} skipped, {len(e.failed)} failed")
        if self.summary is not None:
            parts.append(f"summary {Path(self.summary.path).name}")
        return f"<ScanOutcome {self.directory.name} ({self.mode}): {', '.join(parts)}>"


def scan(plan, directory=None, *, point: int | None = None, gather: bool = False, listing: bool = False,
         scheduler: str | None = None, timeout: float = 10.0, workers: int | None = None, dashboard: bool = False,
         fresh: bool = False, retry_failed: bool = False, progress: bool = False, client=None) -> ScanOutcome:
    """Run the points of a scan plan and write its summary (``tdse1d scan``).

    Parameters
    ----------
    plan : path or ScanPlan
        Scan plan (TOML: base input and ``[[axis]]`` tables), or one already read.
    directory : path, optional
        Scan directory (default: PLAN-STEM in the working directory).
    point : int, optional
        Run point K alone in this process, no Dask (one task of a job array); no summary.
    gather : bool
        Only assemble ``summary.h5`` from the finished points.
    listing : bool
        Run nothing; report every point's state (``ScanOutcome.states``).
    scheduler : str, optional
        Address of a running Dask scheduler (default: a local cluster).
    timeout : float
        Seconds to wait for ``scheduler``.
    workers : int, optional
        Worker processes of the local cluster (default: cores).
    dashboard : bool
        Serve the Dask dashboard of the local cluster.
    fresh, retry_failed : bool
        Delete the points already in the directory first; run failed points again.
    progress : bool
        Show a progress bar.
    client : distributed.Client, optional
        A Dask client to run on (e.g. of a dask-jobqueue cluster); replaces ``scheduler``.

    Returns
    -------
    ScanOutcome

    Raises
    ------
    tdse1d.scans.directory.PlanMismatch
        The directory holds another plan's points.
    tdse1d.scans.execute.SchedulerUnreachable
        The scheduler did not answer within ``timeout``; nothing was run.
    """
    from ..scans.directory import ScanDirectory
    from ..scans.plan import ScanPlan, load_plan

    source = plan.source if isinstance(plan, ScanPlan) else str(plan)
    if not isinstance(plan, ScanPlan):
        plan = load_plan(plan)  # PlanError (exit 2) lists every bad point
        if directory is None:
            directory = Path(Path(source).stem)
    if directory is None:
        raise InputError("a scan plan given as an object needs a directory", "--output")
    directory = ScanDirectory(Path(directory))
    root = Path(directory.root)
    if listing:
        return ScanOutcome(plan, root, "list", states={p.index: directory.state(p) for p in plan.points})
    execution = summary = None
    if point is not None:
        from ..scans.execute import run_one

        if fresh:
            raise InputError("--fresh with --point would delete the points of the other array tasks; "
                             "clear the directory once before submitting the array", "--fresh", source)
        try:
            execution = run_one(plan, directory.root, point, fresh=fresh, retry_failed=True)
        except IndexError as exc:
            raise InputError(str(exc), "--point", source) from None
        mode = "point"
    else:
        from ..scans.summary import write_summary

        if not gather:
            from ..scans.execute import run_scan

            execution = run_scan(plan, directory.root, scheduler=scheduler, timeout=timeout, workers=workers,
                                 dashboard=dashboard, fresh=fresh, retry_failed=retry_failed, progress=progress,
                                 client=client)
            with directory.lock():
                summary = write_summary(plan, directory.root)
        else:
            with directory.lock():  # not while a scan is writing into the directory
                directory.claim(plan, fresh=False)
                summary = write_summary(plan, directory.root)
        mode = "gather" if gather else "all"
    missing = tuple(p.index for p in plan.points if directory.state(p) != "done")
    return ScanOutcome(plan, root, mode, execution, summary, missing)


# --------------------------------------------------------------------- certify


def certify(config, output=None, *, overrides=(), keep_companions: bool | None = None, workers: int | None = None,
            client=None):
    """Run an input and its companion runs, and store each quantity's numerical
    uncertainty in the result file (``tdse1d run --certify``, or
    ``certification.enabled = true`` in the input).

    Parameters
    ----------
    config : RunConfig, Problem or path
        The input (a path is read with ``overrides``), or an assembled problem.
    output : path, optional
        The result file (:func:`tdse1d.api.single_run.output_path`).
    keep_companions : bool, optional
        Keep the companions' files in ``STEM.companions/`` beside it (default: the
        input's ``certification.keep_companions``).
    workers : int, optional
        Worker processes of the local Dask cluster for the companions (default: the
        cores, at most 3).
    client : distributed.Client, optional
        An existing Dask client to run on instead.

    Returns
    -------
    tdse1d.scans.certify.CertifiedRun
        Per quantity its value, uncertainty and tolerance (atomic units) and whether it
        converged; the wall time (s).
    """
    from ..input.problem import Problem, build_problem
    from ..input.schema import RunConfig, load_input
    from ..scans.certify import certify_problem
    from .single_run import output_path

    problem = config if isinstance(config, Problem) else build_problem(
        config if isinstance(config, RunConfig) else load_input(config, overrides))
    keep = problem.config.certification.keep_companions if keep_companions is None else keep_companions
    return certify_problem(problem, output_path(problem.config, output), keep_companions=keep, workers=workers,
                           client=client)


# ------------------------------------------------------------------------ compare

#: what tdse1d.scans.compare.computed_spectrum reads, by kind of file
COMPARE_NEEDS = {
    "run": ("estimates", "spectra/harmonic/frequency", "spectra/harmonic/power"),
    "scan-summary": ("spectra/photon_energy_eV", "spectra/power", "estimates/photon_energy_eV",
                     "estimates/ionization_potential_eV"),
}


def compare(computed, measured, *, x_unit: str | None = None, response=None, resolution: float = 0.0,
            point: int | None = None, average: str | None = None, plot=None):
    """Broaden and weight a computed harmonic spectrum like a measured one and compare
    their cutoffs (``tdse1d compare``).

    Parameters
    ----------
    computed : path
        Run result or scan summary.h5.
    measured : path
        CSV of two columns: photon energy (eV) or wavelength (nm), signal.
    x_unit : {"eV", "nm"}, optional
        Unit of the first CSV column (default: the files' ``# x: ...`` header).
    response : path, optional
        Filter/detector response curve (x, relative response) applied to the computed spectrum.
    resolution : float
        Spectrometer resolution, Gaussian FWHM (eV); 0 for none.
    point : int, optional
        For a summary: the scan point (default 0).
    average : str, optional
        For a summary of an intensity scan: a focal average, e.g. ``volume/incoherent``.
    plot : path, optional
        Overlay the two spectra in this file (png, pdf, svg).

    Returns
    -------
    tdse1d.scans.compare.Comparison
        The two spectra normalised on the measured range and their cutoffs (eV), with
        the computed spectrum's ``label`` and the ``plot`` file written (or None).
    """
    from ..io.checked_open import check_result
    from ..scans import compare as spectra

    check_result(computed, kinds=("run", "scan-summary"), needs=COMPARE_NEEDS)
    try:
        measured_spectrum = spectra.read_spectrum_csv(measured, x_unit)
        response_curve = spectra.read_spectrum_csv(response, x_unit) if response else None
        energy, power, omega0, ip, label = spectra.computed_spectrum(computed, point, average)
        floor = spectra.computed_floor(computed, point, average)
        result = spectra.compare_spectra(energy, power, measured_spectrum, omega0, ip, resolution_fwhm_ev=resolution,
                                         response=response_curve, floor_power=floor)
    except KeyError as exc:  # an attribute or dataset the checks above do not list
        raise InputError(f"missing data ({exc})", source=str(computed)) from None
    except (ValueError, OSError) as exc:
        raise InputError(str(exc)) from None
    result = replace(result, label=label)
    if plot:
        spectra.plot_comparison(result, plot, label)
        result = replace(result, plot=Path(plot))
    return result


# ------------------------------------------------------------------------ validate


@dataclass(frozen=True)
class ValidationReport:
    """The validation cases run by :func:`validate`: their reports
    (:class:`tdse1d.validation.CaseReport`), the report file written, and its header."""

    reports: list = field(repr=False)
    path: Path
    seconds: float
    header: dict = field(repr=False)

    @property
    def failed(self) -> list:
        """Names of the cases that failed."""
        return [r.case.name for r in self.reports if not r.passed]

    @property
    def passed(self) -> bool:
        return bool(self.reports) and not self.failed

    def __repr__(self) -> str:
        return (f"<ValidationReport {len(self.reports) - len(self.failed)} passed, {len(self.failed)} failed "
                f"in {self.seconds:.0f} s: {self.path}>")


def _cpu_model():
    try:
        out = subprocess.run(["lscpu"], capture_output=True, text=True, timeout=10).stdout
        for line in out.splitlines():
            if line.startswith("Model name:"):
                return line.split(":", 1)[1].strip()
    except (OSError, subprocess.SubprocessError):
        pass
    return platform.processor() or "unknown"


def validate(output="validation-report", *, cases=None, quick: bool = False, only=(), log=None) -> ValidationReport:
    """Run the validation cases and write ``OUTPUT/report.md`` (``tdse1d validate``).

    Parameters
    ----------
    output : path
        Directory for report.md and its figures.
    cases : path, optional
        Folder of cases (default: the cases shipped with the package, else the source
        tree's ``validation/``).
    quick : bool
        Only the quick cases.
    only : iterable of str
        Run only these cases (all if empty).
    log : callable, optional
        ``log(message)`` for progress lines.

    Returns
    -------
    ValidationReport
        Each case's rows (quantity, reference, computed, tolerance, source), the
        report's path, and the wall time (s).
    """
    from .. import __version__, validation as suite

    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    found = suite.discover(cases, quick=quick, names=set(only) or None)
    started = time.perf_counter()
    reports = suite.run_suite(found, output, log=log)
    seconds = time.perf_counter() - started
    header = {
        "date": datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
        "machine": f"{_cpu_model()}, {os.cpu_count()} cores",
        "tdse1d": __version__,
        "suite": "quick" if quick else "full",
        "run time": f"{seconds:.0f} s (load average {load:.1f} at the start: other work on the machine slows it)",
    }
    path = suite.write_report(reports, output, header)
    return ValidationReport(reports, Path(path), seconds, header)
