"""The axes of a scan plan: one scanned input key and its values (a list, or a linear
or log range converted to the unit of its start), read by :func:`read_axis`; and the
:class:`~tdse1d.input.spec.Spec` of a dotted input key (:func:`key_spec`), which gives
the values their atomic units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from .. import units
from ..input.schema import (AbsorberConfig, AtomConfig, CentreConfig, GridConfig, LaserConfig, OutputConfig,
                            PropagationConfig, SpectraConfig)

__all__ = ["Axis", "read_axis", "key_spec", "SPACINGS", "AXIS_KEYS"]

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


def _linear(start, stop, count):
    return np.linspace(start, stop, count)


def _log(start, stop, count):
    if start <= 0 or stop <= 0:
        raise ValueError("a log-spaced range needs positive start and stop")
    return np.geomspace(start, stop, count)


#: range spacing name -> function(start, stop, count) -> values
SPACINGS: dict[str, Callable] = {"linear": _linear, "log": _log}


_AXIS_KEYS = ("key", "values", "start", "stop", "count", "spacing")
AXIS_KEYS = _AXIS_KEYS


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


def read_axis(table, i, problems) -> Axis | None:
    """Axis ``i`` of a plan from its ``[[axis]]`` table; None (and a line in ``problems``) if bad."""
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
