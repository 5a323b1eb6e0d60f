"""How much memory and disk a run will take, and whether the machine has them.

:func:`estimate_resources` counts, from a resolved :class:`~tdse1d.input.problem.Problem`
and without running it, the largest amount of memory the run holds at once and the
bytes it writes. :func:`check_resources` compares them with what the machine offers
(available memory, free space at the output folder) and refuses a run that cannot
fit, before any propagation, with one line naming the numbers and the key to change.

Where the memory goes (``docs/performance.md`` has the measurements):

* time series: the observables (norm, dipole, momentum, acceleration, initial
  population, field and vector potential at t_n) recorded every k-th step (the run's
  record stride, docs/output.md); kept for every step: the times, the field and
  vector potential that the loop's phases use, the field
  at the midpoint of every kinetic sub-step (1 for the second-order splitting, 3 for
  the fourth), and the per-step integrals of A and A^2 that the surface flux method's Volkov phases use. About 150 bytes
  per step at second order, 270 at fourth;
* the semiclassical analysis after the run: splines of A(t) over every step, and
  work blocks of the three-step model (64 births per cycle times the steps of a cycle,
  at most :data:`tdse1d.semiclassical.three_step._BLOCK_ELEMENTS` elements) and of the Gabor map
  (at most 64 MiB);
* grid arrays: wavefunction, FFT buffers, potential, masks, about 100 bytes per point,
  and the bound states, 8 bytes per point each;
* one snapshot at a time (the writer streams them to the file).

The per-step series are the part that grows without bound: 1e5 optical cycles at 800
nm and 0.05 a.u. steps are 2.2e8 steps, some 100 GB. The records are decimated (k of
3 to 15 at the shipped examples), the propagator's field tables are not (40-56 bytes
per step); this check keeps a run that would not fit from starting.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field
from pathlib import Path

__all__ = ["ResourceEstimate", "estimate_resources", "check_resources", "available_memory", "free_disk",
           "format_bytes"]

#: bytes per time step of the series every run keeps: times, the Propagator's step
#: differences, field and vector potential at t_n, five observables (8 bytes each);
#: calibrated against tracemalloc (131 B/step measured for 1 sub-step without the mask
#: method, 152 counted)
SERIES_BYTES_PER_STEP = 8 * 12
#: bytes per step and kinetic sub-step: midpoint times, E and A there, and the field
#: evaluation's temporaries (measured 58 B per extra sub-step)
MIDPOINT_BYTES_PER_STEP = 8 * 7
#: bytes per step of the surface flux method: the integrals of A and A^2 over each
#: step (tdse1d.physics.propagation, the Volkov phases of tdse1d.spectra.surface_flux)
FLUX_BYTES_PER_STEP = 8 * 2
#: bytes per step of the analysis beyond its bounded blocks: splines of A(t) and its
#: antiderivative, the tunnelling yield, the Gabor map's sample rows (measured 200-300)
ANALYSIS_BYTES_PER_STEP = 300
#: bytes per element of the three-step model's work block (index, mask, excursion and
#: the temporaries of computing it; 40 measured)
TRAJECTORY_BYTES_PER_ELEMENT = 44
#: work bound of the Gabor transform (spectra.gabor_transform's max_bytes)
GABOR_WORK_BYTES = 64 * 2**20
#: bytes per grid point of the propagator and the absorber (wavefunction, FFT buffer,
#: potential, kinetic phases, masks, edge buffers; 70 measured)
GRID_BYTES_PER_POINT = 128
#: the interpreter and the imported libraries (numpy, scipy, numba, h5py, matplotlib)
BASE_BYTES = 300 * 2**20
#: bytes written per time step: field time, E, A; observables time, dipole, momentum,
#: acceleration, norm, initial population, absorbed (10 x 8), and the harmonic spectrum
#: (frequency, order, power on half as many points)
DISK_BYTES_PER_STEP = 8 * 10 + 8 * 3 // 2
#: bytes a checkpoint holds per step (the five recorded observables)
CHECKPOINT_BYTES_PER_STEP = 8 * 5
#: share of the available memory a run may plan to use: the rest is left for what the
#: estimate does not count (library buffers, fragmentation) and other work
MEMORY_SHARE = 0.9


@dataclass(frozen=True)
class ResourceEstimate:
    """Memory and disk a run will need (bytes).

    Attributes
    ----------
    memory : int
        Peak memory of the run (the larger of the propagation and the analysis).
    disk : int
        Bytes written: the result file and a checkpoint beside it.
    memory_parts, disk_parts : dict of str to int
        What the two totals are made of.
    steps, points, snapshots : int
        The sizes they were counted from.
    """

    memory: int
    disk: int
    memory_parts: dict = field(default_factory=dict)
    disk_parts: dict = field(default_factory=dict)
    steps: int = 0
    points: int = 0
    snapshots: int = 0

    def to_json(self) -> dict:
        return {"memory_bytes": self.memory, "disk_bytes": self.disk, "memory_parts": dict(self.memory_parts),
                "disk_parts": dict(self.disk_parts), "steps": self.steps, "points": self.points,
                "snapshots": self.snapshots}


def format_bytes(n: float) -> str:
    """``n`` bytes in binary units, e.g. ``'19.3 GiB'``."""
    for unit in ("B", "KiB", "MiB", "GiB", "TiB", "PiB"):
        if abs(n) < 1024 or unit == "PiB":
            return f"{n:.0f} {unit}" if unit == "B" else f"{n:.3g} {unit}"
        n /= 1024
    return f"{n:.3g} PiB"  # pragma: no cover


def estimate_resources(problem) -> ResourceEstimate:
    """Memory and disk of a run, counted from its problem (no I/O, nothing allocated).

    Parameters
    ----------
    problem : tdse1d.input.problem.Problem

    Returns
    -------
    ResourceEstimate
    """
    from ..semiclassical.three_step import _BLOCK_ELEMENTS, BIRTHS_PER_CYCLE
    from ..physics.schemes import SCHEMES

    cfg = problem.config
    steps = int(problem.time.steps)
    samples = steps + 1
    points = int(problem.grid.points)
    sub_steps = len(SCHEMES[cfg.propagation.scheme_name].weights)
    flux = cfg.spectra.photoelectrons == "surface_flux" and bool(problem.field.pulses)
    states = len(problem.states)
    n_snap = min(int(cfg.output.snapshots), samples)
    snap_points = -(-points // int(cfg.output.snapshot_stride))

    per_step = SERIES_BYTES_PER_STEP + MIDPOINT_BYTES_PER_STEP * sub_steps + (FLUX_BYTES_PER_STEP if flux else 0)
    series = per_step * samples
    grid = GRID_BYTES_PER_POINT * points + 8 * states * points + 16 * snap_points
    from .runner import record_stride_of

    # the series the run records, every k-th step (docs/output.md, recorded time axis);
    # the analysis works on them
    records = steps // record_stride_of(problem) + 1
    # three-step model: births (64 per cycle) times the records of a cycle, i.e. 64 per
    # record, in blocks of at most _BLOCK_ELEMENTS
    trajectory = TRAJECTORY_BYTES_PER_ELEMENT * min(BIRTHS_PER_CYCLE * records, _BLOCK_ELEMENTS)
    gabor = min(GABOR_WORK_BYTES, ANALYSIS_BYTES_PER_STEP * records)
    # the splines of A(t) and the tunnelling yield may still span every step: counted per step
    analysis = max(trajectory, gabor) + ANALYSIS_BYTES_PER_STEP * samples if problem.field.pulses else 0
    kept = 8 * 8 * records  # the run's result keeps eight series into the analysis
    propagation_peak = series
    analysis_peak = kept + analysis
    memory_parts = {
        "interpreter and libraries": BASE_BYTES,
        "grid and bound states": grid,
        "time series" if propagation_peak >= analysis_peak else "analysis": max(propagation_peak, analysis_peak),
    }
    memory = sum(memory_parts.values())

    pops = len(problem.states) * 8 * max(1, samples // 100)  # populations: coarser than the steps
    # a checkpoint (written beside the partial result when asked or on SIGTERM) holds
    # the snapshots so far and the recorded series again
    disk_parts = {
        "snapshots, in the result and a checkpoint": 2 * (16 * snap_points + 8) * n_snap,
        "time series, in the result and a checkpoint": (DISK_BYTES_PER_STEP + CHECKPOINT_BYTES_PER_STEP) * records,
        "grid, states and spectra": 8 * points * (states + 8) + 16 * points + pops,
    }
    return ResourceEstimate(memory=int(memory), disk=int(sum(disk_parts.values())), memory_parts=memory_parts,
                            disk_parts=disk_parts, steps=steps, points=points, snapshots=n_snap)


# ------------------------------------------------------------------ the machine
# (these read /proc, the cgroup files and the file system)


def available_memory() -> int | None:
    """Bytes of memory a new allocation can get now, None if unknown.

    The smallest of: the system's available memory (psutil if installed, else
    ``MemAvailable`` of /proc/meminfo, else free pages from ``os.sysconf``) and the
    room left under a cgroup v2 memory limit (containers, batch jobs).
    """
    found = []
    try:
        import psutil

        found.append(int(psutil.virtual_memory().available))
    except Exception:  # not installed, or no /proc
        try:
            with open("/proc/meminfo") as f:
                for line in f:
                    if line.startswith("MemAvailable:"):
                        found.append(int(line.split()[1]) * 1024)
                        break
        except (OSError, ValueError, IndexError):
            pass
    if not found:
        try:
            found.append(os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE"))
        except (ValueError, OSError, AttributeError):
            pass
    try:
        limit = Path("/sys/fs/cgroup/memory.max").read_text().strip()
        if limit != "max":
            used = int(Path("/sys/fs/cgroup/memory.current").read_text().strip())
            found.append(max(0, int(limit) - used))
    except (OSError, ValueError):
        pass
    return min(found) if found else None


def free_disk(path) -> int | None:
    """Bytes free for this user in the folder that will hold ``path``, None if unknown."""
    folder = Path(path).resolve().parent
    while not folder.exists() and folder != folder.parent:
        folder = folder.parent  # the run creates missing folders; measure where they will be
    try:
        st = os.statvfs(folder)
    except (OSError, AttributeError):
        return None
    return st.f_bavail * st.f_frsize


def _steps_key(problem) -> str:
    """The key that sets the number of steps: the longest pulse's length, else the step."""
    lasers = problem.config.lasers
    durations = [p.end - p.start for p in problem.field.pulses]
    if lasers and durations:
        i = max(range(len(durations)), key=durations.__getitem__)
        laser = lasers[i]
        if laser.field_file is None:
            return f"laser.{i}.{'cycles' if laser.cycles is not None else 'fwhm'}"
    return "propagation.time_step"


def check_resources(problem, output, memory: int | None = None, disk: int | None = None) -> ResourceEstimate:
    """Refuse a run that needs more memory or disk than the machine has.

    Parameters
    ----------
    problem : tdse1d.input.problem.Problem
    output : path
        The result file the run will write.
    memory, disk : int, optional
        Bytes available (default: :func:`available_memory`, :func:`free_disk` of
        ``output``); unknown amounts are not checked.

    Returns
    -------
    ResourceEstimate

    Raises
    ------
    tdse1d.input.schema.InputError
        One line with the estimate, what is available, and the key to change.
    """
    from ..input.spec import InputError

    est = estimate_resources(problem)
    memory = available_memory() if memory is None else memory
    disk = free_disk(output) if disk is None else disk
    source = problem.config.source
    if memory is not None and est.memory > MEMORY_SHARE * memory:
        part = max(est.memory_parts, key=est.memory_parts.get)
        if part == "grid and bound states":
            key, advice = "grid.points", "use fewer grid points (grid.points) or fewer bound states (atom.bound_states)"
        else:
            key = _steps_key(problem)
            per_step = est.memory_parts[part] / max(est.steps, 1)
            advice = (f"{est.steps:.3g} time steps at {per_step:.0f} bytes each; shorten the pulses or the field-free "
                      "time, or lengthen propagation.time_step")
        raise InputError(
            f"the run needs about {format_bytes(est.memory)} of memory ({part}: {advice}), more than the "
            f"{format_bytes(memory)} available ({MEMORY_SHARE:.0%} may be planned)", key, source)
    if disk is not None and est.disk > disk:
        part = max(est.disk_parts, key=est.disk_parts.get)
        snapshots = part.startswith("snapshots")
        key = "output.snapshots" if snapshots else _steps_key(problem)
        hint = ("fewer snapshots (output.snapshots) or a coarser output.snapshot_stride" if snapshots
                else "a shorter run, or another output folder")
        raise InputError(
            f"the run writes about {format_bytes(est.disk)} ({part} {format_bytes(est.disk_parts[part])}), more than "
            f"the {format_bytes(disk)} free at {Path(output).resolve().parent}; {hint}", key, source)
    return est
