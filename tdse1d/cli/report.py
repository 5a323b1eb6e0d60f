"""``tdse1d report RESULT.h5``: the semiclassical prediction beside the quantum result.

Each row of the table is one quantity: prediction | quantum result | comparison
(a ratio for positive quantities, a difference for shifts and times), with energies
in eV, harmonic orders and atomic units. ``--json`` prints the same rows for machines.
The numbers come from :func:`tdse1d.io.analysis_file.analyse_file`, the rows from
:mod:`tdse1d.analysis.report`; this module only parses and renders.
"""

from __future__ import annotations

import json

HELP = "side-by-side table: semiclassical prediction | quantum result | ratio, for a result file"


def add_arguments(parser):
    parser.add_argument("result", metavar="RESULT.h5", help="result file of `tdse1d run`")
    parser.add_argument("--json", action="store_true", help="print the rows as JSON")


def main(args):
    from ..analysis.report import format_table, to_json
    from ..io.analysis_file import analyse_file, ionization_note, target_ionization_potential
    from ..io.checked_open import open_result

    with open_result(args.result, kinds=("run",)) as f:
        analysis = analyse_file(f)
        target = target_ionization_potential(f.attrs.get("input", ""))
        note = ionization_note(f["ionization"]) if "ionization" in f else ""
    if args.json:
        print(json.dumps(to_json(analysis, target, note), indent=1))
    else:
        print(format_table(analysis, target, note))
    return 0
