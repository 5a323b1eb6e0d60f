"""``tdse1d export RESULT.h5 --what SPECTRUM --units eV|au|nm [-o FILE.csv]``: a spectrum as CSV.

The first line names the columns with their units, e.g.
``photon_energy [eV],harmonic_order [1],power [a.u.]``; the data follow, one row per
sample, comma-separated. The columns are :func:`tdse1d.api.export`'s; this module only
parses and writes them.
"""

from __future__ import annotations

import sys

HELP = "write a spectrum (harmonic, photoelectron, time-frequency, ...) to CSV"


def add_arguments(parser):
    parser.add_argument("result", metavar="RESULT.h5", help="result file of `tdse1d run`")
    # checked by the library (tdse1d.api.results.SPECTRA), so the parser imports no numerics
    parser.add_argument("--what", default="harmonic",
                        help="which spectrum: harmonic (default), photoelectron, time-frequency, or a derived "
                             "spectrum such as harmonic-forms (docs/output.md)")
    parser.add_argument("--units", choices=("eV", "au", "nm"), default="eV",
                        help="unit of the energy column (nm: photon wavelength); default eV")
    parser.add_argument("-o", "--output", metavar="FILE.csv", default=None, help="output file (default: stdout)")


def main(args):
    from ..api.results import export

    table = export(args.result, args.what, args.units, args.output)
    if table.path is None:
        table.write(sys.stdout)
    else:
        print(f"wrote {table.path} ({table.data.shape[0]} rows)")
    return 0
