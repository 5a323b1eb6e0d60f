"""``tdse1d report RESULT.h5``: the semiclassical prediction beside the quantum result.

Each row of the table is one quantity: prediction | quantum result | comparison
(a ratio for positive quantities, a difference for shifts and times), with energies
in eV, harmonic orders and atomic units. ``--json`` prints the same rows for machines.
The rows come from :func:`tdse1d.api.report`; this module only parses and renders.
"""

from __future__ import annotations

import json

HELP = "side-by-side table: semiclassical prediction | quantum result | ratio, for a result file"


def add_arguments(parser):
    parser.add_argument("result", metavar="RESULT.h5", help="result file of `tdse1d run`")
    parser.add_argument("--json", action="store_true", help="print the rows as JSON")


def main(args):
    from ..api.results import report

    result = report(args.result)
    print(json.dumps(result.to_json(), indent=1) if args.json else result.table())
    return 0
