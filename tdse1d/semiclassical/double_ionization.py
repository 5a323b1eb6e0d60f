"""The semiclassical side of double ionization: the sequential estimate and the
recollision threshold. Pure numerics in atomic units.

* **Sequential double ionization**: the two electrons leave one after the other, each
  by quasi-static tunnelling, independently: the atom (ionization potential Ip1 =
  E_ion - E_atom) at the rate G1(t), then the ion (Ip2 = -E_ion) at G2(t). The
  populations of the neutral atom, the singly and the doubly charged ion obey the
  rate equations

      dN0/dt = -G1 N0,   dN1/dt = G1 N0 - G2 N1,   dN2/dt = G2 N1,

  the chain of Bateman (Proc. Cambridge Phil. Soc. 15, 423 (1910), from memory), whose
  use for sequential multiple ionization in strong fields is common practice (e.g.
  the sequential curves laid beside measured helium yields by Walker et al., Phys.
  Rev. Lett. 73, 1227 (1994), from memory). The rates are those of
  :mod:`tdse1d.semiclassical.tunnelling` (WKB through the field-lowered barrier of the
  model's own 1-D potential): the ion's potential is the soft-core -Z/sqrt(x^2 + a^2)
  itself; the atom's outer electron sees the charge Z - 1 at large distance, and is
  given the soft-core potential of that charge whose ground state lies at -Ip1 (a
  single-active-electron picture; the softening is fitted on a fine 1-D grid).
* **The recollision threshold**: an electron returning to its parent ion carries at
  most 3.17 Up (Corkum, Phys. Rev. Lett. 71, 1994 (1993)); it can knock the second
  electron out directly, (e, 2e), only if that exceeds Ip2. The intensity where
  3.17 Up = Ip2 is the threshold of direct knock-out for a carrier w:
  Up = E0^2 / (4 w^2), so E0 = 2 w sqrt(Ip2 / 3.17).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..physics.grid import Grid
from ..physics.potentials import Centre, SoftCore
from ..physics.states import fit_softening
from .estimates import CUTOFF_UP
from .tunnelling import tunnelling_rates

__all__ = ["SequentialYields", "sequential_chain", "sequential_double_ionization", "outer_electron_potential",
           "maximum_return_energy", "knockout_threshold_field", "KneeEstimate", "knee_estimate"]

#: 1-D grid on which the outer electron's softening is fitted (bohr), the provisional
#: grid of the one-electron problem assembly: 0.1 bohr resolves a soft-core ground
#: state of charge 1 to far better than the WKB estimate needs, +-51 bohr holds it
_FIT_GRID = Grid(1024, 0.1)


@dataclass(frozen=True)
class SequentialYields:
    """Populations of the sequential rate equations through a pulse (dimensionless).

    Attributes
    ----------
    time : ndarray, shape (m,)
        Times (a.u.).
    neutral, single, double : ndarray, shape (m,)
        N0, N1, N2: the atom, the singly and the doubly charged ion.
    """

    time: np.ndarray
    neutral: np.ndarray
    single: np.ndarray
    double: np.ndarray

    @property
    def final(self) -> tuple[float, float, float]:
        """(N0, N1, N2) after the pulse."""
        return float(self.neutral[-1]), float(self.single[-1]), float(self.double[-1])

    @property
    def ratio(self) -> float:
        """Doubly over singly charged ions after the pulse, N2 / N1 (NaN if N1 = 0)."""
        n1, n2 = self.final[1], self.final[2]
        return n2 / n1 if n1 > 0 else math.nan


def _relaxation(x: np.ndarray) -> np.ndarray:
    """(1 - exp(-x)) / x, 1 at x = 0, for any sign of x."""
    x = np.asarray(x, dtype=float)
    small = np.abs(x) < 1e-8
    safe = np.where(small, 1.0, x)
    return np.where(small, 1.0 - 0.5 * x, -np.expm1(-safe) / safe)


def sequential_chain(time, first_rate, second_rate) -> SequentialYields:
    """Solve the rate equations of the module docstring for given rate histories.

    Each step holds the rates at their mean over the step and is solved exactly:
    N0 <- N0 e^(-g1 h); N1 <- N1 e^(-g2 h) + N0 g1 h e^(-g1 h) (1 - e^(-(g2-g1) h)) / ((g2-g1) h).
    N2 is accumulated as the trapezoid integral of G2 N1 (never as 1 - N0 - N1, which
    would lose a small double yield to round-off); N0 + N1 + N2 = 1 to the order h^2.

    Parameters
    ----------
    time : array_like, shape (m,)
        Strictly increasing times (a.u.).
    first_rate, second_rate : array_like, shape (m,)
        G1 and G2 at those times (1 / a.u. of time), >= 0.

    Returns
    -------
    SequentialYields
    """
    t = np.asarray(time, dtype=float)
    g1 = np.asarray(first_rate, dtype=float)
    g2 = np.asarray(second_rate, dtype=float)
    if t.ndim != 1 or t.size < 2 or g1.shape != t.shape or g2.shape != t.shape:
        raise ValueError(f"time and rates must be 1-D of one length >= 2, got {t.shape}, {g1.shape}, {g2.shape}")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(g1)) and np.all(np.isfinite(g2))):
        raise ValueError("time and rates must be finite")
    if np.any(g1 < 0) or np.any(g2 < 0):
        raise ValueError("rates must be >= 0")
    h = np.diff(t)
    if not np.all(h > 0):
        raise ValueError("time must be strictly increasing")
    a = 0.5 * (g1[1:] + g1[:-1]) * h  # g1 h of each step
    b = 0.5 * (g2[1:] + g2[:-1]) * h
    keep0, keep1 = np.exp(-a), np.exp(-b)
    feed = a * keep0 * _relaxation(b - a)  # share of N0 that arrives in N1 over the step
    n0 = np.exp(-np.concatenate([[0.0], np.cumsum(a)]))
    n1 = np.zeros_like(t)
    for i in range(h.size):  # a linear recurrence: cheap, even for 10^5 steps
        n1[i + 1] = n1[i] * keep1[i] + n0[i] * feed[i]
    n2 = np.concatenate([[0.0], np.cumsum(0.5 * (g2[1:] * n1[1:] + g2[:-1] * n1[:-1]) * h)])
    return SequentialYields(t, n0, n1, n2)


def outer_electron_potential(charge: float, atom_ip: float) -> SoftCore:
    """The 1-D potential of the atom's outer electron: soft-core of charge Z - 1 whose
    ground state lies at -Ip1 (module docstring).

    Raises
    ------
    ValueError
        If Z <= 1 (no long-range charge is left to bind the outer electron) or no
        softening gives Ip1.
    """
    if not charge > 1:
        raise ValueError(f"the sequential estimate needs a nuclear charge above 1 (an ion with a charge left for "
                         f"the outer electron), got Z = {charge}")
    if not atom_ip > 0:
        raise ValueError(f"the atom's ionization potential must be positive, got {atom_ip}")
    trial = SoftCore((Centre(0.0, charge - 1.0, 1.0),))
    return trial.with_softening(fit_softening(_FIT_GRID, trial, atom_ip))


def sequential_double_ionization(time, electric, charge: float, softening: float, atom_ip: float,
                                 ion_ip: float) -> SequentialYields:
    """The sequential estimate for a field history (module docstring).

    Parameters
    ----------
    time : array_like, shape (m,)
        Times (a.u.), strictly increasing.
    electric : array_like, shape (m,)
        Field E(t) (a.u.).
    charge : float
        Nuclear charge Z (a.u.).
    softening : float
        Electron-nucleus softening a (bohr): the ion's potential.
    atom_ip, ion_ip : float
        Ip1 = E_ion - E_atom and Ip2 = -E_ion (Hartree).

    Returns
    -------
    SequentialYields
    """
    ion = SoftCore((Centre(0.0, charge, softening),))
    first = tunnelling_rates(electric, outer_electron_potential(charge, atom_ip), -atom_ip)
    second = tunnelling_rates(electric, ion, -ion_ip)
    return sequential_chain(time, first, second)


def maximum_return_energy(ponderomotive_energy: float) -> float:
    """Largest kinetic energy of a returning electron, 3.17 Up (Hartree; Corkum 1993)."""
    if not ponderomotive_energy >= 0:
        raise ValueError(f"Up must be >= 0, got {ponderomotive_energy}")
    return CUTOFF_UP * ponderomotive_energy


def knockout_threshold_field(omega: float, ion_ip: float) -> float:
    """Peak field (a.u.) at which 3.17 Up reaches the ion's Ip2: E0 = 2 w sqrt(Ip2 / 3.17)."""
    if not (omega > 0 and ion_ip > 0):
        raise ValueError(f"omega and the ion's Ip must be positive, got {omega}, {ion_ip}")
    return 2.0 * omega * math.sqrt(ion_ip / CUTOFF_UP)


@dataclass(frozen=True)
class KneeEstimate:
    """The numbers of the recollision picture for one pulse (atomic units).

    Attributes
    ----------
    atom_ip, ion_ip : float
        Ip1 and Ip2 (Hartree).
    ponderomotive_energy, return_energy : float
        Up and 3.17 Up (Hartree).
    knockout_field : float
        Peak field where 3.17 Up = Ip2 (a.u.).
    direct_knockout : bool
        3.17 Up >= Ip2: the returning electron can knock the second one out directly.
    """

    atom_ip: float
    ion_ip: float
    ponderomotive_energy: float
    return_energy: float
    knockout_field: float
    direct_knockout: bool


def knee_estimate(omega: float, peak_field: float, atom_ip: float, ion_ip: float) -> KneeEstimate:
    """Up, 3.17 Up against Ip2, and the knock-out threshold field, for one pulse."""
    if not (peak_field >= 0 and atom_ip > 0):
        raise ValueError(f"peak field must be >= 0 and Ip1 positive, got {peak_field}, {atom_ip}")
    up = peak_field**2 / (4.0 * omega**2) if omega > 0 else math.nan
    ret = maximum_return_energy(up)
    return KneeEstimate(atom_ip, ion_ip, up, ret, knockout_threshold_field(omega, ion_ip), bool(ret >= ion_ip))
