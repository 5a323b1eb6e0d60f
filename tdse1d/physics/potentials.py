"""Model potentials for the single active electron.

Each potential is a small class registered in :data:`POTENTIALS` under the name used by
the input key ``atom.model``. Adding one is adding one class.

Contract for an implementer of :class:`Potential`:

* ``value(x)`` returns V(x) in Hartree for an array of positions in bohr;
* ``gradient(x)`` returns dV/dx analytically (the propagator uses it for the
  Ehrenfest dipole acceleration, so it must not be a finite difference);
* ``parameters`` declares the keys of the ``[atom]`` table the model owns (besides
  the keys every model has), each a :class:`tdse1d.registry.Parameter` with its kind,
  unit, range, default and doc: the input reader checks them, refuses the keys of
  another model naming that model, and gives ``from_config`` their values as
  attributes of the ``atom`` it is passed;
* ``from_config(atom)`` builds the potential from the validated ``[atom]`` table;
* ``fittable = True`` (with a ``softening`` parameter and ``with_softening(a)``
  returning a copy with a new softening) lets the input give
  ``atom.ionization_potential`` instead of the softening; for a model that is not
  fittable the input reader and the problem assembly refuse the fit naming the model;
* ``centres = True`` makes the model read the ``[[atom.centre]]`` tables (several
  soft-core centres of a molecular ion);
* the constructor refuses parameters outside the model's domain (a non-positive
  softening, width or frequency, a non-finite number) with a ``ValueError`` naming
  the parameter.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from ..registry import Parameter, registrar

__all__ = [
    "Potential",
    "SoftCore",
    "PoschlTeller",
    "HarmonicOscillator",
    "POTENTIALS",
    "register_potential",
    "model_keys",
]

POTENTIALS: dict[str, type["Potential"]] = {}


register_potential = registrar(POTENTIALS)


def _require(name: str, value, positive: bool = False, model: str = "") -> None:
    """Refuse a non-finite (or, with ``positive``, non-positive) model parameter."""
    where = f"{model} " if model else ""
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{where}{name} must be a number, got {value!r}") from None
    if not math.isfinite(number):
        raise ValueError(f"{where}{name} must be finite, got {value!r}")
    if positive and not number > 0:
        raise ValueError(f"{where}{name} must be positive, got {value!r}")


def model_keys() -> dict[str, tuple[str, ...]]:
    """Model name -> the ``[atom]`` keys that only that model reads (its parameters,
    ``ionization_potential`` if its softening is fittable, ``centre`` if it has centres)."""
    return {name: cls.own_keys() for name, cls in POTENTIALS.items()}


class Potential:
    """Base class of model potentials (see the module docstring for the contract)."""

    name = "?"
    #: whether the softening may be fitted to atom.ionization_potential
    fittable = False
    #: whether the model reads [[atom.centre]] tables
    centres_table = False
    #: keys of the [atom] table this model owns, beyond those every model has
    parameters: tuple[Parameter, ...] = ()

    @classmethod
    def own_keys(cls) -> tuple[str, ...]:
        """The ``[atom]`` keys this model reads and other models do not."""
        keys = tuple(p.name for p in cls.parameters)
        if cls.fittable:
            keys += ("ionization_potential",)
        if cls.centres_table:
            keys += ("centre",)
        return keys

    def value(self, x: np.ndarray) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError

    def gradient(self, x: np.ndarray) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError

    def with_softening(self, softening: float) -> "Potential":
        raise TypeError(f"the {self.name} potential has no softening to fit")

    @classmethod
    def from_config(cls, atom) -> "Potential":  # pragma: no cover - abstract
        raise NotImplementedError

    def describe(self) -> str:
        """One line saying what the potential is."""
        return self.name


@dataclass(frozen=True)
class Centre:
    """One soft-core centre: position (bohr), charge Z (a.u.) and softening a (bohr)."""

    position: float
    charge: float
    softening: float

    def __post_init__(self):
        _require("position", self.position, model="soft-core centre")
        _require("charge", self.charge, model="soft-core centre")
        _require("softening", self.softening, positive=True, model="soft-core centre")


@register_potential("soft-core")
@dataclass(frozen=True)
class SoftCore(Potential):
    """Sum of soft-core Coulomb centres, V(x) = -sum_c Z_c / sqrt((x - x_c)^2 + a_c^2).

    The soft-core model atom of Javanainen, Eberly and Su, Phys. Rev. A 38, 3430 (1988);
    several centres make a one-dimensional molecular ion.
    """

    centres: tuple[Centre, ...]
    fittable = True
    centres_table = True
    # ranges outside which no grid represents the model (the numbers overflow or the
    # core is far below any spacing): generous, not physical limits
    parameters = (
        Parameter("charge", "float", 1.0, "nuclear charge Z (a.u.)", minimum=0.0, maximum=100.0),
        Parameter("softening", "quantity", None, "softening a (bohr)", dimension="length",
                  minimum=1e-3, strict=False, maximum=1e3),
    )

    def __post_init__(self):
        if not self.centres or not all(isinstance(c, Centre) for c in self.centres):
            raise ValueError(f"soft-core centres must be a non-empty tuple of Centre, got {self.centres!r}")

    def value(self, x):
        x = np.asarray(x, dtype=float)
        v = np.zeros_like(x)
        for c in self.centres:
            v -= c.charge / np.sqrt((x - c.position) ** 2 + c.softening**2)
        return v

    def gradient(self, x):
        x = np.asarray(x, dtype=float)
        g = np.zeros_like(x)
        for c in self.centres:
            d = x - c.position
            g += c.charge * d / (d**2 + c.softening**2) ** 1.5
        return g

    @property
    def total_charge(self) -> float:
        return float(sum(c.charge for c in self.centres))

    def with_softening(self, softening):
        return replace(self, centres=tuple(replace(c, softening=softening) for c in self.centres))

    @classmethod
    def from_config(cls, atom):
        return cls(tuple(Centre(c.position, c.charge, c.softening) for c in atom.centres))

    def describe(self):
        parts = [f"Z={c.charge:g} at x={c.position:g}, a={c.softening:.10g}" for c in self.centres]
        return "soft-core: " + "; ".join(parts)


@register_potential("poschl-teller")
@dataclass(frozen=True)
class PoschlTeller(Potential):
    """Poschl-Teller well V(x) = -l(l+1)/2 sech^2(x), exactly solvable.

    Bound levels E_n = -(l - n)^2 / 2 for n < l (Poschl and Teller, Z. Phys. 83, 143
    (1933); e.g. Fluegge, Practical Quantum Mechanics, problem 39). For validation.
    """

    depth_parameter: float
    parameters = (Parameter("depth_parameter", "float", 2.0, "Poschl-Teller l (dimensionless)", minimum=0.0),)

    def __post_init__(self):
        _require("depth_parameter", self.depth_parameter, positive=True, model="Poschl-Teller")

    def value(self, x):
        lam = self.depth_parameter
        return -0.5 * lam * (lam + 1) / np.cosh(np.asarray(x, dtype=float)) ** 2

    def gradient(self, x):
        lam = self.depth_parameter
        x = np.asarray(x, dtype=float)
        return lam * (lam + 1) * np.tanh(x) / np.cosh(x) ** 2

    def exact_levels(self) -> np.ndarray:
        n = np.arange(int(np.ceil(self.depth_parameter)))
        return -0.5 * (self.depth_parameter - n) ** 2

    @classmethod
    def from_config(cls, atom):
        return cls(atom.depth_parameter)

    def describe(self):
        return f"Poschl-Teller, l={self.depth_parameter:g}"


@register_potential("harmonic")
@dataclass(frozen=True)
class HarmonicOscillator(Potential):
    """Harmonic oscillator V(x) = w^2 x^2 / 2, levels (n + 1/2) w. For validation."""

    frequency: float
    parameters = (Parameter("trap_frequency", "float", 1.0, "harmonic-oscillator frequency w (a.u.)", minimum=0.0),)

    def __post_init__(self):
        _require("frequency", self.frequency, positive=True, model="harmonic oscillator")

    def value(self, x):
        return 0.5 * self.frequency**2 * np.asarray(x, dtype=float) ** 2

    def gradient(self, x):
        return self.frequency**2 * np.asarray(x, dtype=float)

    @classmethod
    def from_config(cls, atom):
        return cls(atom.trap_frequency)

    def describe(self):
        return f"harmonic oscillator, w={self.frequency:g}"


# the two-electron atom lives in its own module; importing it here registers it with
# every other model, before any input is read
from . import two_electron  # noqa: E402,F401
