"""Running the suite: runs go through :func:`tdse1d.api.run_problem` in this process, one
after the other, into a scratch directory; the same resolved input is run once per suite
(:class:`Runner`). :func:`run_suite` runs the cases and :func:`write_report` writes
``report.md`` and the PNG figures it refers to.
"""

from __future__ import annotations

import math
import time
import traceback
from pathlib import Path

from .cases import CASE_KINDS, CaseReport


class Runner:
    """Runs inputs in this process, once per resolved input, into ``workdir``."""

    def __init__(self, workdir):
        self.workdir = Path(workdir)
        self.workdir.mkdir(parents=True, exist_ok=True)
        self._cache = {}
        self.runs = 0

    def run(self, config):
        """:class:`~tdse1d.api.RunOutcome` of a :class:`~tdse1d.input.schema.RunConfig`."""
        from ..api.single_run import run_problem
        from ..runs.checkpoint import input_hash
        from ..input.problem import build_problem

        digest = input_hash(config)
        if digest not in self._cache:
            problem = build_problem(config)
            out = self.workdir / f"{digest[:16]}.h5"
            self._cache[digest] = run_problem(problem, out, control=_NoCheckpoints())
            out.unlink(missing_ok=True)  # the result is kept in memory; the file is not needed
            self.runs += 1
        return self._cache[digest]


class _NoCheckpoints:
    stop_requested = False

    def checkpoint_due(self):
        return False


# ------------------------------------------------------------------------- driver


def run_suite(cases, report_dir, log=None) -> list[CaseReport]:
    """Run ``cases`` (from :func:`discover`), figures into ``report_dir``.

    A case that raises is reported as failed with its error; the others still run.
    ``log(message)`` is told when each case starts and ends.
    """
    import tempfile

    report_dir = Path(report_dir)
    report_dir.mkdir(parents=True, exist_ok=True)
    reports = []
    with tempfile.TemporaryDirectory(prefix="tdse1d-validate-") as scratch:
        runner = Runner(scratch)
        for case in cases:
            if log:
                log(f"{case.name} ...")
            started = time.perf_counter()
            kind = CASE_KINDS[case.get("kind")](case, runner, report_dir)
            rep = CaseReport(case)
            try:
                rep.rows = kind.run()
            except Exception as exc:  # a broken case must not hide the others' results
                rep.error = f"{type(exc).__name__}: {exc}"
                rep.notes.append(traceback.format_exc(limit=3))
            rep.figures = kind.figures
            rep.notes = kind.notes + rep.notes
            rep.seconds = time.perf_counter() - started
            reports.append(rep)
            if log:
                log(f"{case.name}: {'pass' if rep.passed else 'FAIL'} ({rep.seconds:.1f} s)")
    return reports


def _fmt(v):
    if isinstance(v, float):
        if not math.isfinite(v):
            return str(v)
        if v == 0:
            return "0"
        return f"{v:.5g}" if 1e-3 <= abs(v) < 1e5 else f"{v:.3e}"
    return str(v)


def write_report(reports, report_dir, header: dict) -> Path:
    """Write ``report_dir/report.md`` for the case reports; ``header`` is shown first."""
    report_dir = Path(report_dir)
    n_pass = sum(r.passed for r in reports)
    lines = ["# tdse1d validation report", ""]
    for k, v in header.items():
        lines.append(f"- {k}: {v}")
    lines += [f"- cases: {len(reports)}, passed {n_pass}, failed {len(reports) - n_pass}", "",
              "| case | result | time (s) |", "| --- | --- | --- |"]
    for r in reports:
        lines.append(f"| [{r.case.name}](#{r.case.name}) | {'pass' if r.passed else '**FAIL**'} | {r.seconds:.1f} |")
    lines.append("")
    for r in reports:
        c = r.case
        lines += [f"## {c.name}", "", f"**{c.title}** (kind `{c.get('kind')}`): {'pass' if r.passed else '**FAIL**'}", ""]
        if c.get("description", None):
            lines += [c.get("description").strip(), ""]
        lines += [f"Source: {c.get('source', '')}", ""]
        if r.error:
            lines += [f"Error: `{r.error}`", ""]
        if r.rows:
            lines += ["| quantity | reference | computed | deviation | tolerance | result |",
                      "| --- | --- | --- | --- | --- | --- |"]
            for row in r.rows:
                unit = f" {row.units}" if row.units not in ("", "1") and not row.relative else ""
                dev = f"{_fmt(row.deviation)}" + (" (relative)" if row.relative else unit)
                tol = row.rule or (f"{_fmt(row.tolerance)}" + (" (relative)" if row.relative else unit))
                verdict = "report" if row.informational else ("pass" if row.passed else "**FAIL**")
                lines.append(f"| {row.quantity} | {_fmt(row.reference)}{unit} | {_fmt(row.computed)}{unit} | {dev} | "
                             f"{tol} | {verdict} |")
            lines.append("")
        for note in r.notes:
            lines += ["```", note.rstrip(), "```", ""] if "\n" in note else [f"- {note}", ""]
        for fig in r.figures:
            lines += [f"![{c.name}]({fig})", ""]
    path = report_dir / "report.md"
    path.write_text("\n".join(lines), encoding="utf-8")
    return path
