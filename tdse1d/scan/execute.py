"""Parameter scans: a plan of runs, executed on Dask distributed, one result file per point.

A *scan plan* (TOML) names a base input and one or more axes::

    base = "argon_800nm.toml"      # an input file, relative to the plan (or an inline [base] table)
    mode = "grid"                  # "grid": every combination; "zip": axes of equal length side by side

    [set]                          # optional: overrides applied to every point
    "laser.0.cycles" = 4

    [[axis]]
    key = "laser.0.peak_intensity" # a dotted key, as ``tdse1d run --set`` takes
    values = ["1e14 W/cm^2", "1.5e14 W/cm^2"]

    [[axis]]
    key = "laser.0.wavelength"
    start = "800 nm"               # or a range: start, stop, count, spacing = "linear" | "log"
    stop = "1200 nm"
    count = 3

:func:`load_plan` validates every point as a complete input before anything runs and
reports all bad points at once (:class:`PlanError`, an :class:`~tdse1d.input.schema.InputError`).

Each point's resolved input has a stable name, :func:`input_hash` (the first 16 hex
digits of the SHA-256 of its canonical TOML), and its result goes to
``SCAN_DIR/points/<hash>.h5``, written through :func:`tdse1d.api.run` under a temporary
name and renamed when complete. A rerun skips the points whose finished file holds the
same input; a failed point leaves ``points/<hash>.error`` (its traceback) and is retried
only when asked. The plan is recorded in ``SCAN_DIR/manifest.json`` (and a copy of the
plan text in ``SCAN_DIR/scan.toml``), so that a directory holding another plan's points
is refused unless the user starts afresh.

One writer at a time: :func:`run_scan` holds ``SCAN_DIR/scan.lock`` for the whole scan
(a second scan of the same directory is refused at once, naming the holder), and every
point file is written under its own lock (:class:`tdse1d.io.guarded_file.WriterLock`), so a
job-array task (:func:`run_one`) never writes a point that another process is writing.
A SIGTERM or SIGINT reaching a process that runs points (a Dask worker, a job-array
task) makes each of its runs write its checkpoint and stop (:func:`install_stop_handlers`).

Execution (:func:`run_scan`) submits the points, longest first (cost
:func:`estimate_cost` = grid points x time steps, from the semiclassical grid advice
without computing bound states), to a Dask ``distributed`` cluster: by default a
``LocalCluster`` of single-threaded worker processes on the loopback interface, or an
existing scheduler given by address. :func:`run_one` runs one point in this process
(job arrays), and :func:`tdse1d.scan.summary.write_summary` assembles ``summary.h5``.
"""

from __future__ import annotations

import copy
import hashlib
import itertools
import json
import math
import os
import signal
import sys
import threading
import time
import traceback
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np

from .. import units
from ..input.schema import (AbsorberConfig, AtomConfig, CentreConfig, GridConfig, LaserConfig, OutputConfig,
                            PropagationConfig, RunConfig, SpectraConfig, parse_input)
from ..input.spec import InputError, apply_override, dump_toml, tomllib

__all__ = [
    "PlanError",
    "Axis",
    "ScanPoint",
    "ScanPlan",
    "EXPANSIONS",
    "SPACINGS",
    "load_plan",
    "parse_plan",
    "input_hash",
    "canonical_toml",
    "estimate_cost",
    "ScanDirectory",
    "PlanMismatch",
    "run_point",
    "run_one",
    "run_scan",
    "ScanReport",
    "SchedulerUnreachable",
    "install_stop_handlers",
    "remove_stop_handlers",
    "local_cluster",
    "open_local_client",
    "SCAN_LOCK",
]

HASH_DIGITS = 16
MANIFEST = "manifest.json"
PLAN_COPY = "scan.toml"
POINTS_DIR = "points"
SUMMARY = "summary.h5"
SCAN_LOCK = "scan.lock"


class PlanError(InputError):
    """A scan plan with one or more bad points or tables; ``problems`` lists each one."""

    def __init__(self, problems: list[str], source: str | None = None):
        self.problems = list(problems)
        n = len(self.problems)
        head = f"{n} problem{'s' if n != 1 else ''} in the scan plan:\n  "
        super().__init__(head + "\n  ".join(self.problems), None, source)


class PlanMismatch(RuntimeError):
    """The scan directory holds the points of another plan."""


class SchedulerUnreachable(RuntimeError):
    """No Dask scheduler answered at the given address."""


# ------------------------------------------------------------------------ hashing


def _canonical(value):
    if isinstance(value, dict):
        return {k: _canonical(value[k]) for k in sorted(value)}
    if isinstance(value, list):
        return [_canonical(v) for v in value]
    return value


def canonical_toml(raw: dict) -> str:
    """TOML text of ``raw`` with every table's keys sorted: equal inputs give equal text."""
    return dump_toml(_canonical(raw))


def input_hash(raw: dict) -> str:
    """Stable name of a resolved input: first 16 hex digits of SHA-256 of :func:`canonical_toml`."""
    return hashlib.sha256(canonical_toml(raw).encode("utf-8")).hexdigest()[:HASH_DIGITS]


# --------------------------------------------------------------------- plan model

#: section name -> dataclass whose fields are the keys of that table
_SECTION_CLASSES = {
    "atom": AtomConfig,
    "laser": LaserConfig,
    "grid": GridConfig,
    "propagation": PropagationConfig,
    "absorber": AbsorberConfig,
    "output": OutputConfig,
    "spectra": SpectraConfig,
}


def key_spec(key: str):
    """The :class:`~tdse1d.input.schema.Spec` of a dotted input key, or None if it names no value."""
    import dataclasses

    parts = [p for p in key.split(".") if not p.isdigit()]
    if not parts or parts[0] not in _SECTION_CLASSES:
        return None
    cls = _SECTION_CLASSES[parts[0]]
    rest = parts[1:]
    if cls is AtomConfig and rest[:1] == ["centre"]:
        cls, rest = CentreConfig, rest[1:]
    if len(rest) != 1:
        return None
    for f in dataclasses.fields(cls):
        if f.name == rest[0] and "spec" in f.metadata:
            return f.metadata["spec"]
    return None


def _split_unit(value) -> tuple[float | None, str]:
    """``"1.5e14 W/cm^2"`` -> (1.5e14, "W/cm^2"); a bare number -> (number, "")."""
    if isinstance(value, bool):
        return None, ""
    if isinstance(value, (int, float)):
        return float(value), ""
    if isinstance(value, str):
        head, _, tail = value.strip().partition(" ")
        try:
            return float(head), tail.strip()
        except ValueError:
            return None, ""
    return None, ""


def _atomic_value(value, spec) -> float:
    """A plan value in atomic units (NaN for non-numeric values such as envelope names)."""
    if spec is not None and spec.kind == "quantity":
        try:
            return units.to_atomic(value, spec.dimension)
        except units.UnitError:
            return math.nan
    number, _ = _split_unit(value)
    return math.nan if number is None else number


@dataclass(frozen=True)
class Axis:
    """One scanned key and its values, as they will be set in the input.

    Attributes
    ----------
    key : str
        Dotted input key, e.g. ``laser.0.peak_intensity``.
    values : tuple
        TOML values (strings with units, or numbers), applied like ``--set``.
    unit : str
        Unit of the values as written (``""`` for bare numbers); used for labels.
    atomic : tuple of float
        The values in atomic units (NaN where not numeric).
    """

    key: str
    values: tuple
    unit: str
    atomic: tuple

    @property
    def label(self) -> str:
        return f"{self.key} ({self.unit})" if self.unit else self.key

    def display(self) -> np.ndarray:
        """Values as numbers in :attr:`unit` (values written in other units are converted)."""
        spec = key_spec(self.key)
        if self.unit and spec is not None and spec.kind == "quantity":
            try:
                return np.array(self.atomic, float) / units.to_atomic(f"1 {self.unit}", spec.dimension)
            except units.UnitError:
                pass
        return np.array([math.nan if _split_unit(v)[0] is None else _split_unit(v)[0] for v in self.values])


@dataclass(frozen=True)
class ScanPoint:
    """One run of a scan.

    Attributes
    ----------
    index : int
        Position in the plan's point order (``--point K``).
    grid_index : tuple of int
        Index along each axis.
    raw : dict
        The resolved input.
    hash : str
        :func:`input_hash` of ``raw``: the name of its result file.
    cost : float
        :func:`estimate_cost`, grid points x time steps.
    """

    index: int
    grid_index: tuple
    raw: dict = field(repr=False)
    hash: str
    cost: float
    config: RunConfig = field(repr=False, compare=False)

    @property
    def resolved_toml(self) -> str:
        return canonical_toml(self.raw)


@dataclass(frozen=True)
class ScanPlan:
    """A validated scan plan: its axes and every point."""

    source: str
    text: str
    base_dir: Path
    mode: str
    axes: tuple
    fixed: tuple
    points: tuple

    @property
    def identity(self) -> str:
        """SHA-256 over the axis keys and the point hashes in order: equal for equal plans
        however the plan file is written (comments, spacing, value spellings aside)."""
        text = json.dumps({"axes": [a.key for a in self.axes], "points": [p.hash for p in self.points]})
        return hashlib.sha256(text.encode()).hexdigest()

    @property
    def shape(self) -> tuple:
        if self.mode == "zip":
            return (len(self.points),)
        return tuple(len(a.values) for a in self.axes)

    def manifest(self) -> dict:
        return {
            "kind": "scan-manifest",
            "plan_identity": self.identity,
            "plan_source": self.source,
            "mode": self.mode,
            "axes": [{"key": a.key, "values": list(a.values), "unit": a.unit} for a in self.axes],
            "points": [
                {"index": p.index, "hash": p.hash, "grid_index": list(p.grid_index), "cost": p.cost}
                for p in self.points
            ],
        }


# -------------------------------------------------------------- axis and points


def _linear(start, stop, count):
    return np.linspace(start, stop, count)


def _log(start, stop, count):
    if start <= 0 or stop <= 0:
        raise ValueError("a log-spaced range needs positive start and stop")
    return np.geomspace(start, stop, count)


#: range spacing name -> function(start, stop, count) -> values
SPACINGS: dict[str, Callable] = {"linear": _linear, "log": _log}


def _grid_points(axes):
    return list(itertools.product(*(range(len(a.values)) for a in axes)))


def _zip_points(axes):
    lengths = {len(a.values) for a in axes}
    if len(lengths) != 1:
        raise ValueError(
            "mode 'zip' needs axes of equal length, got " + ", ".join(f"{a.key}: {len(a.values)}" for a in axes)
        )
    return [tuple([i] * len(axes)) for i in range(lengths.pop())]


#: point expansion name -> function(axes) -> list of index tuples
EXPANSIONS: dict[str, Callable] = {"grid": _grid_points, "zip": _zip_points}

_AXIS_KEYS = ("key", "values", "start", "stop", "count", "spacing")
_PLAN_KEYS = ("base", "mode", "set", "axis")


def _range_values(table, where, problems):
    start, stop, count = table.get("start"), table.get("stop"), table.get("count")
    spacing = table.get("spacing", "linear")
    missing = [k for k, v in (("start", start), ("stop", stop), ("count", count)) if v is None]
    if missing:
        problems.append(f"{where}: a range needs start, stop and count (missing {', '.join(missing)})")
        return None
    if isinstance(count, bool) or not isinstance(count, int) or count < 1:
        problems.append(f"{where}.count: must be a positive integer, got {count!r}")
        return None
    if spacing not in SPACINGS:
        problems.append(f"{where}.spacing: unknown spacing {spacing!r}; choose one of {', '.join(SPACINGS)}")
        return None
    a, unit = _split_unit(start)
    b, unit_b = _split_unit(stop)
    if a is None or b is None:
        problems.append(f"{where}: start and stop must be numbers or 'NUMBER UNIT' strings, got {start!r}, {stop!r}")
        return None
    if unit_b != unit and unit:
        # convert stop into the unit of start through atomic units of a common dimension
        for dim in units.DIMENSIONS:
            try:
                b = units.to_atomic(stop, dim) / units.to_atomic(f"1 {unit}", dim)
                break
            except units.UnitError:
                continue
        else:
            problems.append(f"{where}: stop {stop!r} cannot be converted to the unit of start {start!r}")
            return None
    try:
        numbers = SPACINGS[spacing](a, b, count)
    except ValueError as exc:
        problems.append(f"{where}: {exc}")
        return None
    return tuple(f"{float(v):.12g} {unit}" if unit else float(v) for v in numbers)


def _read_axis(table, i, problems) -> Axis | None:
    where = f"axis.{i}"
    if not isinstance(table, dict):
        problems.append(f"{where}: must be a table [[axis]]")
        return None
    for k in table:
        if k not in _AXIS_KEYS:
            problems.append(f"{where}.{k}: unknown key; known keys: {', '.join(_AXIS_KEYS)}")
    key = table.get("key")
    if not isinstance(key, str) or not key:
        problems.append(f"{where}.key: missing or not a string (a dotted input key such as laser.0.wavelength)")
        return None
    has_values = "values" in table
    has_range = any(k in table for k in ("start", "stop", "count"))
    if has_values == has_range:
        problems.append(f"{where} ({key}): give either 'values' or a range (start, stop, count)")
        return None
    if has_values:
        values = table["values"]
        if not isinstance(values, list):
            problems.append(f"{where}.values ({key}): must be an array, got {values!r}")
            return None
        values = tuple(values)
    else:
        values = _range_values(table, where, problems)
        if values is None:
            return None
    if not values:
        problems.append(f"{where} ({key}): empty axis, no values to scan")
        return None
    spec = key_spec(key)
    unit = _split_unit(values[0])[1]
    return Axis(key=key, values=values, unit=unit, atomic=tuple(_atomic_value(v, spec) for v in values))


def _flatten(table, prefix=""):
    """``{"laser": {"0": {"cycles": 4}}}`` (unquoted dotted keys in TOML) -> ``[("laser.0.cycles", 4)]``."""
    items = []
    for k, v in table.items():
        key = f"{prefix}.{k}" if prefix else str(k)
        items.extend(_flatten(v, key) if isinstance(v, dict) else [(key, v)])
    return items


def parse_plan(plan: dict, source: str = "<plan>", base_dir: Path | str = ".", text: str = "") -> ScanPlan:
    """Validate a scan plan (a dict as from TOML) and every one of its points.

    Parameters
    ----------
    plan : dict
    source : str
        Name of the plan (messages, records).
    base_dir : path
        Directory of the plan: ``base`` is relative to it.
    text : str
        The plan text, recorded in the scan directory.

    Returns
    -------
    ScanPlan

    Raises
    ------
    PlanError
        Listing every problem: of the plan's tables, of the base input, of each point.
    """
    base_dir = Path(base_dir)
    problems: list[str] = []
    for k in plan:
        if k not in _PLAN_KEYS:
            problems.append(f"{k}: unknown key in the plan; known keys: {', '.join(_PLAN_KEYS)}")
    mode = plan.get("mode", "grid")
    if mode not in EXPANSIONS:
        problems.append(f"mode: unknown value {mode!r}; choose one of {', '.join(EXPANSIONS)}")
    base = plan.get("base")
    input_dir = base_dir
    base_source = f"{source} [base]"
    raw_base = None
    if isinstance(base, str):
        path = base_dir / base
        input_dir = path.parent
        base_source = str(path)
        try:
            raw_base = tomllib.loads(path.read_text(encoding="utf-8"))
        except OSError as exc:
            problems.append(f"base: cannot read the base input {str(path)!r} ({exc.strerror})")
        except tomllib.TOMLDecodeError as exc:
            problems.append(f"base: TOML syntax error in {str(path)!r}: {exc}")
        except ValueError:  # not UTF-8 text, or an integer of too many digits
            problems.append(f"base: {str(path)!r} is not readable TOML text")
    elif isinstance(base, dict):
        raw_base = copy.deepcopy(base)
    else:
        problems.append("base: missing; give an input file (base = \"argon_800nm.toml\") or an inline [base] table")

    fixed = plan.get("set", {})
    if not isinstance(fixed, dict):
        problems.append("set: must be a table of dotted keys and values")
        fixed = {}
    fixed = tuple(_flatten(fixed))

    axes_raw = plan.get("axis")
    if isinstance(axes_raw, dict):
        axes_raw = [axes_raw]
    if not isinstance(axes_raw, list) or not axes_raw:
        problems.append("axis: the plan needs at least one [[axis]] table")
        axes_raw = []
    axes = [_read_axis(t, i, problems) for i, t in enumerate(axes_raw)]
    keys = [a.key for a in axes if a is not None]
    for k in sorted({k for k in keys if keys.count(k) > 1}):
        problems.append(f"axis: key {k!r} is scanned twice")

    if raw_base is not None:
        try:  # the base itself, with the fixed overrides: its errors are reported once
            with_fixed = raw_base
            for k, v in fixed:
                with_fixed = apply_override(with_fixed, k, v)
            parse_input(with_fixed, source=base_source, base_dir=input_dir)
        except InputError as exc:
            problems.append(f"base input is invalid: {exc}")
            raw_base = None

    if problems or raw_base is None or mode not in EXPANSIONS:
        raise PlanError(problems, source)
    axes = tuple(axes)
    try:
        index_tuples = EXPANSIONS[mode](axes)
    except ValueError as exc:
        raise PlanError([f"mode: {exc}"], source) from None

    points = []
    for n, idx in enumerate(index_tuples):
        assignment = [(a.key, a.values[i]) for a, i in zip(axes, idx)]
        label = ", ".join(f"{k} = {v!r}" for k, v in assignment)
        raw = raw_base
        try:
            for k, v in fixed:
                raw = apply_override(raw, k, v)
            for k, v in assignment:
                raw = apply_override(raw, k, v)
            config = parse_input(raw, source=f"{source} point {n}", base_dir=input_dir)
        except InputError as exc:
            key = f"key '{exc.key}': " if exc.key else ""
            problems.append(f"point {n} ({label}): {key}{exc.message}")
            continue
        points.append(
            ScanPoint(index=n, grid_index=tuple(idx), raw=config.raw, hash=input_hash(config.raw),
                      cost=estimate_cost(config), config=config)
        )
    if problems:
        raise PlanError(problems, source)
    hashes = [p.hash for p in points]
    if len(set(hashes)) != len(hashes):
        raise PlanError(["two points have the same resolved input (an axis repeats a value)"], source)
    return ScanPlan(source=source, text=text, base_dir=input_dir, mode=mode, axes=axes, fixed=fixed,
                    points=tuple(points))


def load_plan(path) -> ScanPlan:
    """Read and validate a scan plan file (see :func:`parse_plan`)."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise InputError(f"cannot read the scan plan ({exc.strerror})", source=str(path)) from None
    except UnicodeDecodeError as exc:
        raise InputError(f"not a text file: byte {exc.start} is not UTF-8 (a plan is TOML text)",
                         source=str(path)) from None
    try:
        plan = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"TOML syntax error: {exc}", source=str(path)) from None
    except ValueError as exc:  # an integer of more digits than Python converts
        raise InputError(f"cannot read the TOML ({str(exc).split(';')[0]})", source=str(path)) from None
    return parse_plan(plan, source=str(path), base_dir=path.parent, text=text)


# -------------------------------------------------------------------------- cost


def estimate_cost(config: RunConfig) -> float:
    """Relative cost of a run, grid points x time steps, without computing bound states.

    Uses the grid and time step the input gives, else the semiclassical advice
    (:func:`tdse1d.input.problem.model_estimates`) with the input's ionization potential, or
    0.5 Hartree when the softening is given instead: good enough to order points.
    """
    from ..physics.grid import fast_fft_size
    from ..input.problem import AFTER_PULSE_CYCLES, FIELD_FREE_DURATION, _potential, build_field, model_estimates

    try:
        fld = build_field(config)
    except InputError:
        return math.nan
    ip = config.atom.ionization_potential or 0.5
    _, advice = model_estimates(_potential(config), fld, ip)
    spacing = config.grid.spacing or advice.spacing
    points = config.grid.points or fast_fft_size(int(math.ceil(2 * advice.half_width / spacing)))
    dt = config.propagation.time_step or advice.time_step
    if config.propagation.after_pulse is not None:
        after = config.propagation.after_pulse
    elif fld.pulses:
        after = AFTER_PULSE_CYCLES * 2 * math.pi / fld.omega
    else:
        after = FIELD_FREE_DURATION
    steps = (fld.end + after - fld.start) / dt if fld.pulses else after / dt
    return float(points * max(steps, 1.0))


# ---------------------------------------------------------------- scan directory


class ScanDirectory:
    """The files of a scan: ``manifest.json``, ``scan.toml``, ``points/``, ``summary.h5``.

    Parameters
    ----------
    root : path
    """

    def __init__(self, root):
        self.root = Path(root)
        self.points = self.root / POINTS_DIR

    def result(self, point: ScanPoint) -> Path:
        return self.points / f"{point.hash}.h5"

    def error(self, point: ScanPoint) -> Path:
        return self.points / f"{point.hash}.error"

    def record(self, point: ScanPoint) -> Path:
        return self.points / f"{point.hash}.json"

    @property
    def summary(self) -> Path:
        return self.root / SUMMARY

    def read_manifest(self) -> dict | None:
        try:
            return json.loads((self.root / MANIFEST).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None

    def claim(self, plan: ScanPlan, fresh: bool = False) -> None:
        """Record ``plan`` as this directory's plan.

        Raises
        ------
        PlanMismatch
            If the directory holds another plan and ``fresh`` is False.
        """
        old = self.read_manifest()
        if old is not None and old.get("plan_identity") != plan.identity:
            if not fresh:
                raise PlanMismatch(
                    f"{self.root} holds the points of another plan ({old.get('plan_source')}); "
                    "give another directory, or --fresh to delete its points and start again"
                )
        if fresh:
            self.clear()
        elif old is None and self.points.exists() and any(self.points.glob("*.h5")):
            raise PlanMismatch(f"{self.root} holds point files but no manifest; give --fresh to start again")
        self.points.mkdir(parents=True, exist_ok=True)
        _write_atomic(self.root / MANIFEST, json.dumps(plan.manifest(), indent=1))
        if plan.text:
            _write_atomic(self.root / PLAN_COPY, plan.text)

    @property
    def lock_file(self) -> Path:
        return self.root / SCAN_LOCK

    def lock(self) -> "WriterLock":
        """The directory's lock, taken: :class:`~tdse1d.errors.OutputBusy` if another scan holds it."""
        from ..io.guarded_file import WriterLock

        self.root.mkdir(parents=True, exist_ok=True)
        return WriterLock(self.lock_file, what=f"the scan directory {str(self.root)!r}", purpose="tdse1d scan").acquire()

    def writer_of(self, point: ScanPoint):
        """The live process writing ``point`` (a :class:`~tdse1d.io.guarded_file.LockHolder`), or None."""
        from ..io.guarded_file import WriterLock, lock_path

        return WriterLock.holder(lock_path(self.result(point)))

    def clear(self) -> None:
        """Delete the files a scan writes (and nothing else).

        Raises
        ------
        tdse1d.errors.OutputBusy
            If a point is being written by a live process (nothing is deleted).
        """
        from ..errors import OutputBusy
        from ..io.guarded_file import WriterLock

        if self.points.exists():
            for lock in self.points.glob("*.h5.lock"):
                holder = WriterLock.holder(lock)
                if holder is not None:
                    raise OutputBusy(f"{lock.name[:-5]} in {self.root} is being written by {holder.describe()}; "
                                     "stop it before starting afresh")
            for pattern in ("*.h5", "*.h5.part", "*.h5.lock", "*.error", "*.json", "*.tmp", "*.checkpoint"):
                for p in self.points.glob(pattern):
                    p.unlink(missing_ok=True)
        for name in (MANIFEST, PLAN_COPY, SUMMARY):
            (self.root / name).unlink(missing_ok=True)

    def state(self, point: ScanPoint) -> str:
        """``"done"``, ``"busy"`` (another live process writes it), ``"failed"`` or ``"todo"``;
        a result file that fails verification (:func:`result_matches`) is deleted."""
        path = self.result(point)
        if self.writer_of(point) is not None:
            return "busy"
        if path.exists():
            if result_matches(path, point.hash):
                return "done"
            path.unlink(missing_ok=True)  # truncated, unfinished or another input: redo
            self.record(point).unlink(missing_ok=True)
        if self.error(point).exists():
            return "failed"
        return "todo"


def _write_atomic(path: Path, text: str) -> None:
    tmp = path.with_name(f"{path.name}.{os.getpid()}.tmp")
    tmp.write_text(text, encoding="utf-8")
    os.replace(tmp, path)


def result_matches(path, expected_hash: str) -> bool:
    """True if ``path`` is a complete result file of the input named ``expected_hash``
    holding every dataset of the contract with its shape (:func:`tdse1d.io.result_file.content_problems`),
    and its data are readable, not only its header."""
    import h5py

    from ..io.result_file import content_problems, is_complete

    if not is_complete(path):
        return False
    try:
        with h5py.File(path, "r") as f:
            raw = tomllib.loads(f.attrs["input"])
            if content_problems(f):
                return False
            for name in ("spectra/harmonic/power", "observables/acceleration", "observables/norm", "final/psi"):
                data = f[name][()]  # reads every chunk: a truncated file fails here
                if not np.all(np.isfinite(data)):
                    return False
    except Exception:  # h5py raises several types for a damaged file
        return False
    return input_hash(raw) == expected_hash


# --------------------------------------------------------------------- one point


def run_point(resolved_toml: str, source: str, base_dir: str, output: str) -> dict:
    """Run one point and write its result file; the function Dask workers execute.

    Never raises for a failure of the run itself: the traceback goes to
    ``<output stem>.error`` and the returned record says ``status = "failed"``. A run
    stopped by SIGTERM/SIGINT (:func:`install_stop_handlers`) leaves its checkpoint and
    says ``"interrupted"``; a point another process is writing says ``"busy"``; neither
    leaves an ``.error`` file.

    Parameters
    ----------
    resolved_toml : str
        The point's resolved input.
    source : str
        Its name, for messages.
    base_dir : str
        Directory for relative paths in the input.
    output : str
        Result file ``points/<hash>.h5``.

    Returns
    -------
    dict
        ``status``, ``seconds`` (wall time of the run), ``host``, ``pid``,
        ``started_at`` (Unix time), and for a finished point ``tunnelling_yield`` and
        ``finished_at``; for a failed, busy or interrupted one ``error``.
    """
    import socket

    from .. import api
    from ..errors import OutputBusy
    from ..run.runner import RunInterrupted
    from ..io.wisdom import fftw_wisdom

    output = Path(output)
    error_file = output.with_suffix(".error")
    record_file = output.with_suffix(".json")
    started = time.perf_counter()
    record = {"host": socket.gethostname(), "pid": os.getpid(), "source": source, "started_at": time.time()}
    control = None
    try:
        raw = tomllib.loads(resolved_toml)
        if result_matches(output, input_hash(raw)):
            # finished meanwhile (by another process, or by this task on a worker that was
            # stopped before it could report): not computed twice
            record.update(status="done", seconds=0.0, already_finished=True, finished_at=time.time())
            return record
        config = parse_input(raw, source=source, base_dir=base_dir)
        control = _register(api.default_control(config))
        with fftw_wisdom():
            # an unfinished point continues from the checkpoint its last attempt left
            outcome = api.run(config, output, resume=True, control=control)
        tunnelling = _tunnelling_yield(outcome)
        record.update(status="done", seconds=time.perf_counter() - started, tunnelling_yield=tunnelling,
                      finished_at=time.time())
        if outcome.notes:
            record["notes"] = list(outcome.notes)
        error_file.unlink(missing_ok=True)
        _write_atomic(record_file, json.dumps(record))
    except RunInterrupted as exc:
        record.update(status="interrupted", seconds=time.perf_counter() - started,
                      error=f"stopped by a signal, {exc}; checkpoint {output.name}.checkpoint")
    except OutputBusy as exc:
        record.update(status="busy", seconds=time.perf_counter() - started, error=str(exc))
    except Exception as exc:  # a failed point is reported, the scan goes on
        record.update(status="failed", seconds=time.perf_counter() - started,
                      error=f"{type(exc).__name__}: {exc}")
        try:
            _write_atomic(error_file, f"{record['error']}\n\n{traceback.format_exc()}")
        except OSError:  # e.g. the disk is full: the record still says what happened
            pass
    finally:
        if control is not None:
            _unregister(control)
    return record


# ------------------------------------------------------------------ stop on signals
#
# A process that runs points keeps the RunControl of every run in progress here. The
# handler only sets their stop flags (safe in a signal handler), so each run writes its
# checkpoint at its next chunk boundary and raises RunInterrupted. Dask runs tasks in
# threads while signals reach the main thread: the flag is the way across. In a Dask
# worker the signal is then delivered again to the handler that was there before (by
# default: the process ends, and the scheduler hands the point to another worker, which
# continues from the checkpoint); in a job-array task the command exits with status 75.

_ACTIVE: tuple = ()  # RunControls of the runs in progress (a tuple: read atomically by the handler)
_ACTIVE_LOCK = threading.Lock()
_PREVIOUS: dict = {}  # signal -> handler before ours
_REDELIVER = {"on": False, "pending": None}


def _register(control):
    global _ACTIVE
    with _ACTIVE_LOCK:
        _ACTIVE = _ACTIVE + (control,)
    return control


def _unregister(control):
    global _ACTIVE
    with _ACTIVE_LOCK:
        _ACTIVE = tuple(c for c in _ACTIVE if c is not control)
        left, pending = _ACTIVE, _REDELIVER["pending"]
    if not left and pending is not None and _REDELIVER["on"]:
        os.kill(os.getpid(), pending)  # handled again in the main thread, now with no run left


def _on_signal(signum, frame):
    controls = _ACTIVE
    for c in controls:
        c.request_stop()
    if controls or not _REDELIVER["on"]:
        _REDELIVER["pending"] = signum
        return
    previous = _PREVIOUS.get(signum, signal.SIG_DFL)
    signal.signal(signum, previous)
    if callable(previous):
        previous(signum, frame)
    else:
        os.kill(os.getpid(), signum)


def install_stop_handlers(signals=(signal.SIGTERM, signal.SIGINT), redeliver: bool = False) -> bool:
    """Make SIGTERM/SIGINT stop the runs of this process with a checkpoint.

    Parameters
    ----------
    signals : tuple of int
    redeliver : bool
        Once no run is left, hand the signal to the handler that was installed before
        (a Dask worker then ends as it would have); otherwise only remember it.

    Returns
    -------
    bool
        False when called outside the main thread (where signal handlers cannot be set).
    """
    if threading.current_thread() is not threading.main_thread():
        return False
    for sig in signals:
        if sig not in _PREVIOUS:
            _PREVIOUS[sig] = signal.signal(sig, _on_signal)
    _REDELIVER["on"] = redeliver
    return True


def remove_stop_handlers() -> None:
    """Put back the handlers :func:`install_stop_handlers` replaced (main thread only)."""
    for sig, previous in list(_PREVIOUS.items()):
        signal.signal(sig, previous)
        del _PREVIOUS[sig]
    _REDELIVER.update(on=False, pending=None)


def _worker_setup(stop_http: bool):
    """A Dask WorkerPlugin (made here, so that importing this module does not import
    distributed) that installs :func:`install_stop_handlers` on every worker, also one
    that joins later, and for our own local cluster stops the worker's HTTP server."""
    from distributed.diagnostics.plugin import WorkerPlugin

    class StopOnSignals(WorkerPlugin):
        name = "tdse1d-stop-on-signals"

        def __init__(self, stop_http):
            self.stop_http = stop_http

        def setup(self, worker):
            # plugins are set up in the worker's event loop, the process's main thread
            from .execute import install_stop_handlers

            install_stop_handlers(redeliver=True)
            if self.stop_http and getattr(worker, "http_server", None) is not None:
                worker.http_server.stop()

    return StopOnSignals(stop_http)


def _stop_scheduler_http(dask_scheduler=None):
    if getattr(dask_scheduler, "http_server", None) is not None:
        dask_scheduler.http_server.stop()


def _tunnelling_yield(outcome) -> float:
    """Quasi-static tunnelling estimate of the ionization over the run's field (NaN if none);
    read from the file when the run's own analysis stored it."""
    import h5py

    from ..semiclassical.tunnelling import tunnelling_yield

    with h5py.File(outcome.path, "r") as f:
        key = "classical/tunnelling/probability"
        if key in f and f[key].size:
            return float(f[key][-1])
    obs = outcome.result.observables
    try:
        return float(tunnelling_yield(obs.time, obs.electric, outcome.problem.potential,
                                      -outcome.problem.ionization_potential)[-1])
    except (ValueError, ArithmeticError):
        return math.nan


# ------------------------------------------------------------------ the scan run


@dataclass
class ScanReport:
    """What a scan did: point indices by outcome, and the per-point records."""

    total: int
    done: list = field(default_factory=list)
    skipped: list = field(default_factory=list)
    failed: dict = field(default_factory=dict)  # index -> error message
    busy: dict = field(default_factory=dict)  # index -> who else is writing it
    interrupted: list = field(default_factory=list)  # stopped by a signal, checkpoint left
    records: dict = field(default_factory=dict)  # index -> run_point record
    wall: float = 0.0

    @property
    def ok(self) -> bool:
        return not self.failed and not self.busy and not self.interrupted


def _prepare(plan: ScanPlan, directory: ScanDirectory, fresh: bool, retry_failed: bool, report: ScanReport):
    """Claim the directory and sort the points into to-run and the rest."""
    directory.claim(plan, fresh=fresh)
    todo = []
    for p in plan.points:
        state = directory.state(p)
        if state == "done":
            report.skipped.append(p.index)
        elif state == "busy":
            holder = directory.writer_of(p)
            report.busy[p.index] = f"being written by {holder.describe() if holder else 'another process'}"
        elif state == "failed" and not retry_failed:
            report.failed[p.index] = directory.error(p).read_text(encoding="utf-8").splitlines()[0]
        else:
            directory.error(p).unlink(missing_ok=True)
            todo.append(p)
    # longest first, so that the last points to finish are short ones
    todo.sort(key=lambda p: (-(p.cost if math.isfinite(p.cost) else math.inf), p.index))
    return todo


def _args(plan: ScanPlan, directory: ScanDirectory, p: ScanPoint):
    return (p.resolved_toml, f"{plan.source} point {p.index}", str(plan.base_dir), str(directory.result(p)))


def run_one(plan: ScanPlan, directory, index: int, fresh: bool = False, retry_failed: bool = True) -> ScanReport:
    """Run point ``index`` of ``plan`` in this process (one task of a job array).

    A finished point is not run again. Raises IndexError for an index outside the plan.
    """
    directory = ScanDirectory(directory)
    if not 0 <= index < len(plan.points):
        raise IndexError(f"point {index} does not exist: the plan has points 0 to {len(plan.points) - 1}")
    report = ScanReport(total=1)
    directory.claim(plan, fresh=fresh)
    p = plan.points[index]
    state = directory.state(p)
    if state == "done":
        report.skipped.append(index)
        return report
    if state == "busy":
        holder = directory.writer_of(p)
        report.busy[index] = f"being written by {holder.describe() if holder else 'another process'}"
        return report
    if state == "failed" and not retry_failed:
        report.failed[index] = directory.error(p).read_text(encoding="utf-8").splitlines()[0]
        return report
    started = time.perf_counter()
    record = run_point(*_args(plan, directory, p))
    report.wall = time.perf_counter() - started
    report.records[index] = record
    _file_record(report, index, record, record["status"] == "done")
    return report


def _file_record(report: ScanReport, index: int, record: dict, done: bool) -> None:
    """Sort a point's record into the report by its outcome."""
    status = record.get("status")
    if done:
        report.done.append(index)
    elif status == "busy":
        report.busy[index] = record.get("error", "being written by another process")
    elif status == "interrupted":
        report.interrupted.append(index)
    else:
        report.failed[index] = record.get("error", "no result file")


def local_cluster(workers: int | None = None, dashboard: bool = False):
    """A ``LocalCluster`` of single-threaded worker processes on 127.0.0.1, closed to
    other local users.

    Every connection (client, scheduler, workers) uses TLS with credentials made for
    this cluster alone (``distributed.security.Security.temporary``, kept in memory
    and handed to the worker processes through their start-up pipe): a process without
    them cannot attach a client, so cannot run code as the user. Dask starts an HTTP
    server in the scheduler and in each worker whatever its options say; they serve no
    routes and are stopped once the cluster is up (:func:`run_scan`), unless
    ``dashboard`` asks for the scheduler's.

    Parameters
    ----------
    workers : int, optional
        Number of worker processes (default: the number of cores).
    dashboard : bool
        Serve the Dask dashboard on 127.0.0.1:8787 (off by default).
    """
    import dask
    from distributed import LocalCluster
    from distributed.security import Security

    n = workers or os.cpu_count() or 1
    routes = {} if dashboard else {"distributed.scheduler.http.routes": []}
    with dask.config.set({**routes, "distributed.worker.http.routes": []}):
        return LocalCluster(
            n_workers=n,
            threads_per_worker=1,
            processes=True,
            host="127.0.0.1",
            protocol="tls://",
            security=Security.temporary(),
            dashboard_address="127.0.0.1:8787" if dashboard else "127.0.0.1:0",
            silence_logs=40,  # logging.ERROR: a restarted worker is reported by the scan itself
        )


def open_local_client(workers: int | None = None, dashboard: bool = False):
    """A :func:`local_cluster` and a client of it, with the HTTP servers stopped (the
    scheduler's kept with ``dashboard``) and the workers' signal handlers installed.

    Returns
    -------
    cluster, client
        Close both when done.
    """
    from distributed import Client

    cluster = local_cluster(workers, dashboard)
    try:
        client = Client(cluster, set_as_default=False)
        try:
            if not dashboard:
                client.run_on_scheduler(_stop_scheduler_http)
            client.register_plugin(_worker_setup(stop_http=True), name="tdse1d-stop-on-signals")
        except BaseException:
            client.close()
            raise
    except BaseException:
        cluster.close()
        raise
    return cluster, client


def connect(address: str, timeout: float = 10.0):
    """A Dask client of the scheduler at ``address``; :class:`SchedulerUnreachable` if none answers."""
    from distributed import Client

    try:
        return Client(address, timeout=timeout, set_as_default=False)
    except (OSError, TimeoutError) as exc:
        raise SchedulerUnreachable(f"no Dask scheduler answered at {address} within {timeout:g} s ({exc})") from None


class _Progress:
    """Points done / total and time left, as a tqdm bar on a terminal, else one line per point."""

    def __init__(self, total, cost_total, enabled, stream=sys.stderr):
        self.total, self.cost_total = total, cost_total
        self.enabled, self.stream = enabled, stream
        self.started = time.perf_counter()
        self.cost_done = 0.0
        self.count = 0
        self.bar = None
        if enabled and stream.isatty() and total:
            from tqdm import tqdm

            self.bar = tqdm(total=total, unit="point", desc="scan", file=stream, dynamic_ncols=True)

    def left(self) -> float:
        if self.cost_done <= 0:
            return math.nan
        elapsed = time.perf_counter() - self.started
        return elapsed * (self.cost_total - self.cost_done) / self.cost_done

    def update(self, point: ScanPoint, record: dict):
        self.count += 1
        self.cost_done += point.cost if math.isfinite(point.cost) else 0.0
        if not self.enabled:
            return
        status = record.get("status", "failed")
        left = self.left()
        left_text = f"~{left:.0f} s left" if math.isfinite(left) else "time left unknown"
        if self.bar is not None:
            self.bar.update(1)
            self.bar.set_postfix_str(f"{left_text}, last: point {point.index} {status}", refresh=True)
        else:
            print(f"scan: {self.count}/{self.total} points, point {point.index} {status} "
                  f"({record.get('seconds', math.nan):.1f} s), {left_text}", file=self.stream, flush=True)

    def close(self):
        if self.bar is not None:
            self.bar.close()


def run_scan(plan: ScanPlan, directory, *, scheduler: str | None = None, timeout: float = 10.0, workers: int | None = None,
             dashboard: bool = False, fresh: bool = False, retry_failed: bool = False,
             progress: bool = True, client=None) -> ScanReport:
    """Run every point of ``plan`` that has no finished result in ``directory``, on Dask.

    Parameters
    ----------
    plan : ScanPlan
    directory : path
        The scan directory (created).
    scheduler : str, optional
        Address of an existing Dask scheduler, e.g. ``tcp://10.0.0.5:8786``; default a
        :func:`local_cluster`.
    timeout : float
        Seconds to wait for that scheduler.
    workers : int, optional
        Workers of the local cluster (default: the cores).
    dashboard : bool
        Serve the dashboard of the local cluster.
    fresh : bool
        Delete another plan's points instead of refusing the directory.
    retry_failed : bool
        Run again the points that failed before (otherwise they are reported).
    progress : bool
        Report progress on stderr.
    client : distributed.Client, optional
        Use this client (and leave it open).

    Returns
    -------
    ScanReport

    Raises
    ------
    PlanMismatch, SchedulerUnreachable
    tdse1d.errors.OutputBusy
        Another scan holds the directory (the message names it).
    """
    directory = ScanDirectory(directory)
    report = ScanReport(total=len(plan.points))
    with directory.lock():  # a second scan of this directory is refused here, naming this one
        return _run_locked(plan, directory, report, scheduler, timeout, workers, dashboard, fresh,
                           retry_failed, progress, client)


def _run_locked(plan, directory, report, scheduler, timeout, workers, dashboard, fresh, retry_failed,
                progress, client):
    from distributed import as_completed

    todo = _prepare(plan, directory, fresh, retry_failed, report)
    started = time.perf_counter()
    if not todo:
        return report
    own_cluster = own_client = None
    try:
        if client is None:
            if scheduler is not None:
                client = own_client = connect(scheduler, timeout)
            else:
                own_cluster, client = open_local_client(workers, dashboard)
                own_client = client
        if own_cluster is None:
            # workers stop their runs with a checkpoint on SIGTERM/SIGINT (also workers that join later)
            client.register_plugin(_worker_setup(stop_http=False), name="tdse1d-stop-on-signals")
        by_key = {}
        futures = []
        for rank, p in enumerate(todo):
            # priority keeps the longest-first order when workers free up
            fut = client.submit(run_point, *_args(plan, directory, p), key=f"tdse1d-point-{p.hash}",
                                pure=False, priority=len(todo) - rank, retries=0)
            by_key[fut.key] = p
            futures.append(fut)
        bar = _Progress(len(todo), sum(p.cost for p in todo if math.isfinite(p.cost)), progress)
        try:
            for fut in as_completed(futures, loop=client.loop):
                p = by_key[fut.key]
                try:
                    record = fut.result()
                except Exception as exc:
                    # the worker died (KilledWorker) or the task was lost: not the point's
                    # own fault, so no .error file and a plain rerun runs it again
                    record = {"status": "lost", "error": f"worker lost: {type(exc).__name__}: {exc}"}
                report.records[p.index] = record
                done = record["status"] == "done" and result_matches(directory.result(p), p.hash)
                _file_record(report, p.index, record, done)
                bar.update(p, record)
        finally:
            bar.close()
    finally:
        if own_client is not None:
            own_client.close()
        if own_cluster is not None:
            own_cluster.close()
    report.wall = time.perf_counter() - started
    return report
