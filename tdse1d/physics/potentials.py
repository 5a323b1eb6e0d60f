"""Model potentials for the single active electron.

Each potential is a small class registered in :data:`POTENTIALS` under the name used by
the input key ``atom.model``. Adding one is adding one class.

Contract for an implementer of :class:`Potential`:

* ``value(x)`` returns V(x) in Hartree for an array of positions in bohr;
* ``gradient(x)`` returns dV/dx analytically (the propagator uses it for the
  Ehrenfest dipole acceleration, so it must not be a finite difference);
* ``from_config(atom)`` builds the potential from the validated ``[atom]`` table;
* ``with_softening(a)`` returns a copy with a new softening, for potentials whose
  softening may be fitted to an ionization potential (others raise ``TypeError``);
* ``input_keys`` names the keys of the ``[atom]`` table the model reads (besides the
  keys every model has): the input reader refuses the keys of another model;
* the constructor refuses parameters outside the model's domain (a non-positive
  softening, width or frequency, a non-finite number) with a ``ValueError`` naming
  the parameter.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from ..registry import registrar

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
    """Model name -> the ``[atom]`` keys that only that model reads."""
    return {name: tuple(cls.input_keys) for name, cls in POTENTIALS.items()}


class Potential:
    """Base class of model potentials (see the module docstring for the contract)."""

    name = "?"
    fittable = False
    #: keys of the [atom] table this model reads, beyond those every model has
    input_keys: tuple[str, ...] = ()

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
    input_keys = ("charge", "softening", "ionization_potential", "centre")

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
    input_keys = ("depth_parameter",)

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
    input_keys = ("trap_frequency",)

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
