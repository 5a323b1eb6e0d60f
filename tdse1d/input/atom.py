"""The ``[atom]`` table: the model atom or molecular ion, read against the chosen model.

Keys every model has (the model, the initial state, the number of bound states) are
fields of :class:`AtomConfig`; the keys of one model are declared by its potential
class (:mod:`tdse1d.physics.potentials`), and the keys of another model are refused
naming that model.
"""

from __future__ import annotations

import dataclasses
import difflib
from dataclasses import dataclass

from .spec import InputError, Spec, _join, _read_array, _read_table, _read_value, key, parameter_spec

__all__ = ["AtomConfig", "CentreConfig"]


def _potential_names():
    from ..physics.potentials import POTENTIALS

    return tuple(POTENTIALS)


_POSITIVE = dict(minimum=0.0)
# Ranges of the model's parameters outside which no grid represents the model (the
# numbers overflow or the core is far below any spacing); generous, not physical limits.
_CHARGE = dict(minimum=0.0, maximum=100.0)
_SOFTENING = dict(minimum=1e-3, strict=False, maximum=1e3)
_POSITION = dict(minimum=-1e3, strict=False, maximum=1e3)


@dataclass(frozen=True)
class CentreConfig:
    """One soft-core centre of a molecular ion (``[[atom.centre]]``)."""

    position: float = key(Spec("quantity", "length", **_POSITION, doc="position of the centre (bohr)"), 0.0)
    charge: float = key(Spec("float", **_CHARGE, doc="nuclear charge Z (a.u.)"), 1.0)
    softening: float | None = key(Spec("quantity", "length", **_SOFTENING, doc="softening a (bohr)"), None)


@dataclass(frozen=True)
class AtomConfig:
    """The model atom or molecular ion (``[atom]``).

    The fields are the keys every model has; the values of the chosen model's own
    parameters (declared by its potential class) are in ``parameters`` and read as
    attributes, e.g. ``atom.softening`` or ``atom.trap_frequency``.
    """

    model: str = key(Spec("choice", choices=_potential_names, doc="model potential"), "soft-core")
    ionization_potential: float | None = key(
        Spec("quantity", "energy", **_POSITIVE, doc="ionization potential to fit the softening to (Hartree)"), None
    )
    initial_state: tuple[int, ...] = key(
        Spec("int_list", minimum=0, strict=False, doc="index or indices of the initial state"), (0,)
    )
    initial_amplitudes: tuple[float, ...] | None = key(
        Spec("float_list", doc="amplitudes of a superposition initial state"), None
    )
    initial_phases: tuple[float, ...] | None = key(
        Spec("float_list", doc="phases (rad) of a superposition initial state"), None
    )
    bound_states: int | None = key(
        Spec("int", auto=True, minimum=1, strict=False, doc="number of bound states to compute"), None
    )
    #: (name, value) of each parameter the model declares, in atomic units
    parameters: tuple[tuple[str, object], ...] = ()
    centres: tuple[CentreConfig, ...] = ()

    def __getattr__(self, name):
        # only reached for names that are not fields: the model's own parameters
        if name.startswith("__"):
            raise AttributeError(name)
        for k, value in self.__dict__.get("parameters", ()):
            if k == name:
                return value
        raise AttributeError(f"the {self.__dict__.get('model', '?')} model has no parameter {name!r}")

    @property
    def fit_softening(self) -> bool:
        return self.ionization_potential is not None

    def with_softening(self, softening: float) -> "AtomConfig":
        """A copy with ``softening`` as the model's softening (and each centre's)."""
        params = tuple((k, softening if k == "softening" else v) for k, v in self.parameters)
        centres = tuple(dataclasses.replace(c, softening=softening) for c in self.centres)
        return dataclasses.replace(self, parameters=params, centres=centres)


def _refuse_other_models_keys(model: str, table: dict, path: str) -> None:
    """Refuse a key of the [atom] table that another model reads and ``model`` does not
    (e.g. ``trap_frequency`` with the soft-core model): it would be silently ignored."""
    from ..physics.potentials import model_keys

    keys = model_keys()
    own = set(keys.get(model, ()))
    for name in table:
        owners = [m for m, ks in keys.items() if name in ks and m != model]
        if owners and name not in own:
            mine = ", ".join(sorted(own)) or "none"
            raise InputError(
                f"belongs to the {' and '.join(owners)} model, not to atom.model = '{model}' "
                f"(whose own keys are: {mine})",
                _join(path, name),
            )


def _read_atom(table, path):
    from ..physics.potentials import POTENTIALS

    if not isinstance(table, dict):
        raise InputError(f"must be a table, got {type(table).__name__}", path)
    # the keys every model has first (the model among them), then the model's own
    parameter_names = {p.name for cls in POTENTIALS.values() for p in cls.parameters}
    common = {k: v for k, v in table.items() if k not in parameter_names}
    known = [f.name for f in dataclasses.fields(AtomConfig) if "spec" in f.metadata] + sorted(parameter_names)
    for name in table:
        if name not in known and name != "centre":
            near = difflib.get_close_matches(name, known + ["centre"], n=1)
            hint = f"; did you mean '{near[0]}'?" if near else f"; known keys: {', '.join(known + ['centre'])}"
            raise InputError(f"unknown key{hint}", _join(path, name))
    atom = _read_table(AtomConfig, common, path,
                       nested={"centre": ("centres", lambda t, p: _read_array(CentreConfig, t, p))})
    _refuse_other_models_keys(atom.model, table, path)
    cls = POTENTIALS[atom.model]
    values = tuple((p.name, _read_value(table[p.name], parameter_spec(p), _join(path, p.name))
                    if p.name in table else p.default) for p in cls.parameters)
    atom = dataclasses.replace(atom, parameters=values)
    if atom.fit_softening and not cls.fittable:
        raise InputError(f"the {atom.model} model has no softening to fit (it is not fittable): give its own "
                         "parameters instead", _join(path, "ionization_potential"))
    centres = atom.centres
    if cls.centres_table and centres:
        for name in ("softening", "charge"):
            if name in table:
                raise InputError(
                    f"give '{name}' in each [[atom.centre]] table when centres are listed", _join(path, name)
                )
        given = [c.softening is not None for c in centres]
        if atom.fit_softening and any(given):
            i = given.index(True)
            raise InputError(
                "give either the softening of each centre or atom.ionization_potential, not both",
                f"{path}.centre.{i}.softening",
            )
        if not atom.fit_softening and not all(given):
            i = given.index(False)
            raise InputError(
                "missing softening (or give atom.ionization_potential to fit it)", f"{path}.centre.{i}.softening"
            )
    elif cls.fittable:
        if (atom.softening is None) == (not atom.fit_softening):
            which = "both" if atom.fit_softening else "neither"
            raise InputError(
                f"give exactly one of 'softening' and 'ionization_potential' ({which} given)",
                _join(path, "softening"),
            )
    if cls.centres_table and not centres:
        centres = (CentreConfig(0.0, atom.charge, atom.softening),)
        atom = dataclasses.replace(atom, centres=centres)
    n = len(atom.initial_state)
    for name in ("initial_amplitudes", "initial_phases"):
        got = getattr(atom, name)
        if got is not None and len(got) != n:
            raise InputError(f"needs {n} entries, one per initial_state, got {len(got)}", _join(path, name))
    if atom.initial_amplitudes is not None and not any(a != 0 for a in atom.initial_amplitudes):
        raise InputError("at least one amplitude must be non-zero", _join(path, "initial_amplitudes"))
    if len(set(atom.initial_state)) != n:
        raise InputError("lists a state twice", _join(path, "initial_state"))
    return atom
