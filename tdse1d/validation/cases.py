"""The validation suite: runs the cases under ``validation/`` and writes a report.

Each case is a folder ``validation/<case>/`` holding a ``case.toml`` and the input
(or inputs) it runs. ``case.toml`` states what is compared::

    kind = "bound_energy"             # a key of CASE_KINDS: how the value is computed
    title = "Soft-core ground state, a = 1"
    quantity = "ground-state energy"
    source = "Javanainen, Eberly and Su, Phys. Rev. A 38, 3430 (1988) (value from memory)"
    quick = true                      # part of `tdse1d validate --quick`
    input = "input.toml"
    reference = -0.6698               # in `units`
    units = "hartree"
    tolerance = 1e-4                  # |computed - reference| allowed, in `units`
    [params]                          # anything the kind needs

This module holds what a case is (:class:`Case`, its :class:`Row` objects and its
:class:`CaseReport`), where the cases are found (:func:`default_cases_dir`,
:func:`discover`) and the registry of case kinds (:data:`CASE_KINDS`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

from .. import units
from ..input.spec import InputError, tomllib
from ..input.schema import load_input
from ..registry import registrar


CASE_KINDS: dict[str, type["CaseKind"]] = {}


register_case_kind = registrar(CASE_KINDS, attribute="kind")


#: where an installed package keeps the cases (``validation/`` shipped as package data,
#: see pyproject.toml), relative to the package
PACKAGED_CASES = "validation_cases"


def case_dirs_searched() -> list[Path]:
    """The folders :func:`default_cases_dir` looks in, in order: the cases shipped inside
    an installed package, then ``validation/`` of the source tree the package was
    imported from (a checkout, or an editable install)."""
    package = Path(__file__).resolve().parent.parent
    return [package / PACKAGED_CASES, package.parent / "validation"]


def default_cases_dir() -> Path | None:
    """The first folder of :func:`case_dirs_searched` that holds a case, None if none does."""
    for folder in case_dirs_searched():
        if any(folder.glob("*/case.toml")):
            return folder
    return None


# ----------------------------------------------------------------------------- data


@dataclass
class Row:
    """One compared number.

    ``deviation`` is ``computed - reference`` (in ``units``) unless ``relative``, then
    ``(computed - reference) / |reference|``; ``passed`` is ``|deviation| <= tolerance``
    unless the kind decided otherwise (``rule`` says how, for the report).
    """

    quantity: str
    reference: float
    computed: float
    tolerance: float
    source: str
    units: str = ""
    relative: bool = False
    rule: str = ""
    passed: bool | None = None
    informational: bool = False

    def __post_init__(self):
        ref, got = float(self.reference), float(self.computed)
        if self.relative:
            self.deviation = (got - ref) / abs(ref) if ref != 0 else math.inf
        else:
            self.deviation = got - ref
        if self.passed is None:
            self.passed = bool(math.isfinite(self.deviation) and abs(self.deviation) <= self.tolerance)


@dataclass
class Case:
    """A folder of ``validation/`` and its ``case.toml``."""

    name: str
    folder: Path
    spec: dict

    @property
    def quick(self) -> bool:
        return bool(self.spec.get("quick", False))

    @property
    def title(self) -> str:
        return self.spec.get("title", self.name)

    def get(self, key, default=InputError):
        """A key of case.toml (dotted for sub-tables), with a clear error if it is missing."""
        node = self.spec
        for part in key.split("."):
            if not isinstance(node, dict) or part not in node:
                if default is InputError:
                    raise InputError("missing key of the validation case", key, str(self.folder / "case.toml"))
                return default
            node = node[part]
        return node

    def input(self, name=None, overrides=()):
        """Load an input file of the case (``input`` by default) with overrides."""
        path = self.folder / (name or self.get("input"))
        return load_input(path, list(self.get("overrides", [])) + list(overrides))


@dataclass
class CaseReport:
    case: Case
    rows: list = field(default_factory=list)
    figures: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    seconds: float = 0.0
    error: str | None = None

    @property
    def passed(self) -> bool:
        return self.error is None and all(r.passed for r in self.rows) and bool(self.rows)


def discover(root=None, quick=False, names=None) -> list[Case]:
    """The cases under ``root`` (sorted by name), only the quick ones if asked.

    Parameters
    ----------
    root : path, optional
        Folder of case folders; default :func:`default_cases_dir`.
    quick : bool
        Only the cases marked ``quick = true``.
    names : set of str, optional
        Only these cases.

    Raises
    ------
    InputError
        If no case is found (naming where it looked) or a case file is unreadable.
    """
    if root is None:
        root = default_cases_dir()
        if root is None:
            looked = " or ".join(str(p) for p in case_dirs_searched())
            raise InputError(f"no validation cases found (looked in {looked}); give --cases DIR", "--cases")
    root = Path(root)
    if not root.is_dir():
        raise InputError(f"no such folder of validation cases: {root}", "--cases")
    cases = []
    found = []
    for path in sorted(root.glob("*/case.toml")):
        try:
            spec = tomllib.loads(path.read_text(encoding="utf-8"))
        except tomllib.TOMLDecodeError as exc:
            raise InputError(f"TOML syntax error: {exc}", source=str(path)) from None
        except UnicodeDecodeError:
            raise InputError("not a text file (UTF-8 TOML expected)", source=str(path)) from None
        except OSError as exc:
            raise InputError(f"cannot read the case file ({exc.strerror})", source=str(path)) from None
        kind = spec.get("kind")
        if kind not in CASE_KINDS:
            raise InputError(f"unknown case kind {kind!r}; choose one of {', '.join(CASE_KINDS)}", "kind", str(path))
        case = Case(path.parent.name, path.parent, spec)
        found.append(case)
        if quick and not case.quick:
            continue
        if names and case.name not in names:
            continue
        cases.append(case)
    if not found:
        raise InputError(f"no validation cases (folders with a case.toml) in {root}", "--cases")
    unknown = sorted(set(names or ()) - {c.name for c in found})
    if unknown:
        raise InputError(f"no case named {', '.join(unknown)} in {root}; the cases are "
                         f"{', '.join(c.name for c in found)}", "--only")
    if not cases:
        raise InputError(f"none of the {len(found)} cases in {root} is marked quick"
                         + (" among those given by --only" if names else ""), "--quick")
    return cases
