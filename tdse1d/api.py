"""What the commands do, as functions for notebooks and scripts.

Each command of the ``tdse1d`` program is a thin layer over one of these::

    import tdse1d
    config = tdse1d.load_input("inputs/argon_800nm.toml", overrides=["laser.0.peak_intensity=\\"2e14 W/cm^2\\""])
    found = tdse1d.find_states(config)        # bound states on the run's grid
    report = tdse1d.estimate(config)          # semiclassical numbers and advised grid
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from .config import RunConfig, load_input
from .estimates import GridAdvice, PulseEstimate, estimates_json
from .problem import Problem, build_problem
from .states import BoundStates

__all__ = ["load_input", "find_states", "estimate", "run", "StatesResult", "EstimateResult", "RunOutcome", "output_path", "default_control"]


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

    def to_json(self) -> dict:
        return {"softening": self.softening, "energies": [float(e) for e in self.states.energies]}


@dataclass(frozen=True)
class EstimateResult:
    """Semiclassical estimates of an input's pulses and the advised grid."""

    problem: Problem

    @property
    def pulses(self) -> tuple[PulseEstimate, ...]:
        return self.problem.pulse_estimates

    @property
    def advice(self) -> GridAdvice:
        return self.problem.advice

    def to_json(self) -> dict:
        return estimates_json(list(self.pulses), self.advice)


def find_states(config: RunConfig | str, count: int | None = None) -> StatesResult:
    """Bound states of the model on the run's own grid.

    Parameters
    ----------
    config : RunConfig or path
    count : int, optional
        Number of states (overrides ``atom.bound_states``).
    """
    if not isinstance(config, RunConfig):
        config = load_input(config)
    if count is not None:
        from dataclasses import replace

        config = replace(config, atom=replace(config.atom, bound_states=count))
    return StatesResult(build_problem(config))


def estimate(config: RunConfig | str) -> EstimateResult:
    """Semiclassical estimates for the input's pulses (see :mod:`tdse1d.estimates`)."""
    if not isinstance(config, RunConfig):
        config = load_input(config)
    return EstimateResult(build_problem(config, with_states=False))


@dataclass(frozen=True)
class RunOutcome:
    """A finished run: where its file is, what was run, and what came out."""

    path: Path
    problem: Problem
    result: object


def output_path(config: RunConfig, output=None) -> Path:
    """Result file of a run: ``output``, else ``output.file``, else INPUT-STEM.h5 here."""
    if output is not None:
        return Path(output)
    if config.output.file is not None:
        return Path(config.output.file)
    return Path(Path(config.source).stem + ".h5")


def run(config: RunConfig | str, output=None, progress=None, overrides=(), resume=False, control=None,
        strict=False) -> RunOutcome:
    """Run the full quantum simulation of an input and write its HDF5 result.

    Parameters
    ----------
    config : RunConfig or path
    output : path, optional
        Result file (see :func:`output_path`).
    progress : callable, optional
        ``progress(step, steps)``.
    resume : bool
        Continue from the checkpoint ``OUTPUT.checkpoint`` (see :mod:`tdse1d.checkpoint`)
        if there is one (a run from the start otherwise); a checkpoint of a different
        input raises InputError.
    control : tdse1d.runner.RunControl, optional
        Checkpoint cadence and stop requests; by default the input's
        ``output.checkpoint_interval`` (if any) sets the cadence.
    strict : bool
        Numerical-health warnings (before and during the run) raise instead.

    Returns
    -------
    RunOutcome

    Raises
    ------
    tdse1d.runner.RunInterrupted
        When ``control`` asked to stop; the checkpoint is written, the partial file removed.
    """
    if not isinstance(config, RunConfig):
        config = load_input(config, overrides)
    return run_problem(build_problem(config), output, progress, resume=resume, control=control, strict=strict)


def default_control(config: RunConfig):
    """A :class:`~tdse1d.runner.RunControl` with the input's checkpoint interval (in s)."""
    from . import units
    from .runner import RunControl

    interval = config.output.checkpoint_interval
    return RunControl(None if interval is None else interval * units.AU_TIME_S)


def run_problem(problem: Problem, output=None, progress=None, resume=False, control=None,
                strict=False) -> RunOutcome:
    """:func:`run` for an already assembled :class:`~tdse1d.problem.Problem`."""
    from .checkpoint import CheckpointSink, checkpoint_path, input_hash, read_checkpoint
    from .propagate import NumericalError
    from .problem import check_absorber
    from .resources import check_resources
    from .runner import simulate, snapshot_steps
    from .store import ResultWriter

    if strict and problem.warnings:
        raise NumericalError(f"before the run: {problem.warnings[0]}", 0, problem.time.start)
    path = output_path(problem.config, output)
    check_absorber(problem)  # refuse, before propagating, absorbers that eat the atom
    check_resources(problem, path)  # and a run the machine cannot hold
    cp_path = checkpoint_path(path)
    digest = input_hash(problem.config)
    state = snapshots = None
    if resume and cp_path.exists():
        state, snapshots = read_checkpoint(cp_path, digest)
    if control is None:
        control = default_control(problem.config)
    snap_times = problem.time.times[snapshot_steps(problem)]
    with ResultWriter(path, problem, snap_times) as writer:
        sink = CheckpointSink(writer, cp_path, digest)
        if snapshots is not None:
            sink.restore_snapshots(snapshots)
        result = simulate(problem, sink=sink, progress=progress, control=control, resume=state, strict=strict)
        from .analysis import analyse_run, write_analysis

        try:  # the comparison must never cost the run itself
            analysis = analyse_run(problem, result)
        except (ValueError, IndexError, ArithmeticError) as exc:
            analysis = None
            result.warnings.append(f"semiclassical analysis not stored: {exc}")
        writer.write_result(result, extra=None if analysis is None else lambda h5: write_analysis(h5, analysis))
        writer.close()
    sink.discard()
    return RunOutcome(path, problem, result)
