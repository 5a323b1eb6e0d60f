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
digits of the SHA-256 of its canonical TOML).
"""

from __future__ import annotations

import copy
import hashlib
import itertools
import json
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np

from .. import units
from ..input.schema import (AbsorberConfig, AtomConfig, CentreConfig, GridConfig, LaserConfig, OutputConfig,
                            PropagationConfig, RunConfig, SpectraConfig, parse_input)
from ..input.spec import InputError, apply_override, dump_toml, tomllib
from .cost import estimate_cost


HASH_DIGITS = 16
class PlanError(InputError):
    """A scan plan with one or more bad points or tables; ``problems`` lists each one."""

    def __init__(self, problems: list[str], source: str | None = None):
        self.problems = list(problems)
        n = len(self.problems)
        head = f"{n} problem{'s' if n != 1 else ''} in the scan plan:\n  "
        super().__init__(head + "\n  ".join(self.problems), None, source)


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
    if cls is AtomConfig:  # a model's own parameter, declared by its potential
        from ..input.spec import parameter_spec
        from ..physics.potentials import POTENTIALS

        for model in POTENTIALS.values():
            for p in model.parameters:
                if p.name == rest[0]:
                    return parameter_spec(p)
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
