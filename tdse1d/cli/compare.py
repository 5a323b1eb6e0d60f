"""``tdse1d compare RESULT_OR_SUMMARY MEASURED.csv``: a computed harmonic spectrum beside a measured one."""

import json
import math

from .program import nonnegative_float, nonnegative_int

HELP = "broaden and weight a computed harmonic spectrum like a measured one, and compare their cutoffs"


def add_arguments(parser):
    parser.add_argument("computed", metavar="RESULT_OR_SUMMARY", help="run result or scan summary.h5")
    parser.add_argument("measured", metavar="MEASURED.csv", help="two columns: photon energy (eV) or wavelength (nm), signal")
    parser.add_argument("--x-unit", choices=("eV", "nm"), default=None,
                        help="unit of the first column of the CSV files (default: their '# x: ...' header)")
    parser.add_argument("--response", default=None, metavar="CSV",
                        help="filter/detector response curve (x, relative response), applied to the computed spectrum")
    parser.add_argument("--resolution", type=nonnegative_float, default=0.0, metavar="FWHM_eV",
                        help="spectrometer resolution, Gaussian FWHM in eV (default: none)")
    parser.add_argument("--point", type=nonnegative_int, default=None, metavar="K", help="for a summary: the scan point (default 0)")
    parser.add_argument("--average", default=None, metavar="GEOMETRY/SUM",
                        help="for a summary of an intensity scan: a focal average, e.g. volume/incoherent")
    parser.add_argument("--plot", default=None, metavar="FILE", help="overlay the two spectra in FILE (png, pdf, svg)")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def main(args):
    from ..api.campaigns import compare

    result = compare(args.computed, args.measured, x_unit=args.x_unit, response=args.response,
                     resolution=args.resolution, point=args.point, average=args.average, plot=args.plot)
    label = result.label
    if args.json:
        print(json.dumps(result.to_json(), indent=1))
    else:
        print(f"cutoff computed ({label})  " + (result.computed_reason or f"{result.cutoff_computed_ev:8.2f} eV"))
        print("cutoff measured            " + (result.measured_reason or f"{result.cutoff_measured_ev:8.2f} eV"))
        diff = result.difference_ev
        print("difference (meas. - comp.) " + (f"{diff:+8.2f} eV" if math.isfinite(diff) else "none: a cutoff is unresolved"))
        print(f"resolution {result.resolution_fwhm_ev:g} eV FWHM; normalisation: {result.normalisation}")
        if args.plot:
            print(f"wrote {args.plot}")
    return 0
