"""``tdse1d validate``: run the validation cases and write a report."""

import platform
import subprocess
import sys
import time
from datetime import datetime, timezone

from .. import __version__
from .. import validate

HELP = "run the validation suite (validation/*/case.toml) and write REPORT_DIR/report.md"


def add_arguments(parser):
    parser.add_argument("--quick", action="store_true", help="only the quick cases (a few minutes on two cores)")
    parser.add_argument("-o", "--output", default="validation-report", metavar="REPORT_DIR",
                        help="directory for report.md and its figures (default: validation-report)")
    parser.add_argument("--cases", default=None, metavar="DIR", help="folder of cases (default: the cases shipped with the package, else the source tree's validation/)")
    parser.add_argument("--only", action="append", default=[], metavar="CASE", help="run only this case (repeatable)")


def _cpu_model():
    try:
        out = subprocess.run(["lscpu"], capture_output=True, text=True, timeout=10).stdout
        for line in out.splitlines():
            if line.startswith("Model name:"):
                return line.split(":", 1)[1].strip()
    except (OSError, subprocess.SubprocessError):
        pass
    return platform.processor() or "unknown"


def main(args):
    import os

    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    cases = validate.discover(args.cases, quick=args.quick, names=set(args.only) or None)
    started = time.perf_counter()
    reports = validate.run_suite(cases, args.output, log=lambda m: print(m, file=sys.stderr, flush=True))
    seconds = time.perf_counter() - started
    header = {
        "date": datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
        "machine": f"{_cpu_model()}, {os.cpu_count()} cores",
        "tdse1d": __version__,
        "suite": "quick" if args.quick else "full",
        "run time": f"{seconds:.0f} s (load average {load:.1f} at the start: other work on the machine slows it)",
    }
    path = validate.write_report(reports, args.output, header)
    failed = [r.case.name for r in reports if not r.passed]
    print(f"{len(reports) - len(failed)} passed, {len(failed)} failed in {seconds:.0f} s; report: {path}")
    return 1 if failed or not reports else 0
