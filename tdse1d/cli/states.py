"""``tdse1d states INPUT``: the bound states of the model on the run's grid."""

import json

# Only the standard library at module level (the numerics are imported in main()), so
# that ``tdse1d --help`` lists this command without loading them.
from .program import add_input_arguments, positive_int

HELP = "bound states of the input's model atom on the run's own grid"


def add_arguments(parser):
    add_input_arguments(parser)
    parser.add_argument("--count", type=positive_int, default=None, help="number of states (default: every state with E < 0 on the grid)")
    parser.add_argument("--json", action="store_true", help='print {"softening": a, "energies": [...]} in a.u.')


def main(args):
    from .. import units
    from ..api import single_run as api
    from ..input.schema import load_input

    result = api.find_states(load_input(args.input, args.overrides), count=args.count)
    if args.json:
        print(json.dumps(result.to_json()))
        return 0
    problem = result.problem
    grid = problem.grid
    print(f"model: {problem.potential.describe()}")
    pair = isinstance(result, api.PairStatesResult)
    points = f"{grid.points} x {grid.points} points (x1, x2)" if pair else f"{grid.points} points"
    print(f"grid: {points}, spacing {grid.spacing:.6g} bohr, box +-{grid.half_width:.1f} bohr")
    extent = "<x1^2>^1/2 (bohr)" if pair else "<x^2>^1/2 (bohr)"
    print(f"{'n':>3}  {'energy (Hartree)':>18}  {'energy (eV)':>14}  {extent:>16}")
    for n, (e, r) in enumerate(zip(result.states.energies, result.rms_extent)):
        print(f"{n:>3}  {e:>18.12f}  {units.au_to_ev(e):>14.6f}  {r:>16.3f}")
    if pair:
        e_ion = problem.ion_energy
        print(f"ion (one electron): ground state {e_ion:.12f} Hartree ({units.au_to_ev(e_ion):.6f} eV)")
        for name, ip in (("atom", problem.ionization_potential), ("ion", problem.ion_ionization_potential)):
            print(f"ionization potential of the {name}: {ip:.12f} Hartree ({units.au_to_ev(ip):.6f} eV)")
        above = [str(n) for n, b in enumerate(problem.bound) if not b]
        if above:
            print(f"states {', '.join(above)} lie above the ion's ground state (not bound)")
    return 0
