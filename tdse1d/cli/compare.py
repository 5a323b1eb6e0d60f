"""``tdse1d compare RESULT_OR_SUMMARY MEASURED.csv``: a computed harmonic spectrum beside a measured one."""

import json
import math

from .program import nonnegative_float, nonnegative_int
from ..input.spec import InputError

HELP = "broaden and weight a computed harmonic spectrum like a measured one, and compare their cutoffs"


#: what compare.computed_spectrum reads, by kind of file
NEEDS = {
    "run": ("estimates", "spectra/harmonic/frequency", "spectra/harmonic/power"),
    "scan-summary": ("spectra/photon_energy_eV", "spectra/power", "estimates/photon_energy_eV",
                     "estimates/ionization_potential_eV"),
}


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
    from ..scan import compare

    from ..io.checked_open import check_result

    check_result(args.computed, kinds=("run", "scan-summary"), needs=NEEDS)
    try:
        measured = compare.read_spectrum_csv(args.measured, args.x_unit)
        response = compare.read_spectrum_csv(args.response, args.x_unit) if args.response else None
        energy, power, omega0, ip, label = compare.computed_spectrum(args.computed, args.point, args.average)
        floor = compare.computed_floor(args.computed, args.point, args.average)
        result = compare.compare_spectra(energy, power, measured, omega0, ip,
                                         resolution_fwhm_ev=args.resolution, response=response, floor_power=floor)
    except KeyError as exc:  # an attribute or dataset the checks above do not list
        raise InputError(f"missing data ({exc})", source=args.computed) from None
    except (ValueError, OSError) as exc:
        raise InputError(str(exc)) from None
    if args.plot:
        compare.plot_comparison(result, args.plot, label)
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
