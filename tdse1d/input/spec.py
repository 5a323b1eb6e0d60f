"""The machinery under the input schema: :class:`InputError`, the per-key specification
(:class:`Spec`, :func:`key`) that the schema's dataclass fields carry as metadata and the
table reader that checks a TOML table against them, the ``--set`` overrides
(:func:`parse_override`, :func:`apply_override`), and the one place that picks the TOML
reader (``tomllib``).
"""

from __future__ import annotations

import copy
import dataclasses
import difflib
import math
import sys
from dataclasses import dataclass, field
from typing import Any


from .. import units


# The one place that picks the TOML reader: the standard library's from Python 3.11,
# its backport (a dependency on 3.10) before. Other modules import ``tomllib`` from here.
if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - exercised by the CI run on the oldest Python
    import tomli as tomllib

AUTO = "auto"
_REQUIRED = object()


class InputError(ValueError):
    """A problem with an input file, naming the file and the key.

    Parameters
    ----------
    message : str
        What is wrong.
    key : str, optional
        Dotted path of the offending key, e.g. ``laser.0.wavelength``.
    source : str, optional
        The input file.
    """

    def __init__(self, message: str, key: str | None = None, source: str | None = None):
        self.message = message
        self.key = key
        self.source = source
        super().__init__(str(self))

    def __str__(self):
        where = f"{self.source}: " if self.source else ""
        if not self.key:
            key = ""
        elif self.key.startswith("-"):  # a command-line option
            key = f"option '{self.key}': "
        else:
            key = f"key '{self.key}': "
        return f"{where}{key}{self.message}"


# --------------------------------------------------------------------------- specs


@dataclass(frozen=True)
class Spec:
    """How one input key is read.

    Parameters
    ----------
    kind : {"quantity", "int", "float", "str", "bool", "choice", "int_list", "float_list"}
    dimension : str, optional
        For quantities, a key of :data:`tdse1d.units.DIMENSIONS`.
    bare_allowed : bool
        Whether a bare number (atomic units) is accepted for a quantity.
    auto : bool
        Whether the string ``"auto"`` is accepted (read as None: chosen by the program).
    minimum : float, optional
        Smallest allowed value; ``strict`` makes it exclusive.
    choices : tuple of str
        Allowed strings for ``kind="choice"``; a callable returning them is also
        accepted, so that registries filled later are consulted at validation time.
    doc : str
        One-line description (used in messages).
    retired : dict of str to str
        For ``kind="choice"``: values no longer accepted, each with the one-line
        reason given when it is used.
    """

    kind: str
    dimension: str | None = None
    bare_allowed: bool = True
    auto: bool = False
    minimum: float | None = None
    strict: bool = True
    maximum: float | None = None
    choices: Any = ()
    doc: str = ""
    retired: Any = ()

    def allowed_choices(self):
        return tuple(self.choices() if callable(self.choices) else self.choices)


def key(spec: Spec, default=_REQUIRED):
    """A dataclass field carrying its input specification."""
    if default is _REQUIRED:
        return field(metadata={"spec": spec})
    return field(default=default, metadata={"spec": spec})


def parameter_spec(parameter) -> Spec:
    """The :class:`Spec` of a key declared by a registered part as a
    :class:`tdse1d.registry.Parameter`."""
    return Spec(parameter.kind, parameter.dimension, minimum=parameter.minimum, strict=parameter.strict,
                maximum=parameter.maximum, doc=parameter.doc, choices=getattr(parameter, "choices", ()))


def _check_range(value, spec: Spec, path: str):
    if isinstance(value, int) and not isinstance(value, bool):
        try:  # TOML integers may have any number of digits
            float(value)
        except OverflowError:
            raise InputError(f"too large: an integer of about {int(value.bit_length() * 0.30103) + 1} digits, "
                             "beyond the range of floating-point numbers", path) from None
    if not math.isfinite(value):
        raise InputError(f"must be finite, got {value!r}", path)
    if spec.minimum is not None:
        if spec.minimum > 0 and value <= 0:
            raise InputError(f"must be positive (at least {spec.minimum:g}), got {value!r}", path)
        if spec.strict and value <= spec.minimum:
            word = "positive" if spec.minimum == 0 else f"greater than {spec.minimum:g}"
            raise InputError(f"must be {word}, got {value!r}", path)
        if not spec.strict and value < spec.minimum:
            word = "zero or positive" if spec.minimum == 0 else f"at least {spec.minimum:g}"
            raise InputError(f"must be {word}, got {value!r}", path)
    if spec.maximum is not None and value > spec.maximum:
        raise InputError(f"must be at most {spec.maximum:g}, got {value!r}", path)
    return value


def _read_value(raw, spec: Spec, path: str):
    if spec.auto and raw == AUTO:
        return None
    kind = spec.kind
    if kind == "quantity":
        try:
            value = units.to_atomic(raw, spec.dimension, bare_allowed=spec.bare_allowed)
        except units.UnitError as exc:
            raise InputError(str(exc), path) from None
        return _check_range(value, spec, path)
    if kind == "int":
        if isinstance(raw, bool) or not isinstance(raw, int):
            extra = ' or "auto"' if spec.auto else ""
            raise InputError(f"must be an integer{extra}, got {raw!r}", path)
        return int(_check_range(raw, spec, path))
    if kind == "float":
        if isinstance(raw, bool) or not isinstance(raw, (int, float)):
            extra = ' or "auto"' if spec.auto else ""
            raise InputError(f"must be a number{extra}, got {raw!r}", path)
        if isinstance(raw, int):
            _check_range(raw, spec, path)  # an integer too large for a float is refused here
        return float(_check_range(float(raw), spec, path))
    if kind == "bool":
        if not isinstance(raw, bool):
            raise InputError(f"must be true or false, got {raw!r}", path)
        return raw
    if kind == "str":
        if not isinstance(raw, str) or not raw:
            raise InputError(f"must be a non-empty string, got {raw!r}", path)
        return raw
    if kind == "choice":
        options = spec.allowed_choices()
        retired = dict(spec.retired)
        # a TOML array or table given for a choice is unhashable: refused below, not looked up
        if not isinstance(raw, (bool, list, dict)) and raw in retired:
            raise InputError(retired[raw], path)
        if isinstance(raw, bool) or raw not in options:
            near = difflib.get_close_matches(str(raw), list(map(str, options)), n=1)
            hint = f" (did you mean '{near[0]}'?)" if near else ""
            raise InputError(
                f"unknown value {raw!r}{hint}; choose one of {', '.join(map(str, options))}", path
            )
        return raw
    if kind in ("int_list", "float_list"):
        items = raw if isinstance(raw, list) else [raw]
        if not items:
            raise InputError("must not be an empty list", path)
        item_spec = dataclasses.replace(spec, kind=kind.split("_")[0])
        return tuple(_read_value(v, item_spec, f"{path}[{i}]") for i, v in enumerate(items))
    raise AssertionError(f"unknown spec kind {kind}")  # pragma: no cover


def _read_table(cls, table, path: str, nested: dict | None = None):
    """Validate one TOML table against the dataclass ``cls`` whose fields carry specs.

    ``nested`` maps sub-table names to ``(field name, reader)``: the dataclass field
    that receives the sub-table and a callable reading it (arrays of tables).
    """
    if not isinstance(table, dict):
        raise InputError(f"must be a table, got {type(table).__name__}", path)
    nested = nested or {}
    fields_ = {f.name: f for f in dataclasses.fields(cls) if "spec" in f.metadata}
    known = list(fields_) + list(nested)
    for name in table:
        if name not in known:
            near = difflib.get_close_matches(name, known, n=1)
            hint = f"; did you mean '{near[0]}'?" if near else f"; known keys: {', '.join(known)}"
            raise InputError(f"unknown key{hint}", _join(path, name))
    values = {}
    for name, f in fields_.items():
        if name in table:
            values[name] = _read_value(table[name], f.metadata["spec"], _join(path, name))
        elif f.default is dataclasses.MISSING:
            raise InputError(f"missing required key ({f.metadata['spec'].doc})", _join(path, name))
    for name, (target, reader) in nested.items():
        if name in table:
            values[target] = reader(table[name], _join(path, name))
    return cls(**values)


def _join(path, name):
    return f"{path}.{name}" if path else str(name)


def _read_array(cls, items, path):
    if isinstance(items, dict):
        items = [items]
    if not isinstance(items, list) or not items:
        raise InputError("must be a non-empty array of tables", path)
    return tuple(_read_table(cls, item, f"{path}.{i}") for i, item in enumerate(items))


def parse_override(assignment: str) -> tuple[str, Any]:
    """Split ``KEY=VALUE`` from the command line; VALUE is read as a TOML value if it
    is one (``3``, ``2.5``, ``"800 nm"``, ``[0, 1]``) and as a plain string otherwise."""
    if "=" not in assignment:
        raise InputError(f"an override must look like KEY=VALUE, got {assignment!r}", "--set")
    path, text = assignment.split("=", 1)
    path = path.strip()
    if not path:
        raise InputError(f"an override must name a key, got {assignment!r}", "--set")
    try:
        value = tomllib.loads(f"v = {text}")["v"]
    except ValueError:  # not a TOML value (TOMLDecodeError), or an integer of over 4300 digits
        value = text.strip()
    return path, value


def apply_override(raw: dict, path: str, value) -> dict:
    """Set the dotted ``path`` (e.g. ``laser.0.peak_intensity``) in a copy of ``raw``.

    Integer segments index arrays of tables; missing tables are created. Unknown keys
    are left for validation to report.
    """
    raw = copy.deepcopy(raw)
    parts = path.split(".")
    node = raw
    for i, part in enumerate(parts[:-1]):
        here = ".".join(parts[: i + 1])
        if isinstance(node, list):
            index = _index(part, node, here)
            node = node[index]
            continue
        if part not in node:
            nxt = parts[i + 1]
            node[part] = [] if nxt.isdigit() else {}
        node = node[part]
        if not isinstance(node, (dict, list)):
            raise InputError(f"is a value, not a table, so '{path}' cannot be set", here)
    last = parts[-1]
    if isinstance(node, list):
        node[_index(last, node, path)] = value
    else:
        node[last] = value
    return raw


def _index(part, node, here):
    if not part.isdigit():
        raise InputError(f"expected an index into an array of {len(node)} tables", here)
    index = int(part)
    if index >= len(node):
        raise InputError(f"index {index} is out of range: there are {len(node)} tables", here)
    return index


def dump_toml(raw: dict) -> str:
    """Write a dict of TOML-compatible values back to TOML text."""
    import tomli_w

    return tomli_w.dumps(raw)
