"""``tdse1d validate``: run the validation cases and write a report."""

import sys

HELP = "run the validation suite (validation/*/case.toml) and write REPORT_DIR/report.md"


def add_arguments(parser):
    parser.add_argument("--quick", action="store_true", help="only the quick cases (a few minutes on two cores)")
    parser.add_argument("-o", "--output", default="validation-report", metavar="REPORT_DIR",
                        help="directory for report.md and its figures (default: validation-report)")
    parser.add_argument("--cases", default=None, metavar="DIR", help="folder of cases (default: the cases shipped with the package, else the source tree's validation/)")
    parser.add_argument("--only", action="append", default=[], metavar="CASE", help="run only this case (repeatable)")


def main(args):
    from ..api.campaigns import validate

    result = validate(args.output, cases=args.cases, quick=args.quick, only=args.only,
                      log=lambda m: print(m, file=sys.stderr, flush=True))
    failed = result.failed
    print(f"{len(result.reports) - len(failed)} passed, {len(failed)} failed in {result.seconds:.0f} s; "
          f"report: {result.path}")
    return 1 if failed or not result.reports else 0
