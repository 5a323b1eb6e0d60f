"""``tdse1d run INPUT``: the full quantum run, written to HDF5.

Checkpoints: with ``output.checkpoint_interval`` the run writes ``RESULT.h5.checkpoint``
beside its result at that wall-clock cadence (see :mod:`tdse1d.runs.checkpoint`). SIGTERM
and SIGINT write a checkpoint at once and exit with status 75 (:data:`EXIT_INTERRUPTED`,
as EX_TEMPFAIL: try again); ``tdse1d run INPUT --resume`` continues from it.
"""

import signal
import sys
import time

# Only the standard library at module level (the numerics are imported in main()), so
# that ``tdse1d --help`` lists this command without loading them.
from .program import add_input_arguments

HELP = "propagate the input's model atom through its pulses and write the HDF5 result"

#: exit status after a stop request (SIGTERM/SIGINT) left a checkpoint
EXIT_INTERRUPTED = 75


def add_arguments(parser):
    add_input_arguments(parser)
    parser.add_argument("-o", "--output", default=None, help="result file (default: output.file, else INPUT-STEM.h5)")
    parser.add_argument("--quiet", action="store_true", help="no progress bar and no summary")
    parser.add_argument("--resume", action="store_true",
                        help="continue from RESULT.h5.checkpoint left by an interrupted run of the same input")
    parser.add_argument("--strict", action="store_true",
                        help="treat numerical-health warnings as errors (exit status 1)")
    parser.add_argument("--certify", action="store_true",
                        help="also run companions that each refine one numerical parameter (time step, grid "
                             "spacing, box) in parallel, and store each quantity's numerical uncertainty")
    parser.add_argument("--keep-companions", action="store_true",
                        help="with --certify: keep the companions' result files in STEM.companions/")


class _ProgressBar:
    """tqdm bar in simulated time, shown only on a terminal."""

    def __init__(self, problem, enabled):
        self.enabled = enabled
        self.bar = None
        self.problem = problem

    def __call__(self, step, steps):
        if not self.enabled:
            return
        from .. import units

        if self.bar is None:
            from tqdm import tqdm

            t_fs = units.au_to_fs(self.problem.time.end - self.problem.time.start)
            self.bar = tqdm(total=steps, unit="step", desc=f"propagating {t_fs:.1f} fs", file=sys.stderr,
                            dynamic_ncols=True, smoothing=0.1)
        self.bar.update(step - self.bar.n)
        t = self.problem.time.times[step]
        self.bar.set_postfix_str(f"t = {units.au_to_fs(t):.2f} fs", refresh=False)

    def close(self):
        if self.bar is not None:
            self.bar.close()


def _certify(args, config):
    """``--certify`` (or ``certification.enabled``): the run and its companions, summarised."""
    from ..api.campaigns import certify
    from ..scans.certify import CertificationFailed
    from .program import CommandError

    if args.resume or args.strict:
        raise CommandError("a certified run takes neither --resume nor --strict")
    keep = True if args.keep_companions else None
    try:
        done = certify(config, args.output, keep_companions=keep)
    except CertificationFailed as exc:
        print(f"tdse1d: error: {exc}", file=sys.stderr)
        return 1
    if not args.quiet:
        names = ", ".join(c.name for c in done.companions)
        print(f"wrote {done.path} in {done.wall:.1f} s, certified by {len(done.companions)} companion runs "
              f"({names}) on {done.workers} workers" + (f"; companions kept in {done.kept}" if done.kept else ""))
        for line in done.table():
            print(f"  {line}")
    return 0


class _NotRaised(Exception):
    """Stands for the two-electron run's stop in a one-electron run, which never raises it."""


def main(args):
    from .. import units
    from ..api import single_run as api
    from ..input.schema import load_input
    from ..io.problem_store import problem_store
    from ..io.wisdom import fftw_wisdom

    config = load_input(args.input, args.overrides)
    if args.certify or config.certification.enabled:
        return _certify(args, config)
    show = not args.quiet and sys.stderr.isatty()
    started = time.time()
    from ..input.problem import build_problem
    from ..runs.runner import RunInterrupted

    from ..input.pair_problem import build_pair_problem, is_pair_model

    if is_pair_model(config):
        # the two-electron modules only where they run (0.3-0.5 s of imports otherwise)
        from ..runs.pair_runner import PairRunStopped

        problem = build_pair_problem(config)
    else:
        PairRunStopped = _NotRaised
        with problem_store():  # the fit, states and step estimate of an input solved before
            problem = build_problem(config)
    for w in problem.warnings:
        print(f"tdse1d: warning: {w}", file=sys.stderr)
    bar = _ProgressBar(problem, show)
    control = api.default_control(config)
    previous = {sig: signal.signal(sig, control.request_stop) for sig in (signal.SIGTERM, signal.SIGINT)}
    try:
        with fftw_wisdom():
            outcome = api.run(problem, args.output, progress=bar, resume=args.resume,
                                      control=control, strict=args.strict)
    except RunInterrupted as exc:
        bar.close()
        from ..runs.checkpoint import checkpoint_path

        print(f"tdse1d: {exc}: {checkpoint_path(api.output_path(config, args.output))}; "
              "continue with --resume", file=sys.stderr)
        return EXIT_INTERRUPTED
    finally:
        bar.close()
        for sig, handler in previous.items():
            signal.signal(sig, handler)
    for note in outcome.notes:
        print(f"tdse1d: note: {note}", file=sys.stderr)
    if outcome.stopped_late:
        print("tdse1d: note: the stop request came after the last time step; the run finished its "
              f"analysis and wrote {outcome.path}", file=sys.stderr)
    for w in outcome.result.warnings[len(problem.warnings):]:
        print(f"tdse1d: warning: {w}", file=sys.stderr)
    if args.quiet:
        return 0
    if isinstance(outcome, api.PairRunOutcome):
        return _pair_summary(outcome, started)
    p, r = outcome.problem, outcome.result
    ev = units.HARTREE_EV
    print(f"wrote {outcome.path} in {time.time() - started:.1f} s "
          f"({p.time.steps} steps of {p.time.step:.4g} a.u., {p.grid.points} points of {p.grid.spacing:.4g} bohr)")
    print(f"  initial-state energy   {-p.ionization_potential:.8f} Hartree ({-p.ionization_potential * ev:.4f} eV)")
    print(f"  final norm             {r.observables.norm[-1]:.6f}")
    print(f"  ionization probability {r.ionization_probability:.4e}  (absorbed {r.absorbed:.4e})")
    if p.pulse_estimates and r.cutoff is not None:
        est = p.pulse_estimates[0]
        cut = r.cutoff
        # an unresolved reading has no number (NaN) and says why instead
        read = (f"{cut.frequency * ev:.2f} eV (order {cut.order:.1f})" + ("" if cut.resolved else ", not resolved")
                if cut.frequency == cut.frequency else cut.reason)
        print(f"  harmonic cutoff        Ip + 3.17 Up = {est.cutoff_energy * ev:.2f} eV (order {est.cutoff_order:.1f}); "
              f"read off the spectrum: {read}")
    return 0


def _pair_summary(outcome, started):
    """The summary of a run of the two-electron atom."""
    from .. import units

    p, r = outcome.problem, outcome.result
    ev = units.HARTREE_EV
    print(f"wrote {outcome.path} in {time.time() - started:.1f} s ({p.time.steps} steps on {p.grid.points}^2 points)")
    print(f"  Ip of the atom / ion   {p.ionization_potential * ev:.4f} / {p.ion_ionization_potential * ev:.4f} eV")
    print(f"  final norm             {r.observables.norm[-1]:.6f}")
    radius = r.radii[0]
    for kind in ("neutral", "single_ionization", "double_ionization"):
        values = [r.final(kind, k) for k in range(len(r.radii))]
        print(f"  {kind.replace('_', ' '):<22} {values[0]:.4e}  (R = {radius:g} bohr; {min(values):.3e} to "
              f"{max(values):.3e} over R = {', '.join(f'{x:g}' for x in r.radii)} bohr)")
    low, high = r.ratio_spread
    print(f"  double / single        {r.ratio:.3e}  ({low:.3e} to {high:.3e} over R)")
    if r.sequential is not None:
        print(f"  sequential estimate    {r.sequential.ratio:.3e}  (independent tunnelling of atom, then ion)")
    if r.knee is not None:
        k = r.knee
        verdict = "above" if k.direct_knockout else "below"
        print(f"  3.17 Up = {k.return_energy * ev:.2f} eV is {verdict} the ion's Ip "
              f"{k.ion_ip * ev:.2f} eV (direct knock-out from "
              f"{units.field_to_intensity(k.knockout_field):.3g} W/cm^2)")
    return 0
