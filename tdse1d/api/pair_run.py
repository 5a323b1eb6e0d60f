"""The two-electron atom of one input: its run (with checkpoints and ``--resume``) and
its estimate, the library side of ``tdse1d run`` and ``tdse1d estimate`` for
``[atom] model = "two-electron"`` (:func:`tdse1d.api.run` and :func:`tdse1d.api.estimate`
dispatch here; :mod:`tdse1d.api.single_run` re-exports :func:`run_pair_problem` and
:class:`PairRunOutcome`).
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

__all__ = ["PairRunOutcome", "run_pair_problem", "PairEstimateResult", "estimate_pair"]


@dataclass(frozen=True)
class PairRunOutcome:
    """A finished run of the two-electron atom: its file, its problem and its result
    (:class:`~tdse1d.runs.pair_runner.PairRunResult`)."""

    path: Path
    problem: object
    result: object
    notes: tuple = field(default=())
    """Remarks for the user, e.g. a stale lock of a dead writer taken over."""
    stopped_late: bool = False
    """A stop was requested after the last step: the run finished and wrote its result."""

    def __repr__(self) -> str:
        r = self.result
        seq = "" if r.sequential is None else f", sequential {r.sequential.ratio:.3g}"
        return (f"<PairRunOutcome {self.path.name}: {self.problem.time.steps} steps on {self.problem.grid.points}^2, "
                f"single {r.final('single_ionization'):.3g}, double {r.final('double_ionization'):.3g}, "
                f"ratio {r.ratio:.3g}{seq}>")


def run_pair_problem(problem, output=None, progress=None, resume=False, control=None) -> PairRunOutcome:
    """:func:`tdse1d.api.run` for a :class:`~tdse1d.input.pair_problem.PairProblem`:
    propagate the two-electron atom and write its result file.

    Parameters
    ----------
    problem : PairProblem
    output : path, optional
        Result file (:func:`tdse1d.api.single_run.output_path`).
    progress : callable, optional
        ``progress(step, steps)``.
    resume : bool
        Continue from the checkpoint ``OUTPUT.checkpoint`` if there is one (a run from
        the start otherwise); a checkpoint of a different input raises InputError.
    control : tdse1d.runs.runner.RunControl, optional
        Checkpoint cadence and stop requests; by default the input's
        ``output.checkpoint_interval`` (if any).

    Returns
    -------
    PairRunOutcome

    Raises
    ------
    tdse1d.runs.runner.RunInterrupted
        When ``control`` asked to stop: the checkpoint is written, the partial file removed.
    """
    from ..errors import OutputError
    from ..input.pair_problem import check_pair_absorber
    from ..input.spec import InputError
    from ..io.guarded_file import describe_os_error
    from ..io.pair_result_file import PairResultWriter
    from ..io.result_file import refuse_reason
    from ..physics.pair_system import region_observable_names
    from ..physics.observables import per_step_names
    from ..runs.checkpoint import checkpoint_path, input_hash
    from ..runs.pair_checkpoint import PairCheckpointSink, read_pair_checkpoint
    from ..runs.pair_runner import check_pair_memory, simulate_pair, snapshot_shape, snapshot_times
    from .single_run import (HOLD_ENV, _AnnouncingSink, _HoldingProgress, _hold, _output_key, default_control,
                             output_path)

    config = problem.config
    path = output_path(config, output)
    reason = refuse_reason(path)
    if reason is not None:
        raise InputError(reason, _output_key(config, output), config.source)
    check_pair_absorber(problem)
    check_pair_memory(problem)  # before anything is allocated
    cp_path = checkpoint_path(path)
    digest = input_hash(config)
    if control is None:
        control = default_control(config)
    try:
        # the writer takes the result's lock first: the checkpoint is the lock holder's
        with PairResultWriter(path, problem, snapshot_times(problem), snapshot_shape(problem)) as writer:
            state = None
            if resume and cp_path.exists():
                names = per_step_names() + region_observable_names()
                state = read_pair_checkpoint(cp_path, digest, names)
            sink = PairCheckpointSink(writer, cp_path, digest)
            if state is not None:
                sink.restore_snapshots()
            if os.environ.get(HOLD_ENV):
                sink = _AnnouncingSink(sink, Path(os.environ[HOLD_ENV]))
            watched = _HoldingProgress(progress, control, None if state is None else int(state.step_index))
            result = simulate_pair(problem, snapshot_sink=writer.snapshot, progress=watched, control=control,
                                   checkpoint_sink=sink, resume=state)
            # a stop request from here on comes after the last step: the run finishes
            _hold("analysis", control)
            writer.write_result(result)
            writer.close()
            notes = (writer.lock.note,) if writer.lock.note else ()
        sink.discard()
    except OSError as exc:
        raise OutputError(describe_os_error(exc, path)) from None
    return PairRunOutcome(path, problem, result, notes=notes, stopped_late=bool(control.stop_requested))


@dataclass(frozen=True)
class PairEstimateResult:
    """What a run of the two-electron atom of an input will take, before it runs.

    Attributes
    ----------
    problem : PairProblem
        Its grid (of each axis, bohr), time axis (a.u.) and pulses; no states computed.
    memory : int
        Bytes the run holds (:func:`tdse1d.runs.pair_runner.pair_memory_bytes`).
    wall : tdse1d.runs.pair_runner.PairWallEstimate
        Steps of the run timed on this machine now and the run's wall time from them (s).
    ion_ionization_potential : float
        Ip2 = -E of the one-electron ion's ground state on one axis of the grid (hartree).
    """

    problem: object
    memory: int
    wall: object
    ion_ionization_potential: float = float("nan")

    @property
    def knockout(self) -> dict:
        """Up and 3.17 Up of the strongest pulse against Ip2 (hartree), and the peak
        intensity (W/cm^2) where they meet (Corkum, Phys. Rev. Lett. 71, 1994 (1993));
        empty without a pulse."""
        from .. import units
        from ..semiclassical.double_ionization import knockout_threshold_field, maximum_return_energy

        pulses = [q for q in self.problem.field.pulses if q.omega > 0]
        if not pulses:
            return {}
        q = max(pulses, key=lambda q: q.peak_field)
        up = q.peak_field**2 / (4 * q.omega**2)
        ip2 = self.ion_ionization_potential
        return {"ponderomotive_energy": up, "return_energy": maximum_return_energy(up), "ion_ionization_potential": ip2,
                "knockout_intensity_W_cm2": units.field_to_intensity(knockout_threshold_field(q.omega, ip2))}

    def to_json(self) -> dict:
        """Grid, steps, memory (bytes) and wall time (s), atomic units elsewhere."""
        p = self.problem
        return {"model": "two-electron", "grid": {"points_per_axis": p.grid.points, "spacing": p.grid.spacing,
                                                  "points": p.grid.points**2, "absorber_width": p.absorber_width},
                "time_step": p.time.step, "steps": p.time.steps, "duration": p.time.end - p.time.start,
                "snapshots": p.config.output.snapshots, "memory_bytes": self.memory, **self.wall.to_json(),
                "knockout": self.knockout}

    def __repr__(self) -> str:
        p = self.problem
        return (f"<PairEstimateResult {p.grid.points}^2 points, {p.time.steps} steps, "
                f"{self.memory / 2**20:.3g} MiB, wall {self.wall.wall / 60:.3g} min>")


def estimate_pair(config) -> PairEstimateResult:
    """:func:`tdse1d.api.estimate` for the two-electron atom: the grid, the steps, the
    memory and the wall time of its run, without computing the atom's states; and 3.17 Up
    against the ion's Ip2 (from the ion's states on one axis).

    Parameters
    ----------
    config : RunConfig
        With ``atom.model = "two-electron"``.

    Returns
    -------
    PairEstimateResult
    """
    from ..input.pair_problem import build_pair_problem
    from ..physics.states import bound_states
    from ..runs.pair_runner import estimate_pair_wall_time, pair_memory_bytes

    from ..io.wisdom import fftw_wisdom

    problem = build_pair_problem(config, compute_states=False)
    ion = bound_states(problem.grid, problem.atom.ion())  # one axis: cheap beside the atom's 2-D states
    with fftw_wisdom():  # the timed steps' plans kept, as a run keeps them
        wall = estimate_pair_wall_time(problem)
    return PairEstimateResult(problem, pair_memory_bytes(problem), wall, -float(ion.energies[0]))
