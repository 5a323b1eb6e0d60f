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


def main(args):
    from ..api import sfa as api
    from ..input.schema import load_input

    outcome = api.sfa(load_input(args.input, args.overrides), photoelectrons=not args.no_photoelectrons,
                      rescattering=not args.direct_only)
    if args.json:
        print(json.dumps(outcome.to_json()))
    else:
        print(api.describe(outcome))
    return 0
