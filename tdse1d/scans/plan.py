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

    rungs = ["run", "sfa"]         # optional (a top-level key): what each point computes
                                   # (:mod:`tdse1d.scans.rungs`; default ["run"])

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
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

from ..input.schema import RunConfig, parse_input
from ..input.spec import InputError, apply_override, dump_toml, tomllib
from .axes import SPACINGS, Axis, key_spec, read_axis  # noqa: F401 - SPACINGS, key_spec: the plan's names
from .cost import estimate_cost
from .rungs import DEFAULT_RUNGS, PLAN_KEY, read_rungs


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
    rungs : tuple of str
        The rungs computed at this point (the plan's ``rungs``, :mod:`tdse1d.scans.rungs`).
    """

    index: int
    grid_index: tuple
    raw: dict = field(repr=False)
    hash: str
    cost: float
    config: RunConfig = field(repr=False, compare=False)
    rungs: tuple = DEFAULT_RUNGS

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
    rungs: tuple = DEFAULT_RUNGS

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
            "rungs": list(self.rungs),
            "axes": [{"key": a.key, "values": list(a.values), "unit": a.unit} for a in self.axes],
            "points": [
                {"index": p.index, "hash": p.hash, "grid_index": list(p.grid_index), "cost": p.cost}
                for p in self.points
            ],
        }


# -------------------------------------------------------------- axis and points


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

_PLAN_KEYS = ("base", "mode", "set", "axis", PLAN_KEY)


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
    rungs = read_rungs(plan.get(PLAN_KEY), problems)
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
    axes = [read_axis(t, i, problems) for i, t in enumerate(axes_raw)]
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
                      cost=estimate_cost(config), config=config, rungs=rungs)
        )
    if problems:
        raise PlanError(problems, source)
    hashes = [p.hash for p in points]
    if len(set(hashes)) != len(hashes):
        raise PlanError(["two points have the same resolved input (an axis repeats a value)"], source)
    return ScanPlan(source=source, text=text, base_dir=input_dir, mode=mode, axes=axes, fixed=fixed,
                    points=tuple(points), rungs=rungs)


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
