"""``tdse1d estimate INPUT``: semiclassical numbers for the input's pulses."""

import json

# Only the standard library at module level (the numerics are imported in main()), so
# that ``tdse1d --help`` lists this command without loading them.
from .program import add_input_arguments

HELP = "semiclassical estimates (Up, Keldysh parameter, cutoffs), the advised grid, and the memory and disk of the run"


def add_arguments(parser):
    add_input_arguments(parser)
    parser.add_argument("--json", action="store_true", help="print the estimates as JSON")


def _rows(p):
    from .. import units

    ev = units.HARTREE_EV
    return [
        ("photon energy", f"{p.photon_energy * ev:.4f} eV", f"{p.photon_energy:.6g} a.u., {units.omega_to_nm(p.photon_energy):.1f} nm"),
        ("peak field", f"{p.peak_field:.5g} a.u.", f"{p.peak_field * units.AU_FIELD_V_M:.4g} V/m"),
        ("peak intensity", f"{p.peak_intensity_W_cm2:.4g} W/cm^2", "cycle-averaged, I = c eps0 E0^2 / 2"),
        ("optical period", f"{units.au_to_fs(p.optical_period):.4f} fs", f"{p.optical_period:.2f} a.u."),
        ("ionization potential Ip", f"{p.ionization_potential * ev:.4f} eV", f"{p.ionization_potential:.6f} Hartree"),
        ("ponderomotive energy Up", f"{p.ponderomotive_energy * ev:.4f} eV", f"{p.ponderomotive_energy:.6g} Hartree"),
        ("Keldysh parameter", f"{p.keldysh_parameter:.4g}", "sqrt(Ip / 2Up); < 1 tunnelling"),
        ("quiver amplitude", f"{p.quiver_amplitude:.3f} bohr", "E0 / w^2"),
        ("cutoff Ip + 3.17 Up", f"{p.cutoff_energy * ev:.3f} eV", f"harmonic {p.cutoff_order:.1f}"),
        ("cutoff 1.32 Ip + 3.17 Up", f"{p.cutoff_energy_lewenstein * ev:.3f} eV", f"harmonic {p.cutoff_energy_lewenstein / p.photon_energy:.1f}"),
        ("direct electrons 2 Up", f"{p.direct_drift_energy * ev:.3f} eV", ""),
        ("backscattered electrons 10 Up", f"{p.backscattered_drift_energy * ev:.3f} eV", ""),
        ("barrier suppression", f"{p.barrier_suppression_intensity_W_cm2:.4g} W/cm^2", f"field {p.barrier_suppression_field:.5g} a.u. (this model)"),
    ]


def _resource_rows(est):
    """Rows of the memory and disk estimate (:mod:`tdse1d.runs.resources`) of the run as given."""
    from ..runs.resources import MEMORY_SHARE, available_memory, format_bytes

    memory = available_memory()
    rows = [("time steps", f"{est.steps}", f"{est.points} grid points, {est.snapshots} snapshots")]
    have = f"{format_bytes(memory)} available, {MEMORY_SHARE:.0%} may be planned" if memory else "available: unknown"
    rows.append(("memory (peak)", format_bytes(est.memory), have))
    rows += [(f"  {name}", format_bytes(n), "") for name, n in est.memory_parts.items()]
    rows.append(("disk (result and checkpoint)", format_bytes(est.disk), ""))
    rows += [(f"  {name}", format_bytes(n), "") for name, n in est.disk_parts.items()]
    return rows


def _pair_rows(est):
    """Rows of the estimate of a run of the two-electron atom (:func:`tdse1d.api.pair_run.estimate_pair`)."""
    from .. import units
    from ..runs.pair_runner import MEMORY_SHARE
    from ..runs.resources import available_memory, format_bytes

    p, w = est.problem, est.wall
    g, t = p.grid, p.time
    memory = available_memory()
    have = f"{format_bytes(memory)} available, {MEMORY_SHARE:.0%} may be planned" if memory else "available: unknown"
    minutes = w.wall >= 120
    wall = f"{w.wall / 60:.3g} min" if minutes else f"{w.wall:.3g} s"
    return [
        ("grid (x1, x2)", f"{g.points} x {g.points}", f"{g.spacing:.4g} bohr, box +-{g.half_width:.4g} bohr, "
                                                      f"absorber {p.absorber_width:.4g} bohr on each edge"),
        ("time steps", f"{t.steps}", f"of {t.step:.4g} a.u., {t.end - t.start:.5g} a.u. "
                                     f"({units.au_to_fs(t.end - t.start):.3g} fs)"),
        ("snapshots", f"{p.config.output.snapshots}", f"every {p.config.output.snapshot_stride}th point of each axis"),
        ("memory (estimate)", format_bytes(est.memory), have),
        ("time per step", f"{w.step * 1e3:.3g} ms", f"the run's step timed now on {w.timed_points}^2 (load "
                                                     f"{w.load:.1f})" + ("" if w.timed_points == g.points else
                                                                         f", scaled to {g.points}^2 as N^2 log N^2")),
        ("wall time (propagation)", wall, "steps x time per step; the states and FFTW planning come on top, and a "
                                          "busier machine runs slower"),
    ] + _knockout_rows(est)


def _knockout_rows(est):
    """3.17 Up of the strongest pulse against the ion's Ip2."""
    from .. import units

    k = est.knockout
    if not k:
        return []
    ev = units.HARTREE_EV
    above = k["return_energy"] >= k["ion_ionization_potential"]
    return [("ponderomotive energy Up", f"{k['ponderomotive_energy'] * ev:.4f} eV", "strongest pulse"),
            ("3.17 Up against the ion's Ip2", f"{k['return_energy'] * ev:.2f} eV",
             f"{'above' if above else 'below'} Ip2 = {k['ion_ionization_potential'] * ev:.2f} eV: direct knock-out "
             f"{'possible' if above else 'not possible'}; they meet at {k['knockout_intensity_W_cm2']:.3g} W/cm^2")]


def main(args):
    from .. import units
    from ..api import single_run as api
    from ..input.schema import load_input
    from ..io.problem_store import problem_store

    config = load_input(args.input, args.overrides)
    with problem_store():  # the fit and step estimate of an input solved before
        result = api.estimate(config)
    if args.json:
        print(json.dumps(result.to_json(), indent=1))
        return 0
    if isinstance(result, api.PairEstimateResult):
        print("the two-electron atom on a 2-D grid: the run as given (memory estimated, steps timed now)")
        for name, value, note in _pair_rows(result):
            print(f"  {name:<30} {value:>20}   {note}")
        return 0
    for i, p in enumerate(result.pulses):
        print(f"pulse {i}")
        for name, value, note in _rows(p):
            print(f"  {name:<30} {value:>20}   {note}")
    a = result.advice
    print("advised grid")
    print(f"  {'points':<30} {a.points:>20}")
    print(f"  {'spacing':<30} {a.spacing:>15.4g} bohr")
    print(f"  {'time step':<30} {a.time_step:>15.4g} a.u.   {units.au_to_fs(a.time_step) * 1000:.3f} as")
    print(f"  {'absorber width':<30} {a.absorber_width:>15.1f} bohr")
    for reason in a.reasons:
        print(f"    - {reason}")
    print("resources of the run as given (checked before `tdse1d run` propagates)")
    for name, value, note in _resource_rows(result.resources):
        print(f"  {name:<30} {value:>20}   {note}")
    return 0
