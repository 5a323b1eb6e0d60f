"""``tdse1d sfa INPUT``: the strong-field approximation of an input's pulse, no run."""

import json

from .program import add_input_arguments

HELP = "strong-field approximation (harmonic and photoelectron spectra, quantum orbits) of an input, no run"


def add_arguments(parser):
    add_input_arguments(parser)
    parser.add_argument("--no-photoelectrons", action="store_true", help="harmonic spectrum and orbits only")
    parser.add_argument("--direct-only", action="store_true",
                        help="photoelectrons: the direct amplitude only (skips the costly rescattering)")
    parser.add_argument("--json", action="store_true", help="print the readings as JSON (hartree, a.u.)")
    parser.add_argument("--plan", action="store_true",
                        help="INPUT is a scan plan: the SFA cutoff at every point (no runs), in seconds")
    parser.add_argument("--summary", metavar="SUMMARY_H5", default=None,
                        help="with --plan: a time-dependent scan's summary.h5, laid beside the SFA")
    parser.add_argument("-o", "--output", metavar="FIGURE", default=None,
                        help="with --plan: write the figure of cutoff against Up (.png, .pdf, .svg)")


def main(args):
    from ..api import strong_field as api
    from ..input.schema import load_input

    if args.plan:
        from .. import units

        scan = api.sfa_scan(args.input, summary=args.summary, figure=args.output)
        ev = units.HARTREE_EV
        print(f"{'Up (eV)':>9}  {'SFA cutoff (eV)':>16}  {'orbit cutoff (eV)':>17}")
        for up, cut, err, orbit in zip(scan.ponderomotive_energy, scan.cutoff, scan.cutoff_uncertainty,
                                       scan.orbit_cutoff):
            print(f"{up * ev:9.3f}  {cut * ev:9.2f} +- {err * ev:4.2f}  {orbit * ev:17.2f}")
        if scan.figure is not None:
            print(f"wrote {scan.figure}")
        return 0
    outcome = api.sfa(load_input(args.input, args.overrides), photoelectrons=not args.no_photoelectrons,
                      rescattering=not args.direct_only)
    if args.json:
        print(json.dumps(outcome.to_json()))
    else:
        print(api.describe(outcome))
    return 0
