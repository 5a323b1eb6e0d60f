"""The one-dimensional two-electron atom: both electrons on the laser axis.

Each electron has its own coordinate on the axis, so the wavefunction lives on a 2-D
grid (x1, x2). The Hamiltonian, in Hartree atomic units, is

    H = p1^2/2 + p2^2/2 - Z / sqrt(x1^2 + a^2) - Z / sqrt(x2^2 + a^2)
        + 1 / sqrt((x1 - x2)^2 + b^2),

soft-core Coulomb attractions of softening a and a soft-core repulsion of softening
b (the model of Grobe and Eberly, Phys. Rev. Lett. 68, 2905 (1992), and of the
double-ionization studies that followed, e.g. Lein, Gross and Engel, Phys. Rev. Lett.
85, 4707 (2000); from memory). In a field both electrons couple, through the sum
x1 + x2 (length gauge) or p1 + p2 (velocity gauge).

H commutes with the exchange x1 <-> x2. The spin singlet has a symmetric spatial
wavefunction, the triplet an antisymmetric one; ``exchange_sign`` is +1 or -1.
The ion left after one electron has gone is the one-electron soft-core atom of
charge Z and softening a (:meth:`TwoElectronAtom.ion`), the same model as tdse1d's
``soft-core`` potential.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..registry import Parameter
from .potentials import Centre, Potential, SoftCore, _require, register_potential

__all__ = ["TwoElectronAtom", "SPIN_STATES"]

#: spin state -> sign of the spatial wavefunction under x1 <-> x2
SPIN_STATES = {"singlet": 1, "triplet": -1}


@register_potential("two-electron")
@dataclass(frozen=True)
class TwoElectronAtom(Potential):
    """Two electrons on one axis around a nucleus of charge Z (see the module docstring).

    Parameters
    ----------
    charge : float
        Nuclear charge Z (a.u.).
    softening : float
        Electron-nucleus softening a (bohr).
    repulsion_softening : float
        Electron-electron softening b (bohr).
    spin : {"singlet", "triplet"}
        Total spin; sets the exchange symmetry of the spatial wavefunction.
    """

    charge: float
    softening: float
    repulsion_softening: float
    spin: str = "singlet"
    #: number of coordinates of the wavefunction (one per electron)
    dimensions = 2
    # ranges outside which no grid represents the model: generous, not physical limits
    parameters = (
        Parameter("charge", "float", 2.0, "nuclear charge Z (a.u.)", minimum=0.0, maximum=100.0),
        Parameter("softening", "quantity", 1.0, "electron-nucleus softening a (bohr)", dimension="length",
                  minimum=1e-3, strict=False, maximum=1e3),
        Parameter("repulsion_softening", "quantity", 1.0, "electron-electron softening b (bohr)",
                  dimension="length", minimum=1e-3, strict=False, maximum=1e3),
        Parameter("spin", "choice", "singlet", "total spin: singlet (symmetric in x1, x2) or triplet "
                  "(antisymmetric)", choices=tuple(SPIN_STATES)),
    )

    def __post_init__(self):
        _require("charge", self.charge, positive=True, model="two-electron")
        _require("softening", self.softening, positive=True, model="two-electron")
        _require("repulsion_softening", self.repulsion_softening, positive=True, model="two-electron")
        if self.spin not in SPIN_STATES:
            raise ValueError(f"two-electron spin must be one of {', '.join(SPIN_STATES)}, got {self.spin!r}")

    @property
    def exchange_sign(self) -> int:
        """+1 for the singlet (symmetric spatial wavefunction), -1 for the triplet."""
        return SPIN_STATES[self.spin]

    def nuclear(self, x) -> np.ndarray:
        """Attraction of one electron to the nucleus, -Z / sqrt(x^2 + a^2) (Hartree)."""
        x = np.asarray(x, dtype=float)
        return -self.charge / np.sqrt(x**2 + self.softening**2)

    def repulsion(self, separation) -> np.ndarray:
        """Repulsion of the two electrons, 1 / sqrt((x1 - x2)^2 + b^2) (Hartree)."""
        d = np.asarray(separation, dtype=float)
        return 1.0 / np.sqrt(d**2 + self.repulsion_softening**2)

    def value(self, x1, x2=None) -> np.ndarray:
        """V(x1, x2) (Hartree) on broadcast coordinate arrays (bohr), e.g. ``x[:, None]``
        and ``x[None, :]`` for the whole 2-D grid."""
        if x2 is None:
            raise TypeError("the two-electron potential takes two coordinates, value(x1, x2)")
        x1 = np.asarray(x1, dtype=float)
        x2 = np.asarray(x2, dtype=float)
        return self.nuclear(x1) + self.nuclear(x2) + self.repulsion(x1 - x2)

    def gradient(self, x1, x2=None):
        """(dV/dx1, dV/dx2) (Hartree/bohr), analytic, on broadcast coordinate arrays."""
        if x2 is None:
            raise TypeError("the two-electron potential takes two coordinates, gradient(x1, x2)")
        x1 = np.asarray(x1, dtype=float)
        x2 = np.asarray(x2, dtype=float)
        a2, b2 = self.softening**2, self.repulsion_softening**2
        d = x1 - x2
        push = -d / (d**2 + b2) ** 1.5  # d/dx1 of the repulsion; d/dx2 is its negative
        return (self.charge * x1 / (x1**2 + a2) ** 1.5 + push, self.charge * x2 / (x2**2 + a2) ** 1.5 - push)

    def field_gradient(self, x1, x2) -> np.ndarray:
        """dV/dx1 + dV/dx2 (Hartree/bohr): the force along the field's coordinate x1 + x2,
        whose mean gives the total dipole acceleration (the repulsion cancels: internal)."""
        a2 = self.softening**2
        x1 = np.asarray(x1, dtype=float)
        x2 = np.asarray(x2, dtype=float)
        return self.charge * (x1 / (x1**2 + a2) ** 1.5 + x2 / (x2**2 + a2) ** 1.5)

    def ion(self) -> SoftCore:
        """The one-electron ion left behind: soft-core, charge Z, softening a."""
        return SoftCore((Centre(0.0, self.charge, self.softening),))

    def with_softening(self, softening):
        raise TypeError("the two-electron model's softenings are given, not fitted (it is not fittable)")

    @classmethod
    def from_config(cls, atom):
        return cls(atom.charge, atom.softening, atom.repulsion_softening, atom.spin)

    def describe(self):
        return (f"two-electron ({self.spin}): Z={self.charge:g}, a={self.softening:.10g} bohr, "
                f"b={self.repulsion_softening:.10g} bohr")
