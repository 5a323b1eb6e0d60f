"""One input: its bound states, its estimates, and its run (the library functions of
``tdse1d states``, ``tdse1d estimate`` and ``tdse1d run``)::

    from tdse1d import api
    config = api.load_input("inputs/argon_800nm.toml", overrides=["laser.0.peak_intensity=\\"2e14 W/cm^2\\""])
    found = api.find_states(config)        # bound states on the run's grid
    numbers = api.estimate(config)         # semiclassical numbers, advised grid, resources

This module sits below the scan and the validation suite, which run their points and
cases through :func:`run_problem`; the functions on result files are in
:mod:`tdse1d.api.results` and :mod:`tdse1d.api.campaigns`.
"""

from __future__ import annotations

import json
import os
import time
from dataclasses import dataclass, field
from pathlib import Path

from ..input.schema import RunConfig, load_input
from ..semiclassical.estimates import GridAdvice, PulseEstimate, estimates_json
from ..input.problem import Problem, build_problem
from ..physics.states import BoundStates

__all__ = ["load_input", "find_states", "states", "estimate", "run", "run_problem", "StatesResult", "PairStatesResult",
           "EstimateResult", "RunOutcome", "PairRunOutcome", "run_pair_problem", "PairEstimateResult", "output_path",
           "default_control"]


@dataclass(frozen=True)
class StatesResult:
    """Bound states of an input's model on its own grid."""

    problem: Problem

    @property
    def states(self) -> BoundStates:
        return self.problem.states

    @property
    def softening(self) -> float | None:
        """Softening of the (first) soft-core centre (bohr), fitted or given; None otherwise."""
        centres = getattr(self.problem.potential, "centres", None)
        return float(centres[0].softening) if centres else None

    @property
    def rms_extent(self):
        """Root-mean-square extent <x^2>^1/2 of each state (bohr)."""
        import numpy as np

        grid = self.problem.grid
        return np.sqrt((self.states.wavefunctions**2 * grid.x**2).sum(axis=1) * grid.spacing)

    def to_json(self) -> dict:
        """``{"softening": a, "energies": [...]}`` in atomic units (bohr, hartree)."""
        return {"softening": self.softening, "energies": [float(e) for e in self.states.energies]}

    def __repr__(self) -> str:
        e = self.states.energies
        first = f", E0 {e[0]:.6f} Eh" if len(e) else ""
        return f"<StatesResult {len(e)} states on {self.problem.grid.points} points{first}>"


@dataclass(frozen=True)
class PairStatesResult:
    """States of the two-electron atom of an input on its own 2-D grid, with its ion's."""

    problem: object  # tdse1d.input.pair_problem.PairProblem

    @property
    def states(self):
        return self.problem.states

    @property
    def rms_extent(self):
        """Root-mean-square extent <x1^2>^1/2 of one electron in each state (bohr)."""
        import numpy as np

        grid = self.problem.grid
        density = self.states.wavefunctions**2
        return np.sqrt(np.sum(density * grid.x[None, :, None] ** 2, axis=(1, 2)) * grid.spacing**2)

    def to_json(self) -> dict:
        """The energies as the one-electron model's (``softening``, ``energies``), with the
        model's other parameters, the ion's energies and both ionization potentials
        (atomic units: bohr, hartree)."""
        p = self.problem
        return {"softening": p.atom.softening, "repulsion_softening": p.atom.repulsion_softening,
                "charge": p.atom.charge, "spin": p.atom.spin,
                "energies": [float(e) for e in self.states.energies],
                "bound": [bool(b) for b in p.bound],
                "ion_energies": [float(e) for e in p.ion_states.energies],
                "ionization_potential": p.ionization_potential,
                "ion_ionization_potential": p.ion_ionization_potential}

    def __repr__(self) -> str:
        e = self.states.energies
        g = self.problem.grid
        return (f"<PairStatesResult {len(e)} {self.problem.atom.spin} states on {g.points}^2 points, E0 {e[0]:.6f} Eh, "
                f"Ip {self.problem.ionization_potential:.6f} / ion {self.problem.ion_ionization_potential:.6f} Eh>")


@dataclass(frozen=True)
class EstimateResult:
    """Semiclassical estimates of an input's pulses, the advised grid, and the memory and
    disk the run as given needs (:class:`tdse1d.runs.resources.ResourceEstimate`, bytes)."""

    problem: Problem
    resources: object = None

    @property
    def pulses(self) -> tuple[PulseEstimate, ...]:
        return self.problem.pulse_estimates

    @property
    def advice(self) -> GridAdvice:
        return self.problem.advice

    def to_json(self) -> dict:
        """The estimates (and the resources, when estimated) for machines, atomic units."""
        out = estimates_json(list(self.pulses), self.advice)
        return out if self.resources is None else {**out, "resources": self.resources.to_json()}

    def __repr__(self) -> str:
        from .. import units

        parts = [f"{len(self.pulses)} pulse(s)"]
        if self.pulses:
            p = self.pulses[0]
            parts.append(f"Up {p.ponderomotive_energy * units.HARTREE_EV:.3g} eV, "
                         f"gamma {p.keldysh_parameter:.3g}, cutoff H{p.cutoff_order:.1f}")
        parts.append(f"advised {self.advice.points} points")
        return f"<EstimateResult {', '.join(parts)}>"


def find_states(config: RunConfig | str, count: int | None = None) -> StatesResult | PairStatesResult:
    """Bound states of the model on the run's own grid (``tdse1d states``).

    Parameters
    ----------
    config : RunConfig or path
        The input, or the path of its TOML file.
    count : int, optional
        Number of states (overrides ``atom.bound_states``).

    Returns
    -------
    StatesResult or PairStatesResult
        Energies (hartree), wavefunctions, the fitted softening (bohr) and the
        states' extent (bohr); for the two-electron atom (``PairStatesResult``) also
        its ion's energies and the ionization potentials of atom and ion (hartree).
    """
    if not isinstance(config, RunConfig):
        config = load_input(config)
    if count is not None:
        from dataclasses import replace

        config = replace(config, atom=replace(config.atom, bound_states=count))
    from ..input.pair_problem import build_pair_problem, is_pair_model

    if is_pair_model(config):
        return PairStatesResult(build_pair_problem(config))
    return StatesResult(build_problem(config))


def estimate(config: RunConfig | str, resources: bool = True) -> EstimateResult | PairEstimateResult:
    """Semiclassical estimates for the input's pulses (``tdse1d estimate``; see
    :mod:`tdse1d.semiclassical.estimates`).

    Parameters
    ----------
    config : RunConfig or path
        The input, or the path of its TOML file.
    resources : bool
        Also estimate the memory and disk (bytes) of the run as given.

    Returns
    -------
    EstimateResult or PairEstimateResult
        Per pulse: photon energy, Up, Keldysh parameter, cutoffs (atomic units); the
        advised grid (bohr, a.u. of time); the resources (bytes) or None. For the
        two-electron atom (:func:`tdse1d.api.pair_run.estimate_pair`): its grid, steps,
        memory (bytes) and wall time (s).
    """
    if not isinstance(config, RunConfig):
        config = load_input(config)
    from ..input.pair_problem import is_pair_model

    if is_pair_model(config):
        return estimate_pair(config)
    problem = build_problem(config, with_states=False)
    if not resources:
        return EstimateResult(problem)
    from ..runs.resources import estimate_resources

    return EstimateResult(problem, estimate_resources(problem))


#: the name of the command (``tdse1d states``) for the same function
states = find_states


@dataclass(frozen=True)
class RunOutcome:
    """A finished run: where its file is, what was run, and what came out."""

    path: Path
    problem: Problem
    result: object
    notes: tuple = field(default=())
    """Remarks for the user, e.g. a stale lock of a dead writer taken over."""
    stopped_late: bool = False
    """A stop was requested after the last step: the run finished its analysis and wrote its result."""

    def __repr__(self) -> str:
        r = self.result
        ion = getattr(r, "ionization", None)
        band = "" if ion is None else f" (band {ion.lower:.3g}-{ion.upper:.3g}" + \
            ("" if ion.converged else ", not converged") + ")"
        parts = [f"{self.problem.time.steps} steps", f"P_ion {r.ionization_probability:.3g}{band}"]
        cut = r.cutoff
        if cut is not None and cut.frequency == cut.frequency:
            parts.append(f"cutoff H{cut.order:.1f}" + ("" if cut.resolved else " (not resolved)"))
        if r.warnings:
            parts.append(f"{len(r.warnings)} warning(s)")
        return f"<RunOutcome {self.path.name}: {', '.join(parts)}>"


def output_path(config: RunConfig, output=None) -> Path:
    """Result file of a run: ``output`` (relative to the working directory), else
    ``output.file`` (relative to the input file's folder, like every path of an
    input), else INPUT-STEM.h5 in the working directory."""
    if output is not None:
        return Path(output)
    if config.output.file is not None:
        return config.resolve_path(config.output.file)
    return Path(Path(config.source).stem + ".h5")


def _output_key(config: RunConfig, output) -> str | None:
    if output is not None:
        return "-o"
    return "output.file" if config.output.file is not None else None


#: test-only handshake (docs/checkpoints.md, "Testing the signals"): a directory in which
#: a run announces that it reached a known point (``PHASE.PID.json``, and one JSON line in
#: the FIFO ``announce`` if the test made one, so that it can wait on the pipe instead of
#: polling) and then waits until it is asked to stop or a file ``go`` appears;
#: ``TDSE1D_TEST_HOLD_AT`` names the point, ``propagation`` (the first chunk boundary,
#: default) or ``analysis`` (after the last step). Every checkpoint written is announced
#: (phase ``checkpoint``) without waiting.
HOLD_ENV = "TDSE1D_TEST_HOLD"
HOLD_AT_ENV = "TDSE1D_TEST_HOLD_AT"
HOLD_FIFO = "announce"
_HOLD_LIMIT_S = 300.0  # a forgotten handshake must not hang a process for ever


def _announce(directory: Path, phase: str, **info) -> None:
    record = {"pid": os.getpid(), "phase": phase, **info}
    tmp = directory / f"{phase}.{os.getpid()}.json.tmp"
    tmp.write_text(json.dumps(record), encoding="utf-8")
    os.replace(tmp, directory / f"{phase}.{os.getpid()}.json")
    try:  # the test keeps the FIFO open for reading; without a reader there is no one to tell
        fd = os.open(directory / HOLD_FIFO, os.O_WRONLY | os.O_NONBLOCK)
    except OSError:
        return
    try:
        os.write(fd, (json.dumps(record) + "\n").encode())  # one line < PIPE_BUF: written whole
    finally:
        os.close(fd)


def _hold(phase: str, control, **info) -> None:
    directory = os.environ.get(HOLD_ENV)
    if not directory or os.environ.get(HOLD_AT_ENV, "propagation") != phase:
        return
    d = Path(directory)
    _announce(d, phase, **info)
    deadline = time.monotonic() + _HOLD_LIMIT_S
    while not (d / "go").exists() and not control.stop_requested and time.monotonic() < deadline:
        time.sleep(0.005)


class _AnnouncingSink:
    """The run's checkpoint sink, announcing each checkpoint written (test handshake)."""

    def __init__(self, sink, directory: Path):
        self._sink, self._directory = sink, directory

    def __getattr__(self, name):
        return getattr(self._sink, name)

    def checkpoint(self, state):
        self._sink.checkpoint(state)
        _announce(self._directory, "checkpoint", step=int(state.step_index))


class _HoldingProgress:
    """The caller's progress callback, plus the test handshake at the first chunk boundary."""

    def __init__(self, progress, control, resumed_from):
        self.progress, self.control, self.resumed_from = progress, control, resumed_from
        self.held = False

    def __call__(self, step, steps):
        if self.progress is not None:
            self.progress(step, steps)
        if not self.held and step < steps:
            self.held = True
            _hold("propagation", self.control, step=int(step), steps=int(steps), resumed_from=self.resumed_from)


def run(config: RunConfig | Problem | str, output=None, progress=None, overrides=(), resume=False, control=None,
        strict=False) -> RunOutcome:
    """Run the full quantum simulation of an input and write its HDF5 result (``tdse1d run``).

    Parameters
    ----------
    config : RunConfig, Problem or path
        The input (a path is read with ``overrides``), or an already assembled problem.
    output : path, optional
        Result file (see :func:`output_path`).
    progress : callable, optional
        ``progress(step, steps)``.
    resume : bool
        Continue from the checkpoint ``OUTPUT.checkpoint`` (see :mod:`tdse1d.runs.checkpoint`)
        if there is one (a run from the start otherwise); a checkpoint of a different
        input raises InputError.
    control : tdse1d.runs.runner.RunControl, optional
        Checkpoint cadence and stop requests; by default the input's
        ``output.checkpoint_interval`` (if any) sets the cadence.
    strict : bool
        Numerical-health warnings (before and during the run) raise instead.

    Returns
    -------
    RunOutcome
        The result file's path, the problem and the :class:`~tdse1d.runs.runner.RunResult`
        (ionization probability, cutoff, observables; atomic units).

    Raises
    ------
    tdse1d.runs.runner.RunInterrupted
        When ``control`` asked to stop; the checkpoint is written, the partial file removed.
    """
    from ..input.pair_problem import PairProblem, build_pair_problem, is_pair_model

    if isinstance(config, Problem):
        return run_problem(config, output, progress, resume=resume, control=control, strict=strict)
    if isinstance(config, PairProblem):
        return run_pair_problem(config, output, progress, resume=resume, control=control)
    if not isinstance(config, RunConfig):
        config = load_input(config, overrides)
    if is_pair_model(config):
        return run_pair_problem(build_pair_problem(config), output, progress, resume=resume, control=control)
    return run_problem(build_problem(config), output, progress, resume=resume, control=control, strict=strict)


def _sfa_beside(problem: Problem, result):
    """The SFA of the run's pulse and atom when the input asks for it (spectra.sfa), on
    the run's photoelectron axis; None otherwise or when it cannot be computed (said)."""
    if not problem.config.spectra.sfa:
        return None
    from ..analysis.sfa import run_energy_axis, sfa_readings, sfa_spectra

    try:
        up = float(problem.pulse_estimates[0].ponderomotive_energy)
        spectra = sfa_spectra(problem, energy=run_energy_axis(result, up))
        return spectra, sfa_readings(spectra)
    except (ValueError, IndexError, ArithmeticError) as exc:
        result.warnings.append(f"strong-field approximation not stored: {exc}")
        return None


def _write_extra(h5, analysis, sfa):
    from ..io.analysis_file import write_analysis

    if analysis is not None:
        write_analysis(h5, analysis)
    if sfa is not None:
        from ..io.sfa_file import write_sfa

        write_sfa(h5, *sfa)


def default_control(config: RunConfig):
    """A :class:`~tdse1d.runs.runner.RunControl` with the input's checkpoint interval (in s)."""
    from .. import units
    from ..runs.runner import RunControl

    interval = config.output.checkpoint_interval
    return RunControl(None if interval is None else interval * units.AU_TIME_S)


def run_problem(problem: Problem, output=None, progress=None, resume=False, control=None,
                strict=False) -> RunOutcome:
    """:func:`run` for an already assembled :class:`~tdse1d.input.problem.Problem`."""
    from ..runs.checkpoint import CheckpointSink, checkpoint_path, input_hash, read_checkpoint
    from ..physics.propagation import NumericalError
    from ..input.problem import check_absorber
    from ..runs.resources import check_resources
    from ..runs.runner import simulate, snapshot_steps
    from ..io.result_file import ResultWriter

    if strict and problem.warnings:
        raise NumericalError(f"before the run: {problem.warnings[0]}", 0, problem.time.start)
    from ..input.spec import InputError
    from ..errors import OutputError
    from ..io.guarded_file import describe_os_error
    from ..io.result_file import refuse_reason

    path = output_path(problem.config, output)
    reason = refuse_reason(path)
    if reason is not None:  # checked before anything is computed
        raise InputError(reason, _output_key(problem.config, output), problem.config.source)
    check_absorber(problem)  # refuse, before propagating, absorbers that eat the atom
    check_resources(problem, path)  # and a run the machine cannot hold
    cp_path = checkpoint_path(path)
    digest = input_hash(problem.config)
    if control is None:
        control = default_control(problem.config)
    snap_times = problem.time.times[snapshot_steps(problem)]
    try:
        # the writer takes the result's lock and writes the header: an output that cannot
        # be written (read-only, missing directory, another writer) fails here, not after the run
        with ResultWriter(path, problem, snap_times) as writer:
            state = snapshots = None
            if resume and cp_path.exists():  # read under the lock: the checkpoint is the writer's
                state, snapshots = read_checkpoint(cp_path, digest)
            sink = CheckpointSink(writer, cp_path, digest)
            if os.environ.get(HOLD_ENV):
                sink = _AnnouncingSink(sink, Path(os.environ[HOLD_ENV]))
            if snapshots is not None:
                sink.restore_snapshots(snapshots)
            watched = _HoldingProgress(progress, control, None if state is None else int(state.step_index))
            result = simulate(problem, sink=sink, progress=watched, control=control, resume=state, strict=strict)
            # a stop request from here on comes after the last step: the analysis and the
            # writing take a small fraction of the run, so the run finishes (docs/checkpoints.md)
            _hold("analysis", control)
            from ..analysis.run_analysis import analyse_run
            from ..io.analysis_file import write_analysis

            try:  # the comparison must never cost the run itself
                analysis = analyse_run(problem, result)
            except (ValueError, IndexError, ArithmeticError) as exc:
                analysis = None
                result.warnings.append(f"semiclassical analysis not stored: {exc}")
            sfa = _sfa_beside(problem, result)
            writer.write_result(result, extra=lambda h5: _write_extra(h5, analysis, sfa))
            writer.close()
            notes = (writer.note,) if writer.note else ()
        sink.discard()
    except OSError as exc:
        raise OutputError(describe_os_error(exc, path)) from None
    return RunOutcome(path, problem, result, notes=notes, stopped_late=bool(control.stop_requested))


# the two-electron atom's run and estimate live in their own module; named here too
from .pair_run import PairEstimateResult, PairRunOutcome, estimate_pair, run_pair_problem  # noqa: E402
