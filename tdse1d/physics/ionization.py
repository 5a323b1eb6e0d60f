"""The ionization probability: one definition, and the bound population the box cannot hold.

Definition (docs/analysis.md, "Ionization probability"): P_ion = 1 - P_bound, with
P_bound the population of every bound state (E < 0) of the field-free atom once the
field is over. On a finite grid with an absorber P_bound has three parts:

* ``held``: grid eigenstates with E < 0 whose weight in the absorbing layers is below
  :data:`HOLD_WEIGHT`. The absorber does not touch them, their energies are those of
  the unbounded atom, and their populations are constant once the field is off.
* ``edge``: grid eigenstates with E < 0 that reach into the layers (the box distorts
  them and the absorber slowly empties them). They stand for the Rydberg states the
  box cannot hold; their population is read at the end of the field, before the
  slow Rydberg electrons reach the absorber in the field-free time.
* ``beyond``: Rydberg states above the grid's highest level, which the grid does not
  have at all, from the Rydberg scaling of the populations (below).

Rydberg scaling: with a Coulomb tail -Z/|x| each parity has a Rydberg series
E_n = -Z^2 / (2 nu_n^2), nu_n = n - mu (quantum defect mu; for the 1-D Coulomb problem
see Loudon, Am. J. Phys. 27, 649 (1959), from memory). A state's amplitude in the core
scales as nu^(-3/2), so an excitation from the core populates it as p_n = D Z^2 nu_n^-3,
where D = p_n / |dE_n/dn| is the population per unit energy, smooth across threshold
(quantum-defect theory: Seaton, Rep. Prog. Phys. 46, 167 (1983), from memory). The
states above nu_top hold D Z^2 zeta(3, nu_top + 1) (Hurwitz zeta) per parity.

The result carries a band covering the estimate's error:

* ``beyond`` with the smallest and the largest D of the highest held states of each
  parity;
* ``edge``: the absorber empties the states the box cannot hold. Their population
  falls at a rate Gamma measured between the end of the field and the end of the run;
  had they lost population at that rate since the field began, they would have held
  edge x exp(Gamma x field duration) at the end of the field. The band reaches down
  to that (a box that holds the Rydberg states has Gamma ~ 0 and a narrow band).
  Upwards, the band leaves out the edge states above the potential at the box's
  edge, E > -Z/L: classically they are not confined by the atom but spread over the
  whole periodic box, the box's stand-in for continuum electrons of near-zero energy
  as much as for Rydberg states; and the population the absorber took from the
  others by the end of the run.

A run whose box cannot hold the bound dynamics during the pulse (Rydberg orbits plus
the quiver excursion reaching the absorber) loses bound population that no count
after the pulse recovers: its band is wide, and ``converged`` is False when the band
is wider than +-:data:`CONVERGED_RELATIVE` of P_ion. (``complete``, whether the finder
found every grid state, is reported on its own.) docs/analysis.md shows the shipped
argon case on four boxes.

This module does no I/O.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.special import zeta

__all__ = ["IonizationEstimate", "ionization", "HOLD_WEIGHT", "SCALING_STATES", "CONVERGED_RELATIVE"]

#: largest weight of a state in the absorbing layers for the box to hold it (a state
#: losing less than 1e-3 of itself there is untouched by the absorber to that accuracy)
HOLD_WEIGHT = 1e-3
#: highest held states of each parity whose populations give the density D
SCALING_STATES = 3
#: half-width of the band, relative to P_ion, within which P_ion is called converged
#: (the 2 % to which boxes of different sizes must agree)
CONVERGED_RELATIVE = 0.02


@dataclass(frozen=True)
class IonizationEstimate:
    """The ionization probability and its pieces (all probabilities, dimensionless).

    Attributes
    ----------
    probability : float
        P_ion = 1 - held - edge - beyond.
    lower, upper : float
        Band of P_ion covering the estimate's error (see the module docstring).
    held : float
        Population of the bound states the box holds.
    edge : float
        Population of the grid's E < 0 states that reach into the absorber, at the
        end of the field.
    beyond : float
        Estimated population of Rydberg states above the grid's highest level.
    unheld : float
        edge + beyond: the population in bound states the box cannot hold.
    time : float
        When the populations were read (a.u.): the first record at or after the
        end of the field.
    states_found, states_held : int
        Bound states on the grid, and how many of them the box holds.
    complete : bool
        The bound-state finder looked for every state with E < 0 and each converged.
    top_held_energy : float
        Energy of the highest held state (Hartree).
    edge_loss_rate : float
        Gamma, the rate at which the absorber empties the edge states after the
        field (1 / a.u. of time).
    converged : bool
        The band is no wider than +-CONVERGED_RELATIVE x P_ion.
    """

    probability: float
    lower: float
    upper: float
    held: float
    edge: float
    beyond: float
    unheld: float
    time: float
    states_found: int
    states_held: int
    complete: bool
    top_held_energy: float
    edge_loss_rate: float
    converged: bool


def _parity(wavefunctions: np.ndarray) -> np.ndarray:
    """+1 / -1 for states even / odd about the grid's centre, 0 for neither (|overlap| < 0.9)."""
    mirrored = np.roll(wavefunctions[:, ::-1], 1, axis=1)  # x_j -> -x_j on the centred grid
    overlap = np.sum(wavefunctions * mirrored, axis=1) / np.sum(wavefunctions**2, axis=1)
    return np.where(np.abs(overlap) > 0.9, np.sign(overlap), 0.0)


def _rydberg_tail(energies, populations, parity, top_energies, charge):
    """Population above ``top_energies[parity]`` from the density D of the highest levels.

    Returns (mean, smallest, largest) estimate over the D of the scaling states.
    """
    total = np.zeros(3)
    for sign in np.unique(parity):
        mine = np.nonzero(parity == sign)[0][-SCALING_STATES:]
        if mine.size == 0:
            continue
        nu = charge / np.sqrt(-2.0 * energies[mine])
        nu_top = charge / np.sqrt(-2.0 * top_energies[sign])
        if sign != 0:
            density = populations[mine] * nu**3 / charge**2
            tail = charge**2 * zeta(3.0, nu_top + 1.0)
        else:
            # no parity (an asymmetric potential): both series at once, two levels per
            # unit of nu, p = D Z^2 / (2 nu^3), and sum_k (nu_top + k/2)^-3 = 8 zeta(3, 2 nu_top + 1)
            density = 2.0 * populations[mine] * nu**3 / charge**2
            tail = 0.5 * charge**2 * 8.0 * zeta(3.0, 2.0 * nu_top + 1.0)
        total += tail * np.array([density.mean(), density.min(), density.max()])
    return total


def ionization(energies, wavefunctions, grid, absorber_width, population_time, bound_population,
               field_start, field_end, complete=True, charge=1.0) -> IonizationEstimate:
    """Ionization probability from the bound-state populations of a run.

    Parameters
    ----------
    energies : ndarray, shape (M,)
        All grid eigenstates with E < 0 (Hartree), ascending.
    wavefunctions : ndarray, shape (M, N)
        Their wavefunctions on ``grid`` (bohr^-1/2).
    grid : Grid
    absorber_width : float
        Width of each absorbing layer (bohr); 0 for no absorber.
    population_time : ndarray, shape (P,)
        Times of the population records (a.u.), ascending.
    bound_population : ndarray, shape (P, M)
        |<phi_m|psi(t)>|^2 at those times.
    field_start, field_end : float
        When the field begins and when it is over (a.u.).
    complete : bool
        Whether ``energies`` are all the grid's states with E < 0, converged.
    charge : float
        Charge Z of the Coulomb tail -Z/|x| that sets the Rydberg series (a.u.).

    Returns
    -------
    IonizationEstimate
    """
    energies = np.asarray(energies, dtype=float)
    populations_all = np.asarray(bound_population, dtype=float)
    bound = energies < 0
    if not bound.any():  # a confining trap: its listed levels are all there is to count
        bound = np.ones(energies.size, dtype=bool)
        charge = 0.0
    after = np.nonzero(np.asarray(population_time) >= field_end - 1e-9)[0]
    row = after[0] if after.size else len(population_time) - 1
    at_end_of_field = populations_all[row, bound]
    at_end_of_run = populations_all[-1, bound]
    e = energies[bound]
    phi = np.asarray(wavefunctions)[bound]
    # the layers, or for no absorber the outer tenth of the box, where the box distorts states
    layer = absorber_width if absorber_width > 0 else 0.1 * grid.half_width
    outside = np.abs(grid.x) > grid.half_width - layer
    weight = np.sum(phi[:, outside] ** 2, axis=1) * grid.spacing
    reaches = np.nonzero(weight > HOLD_WEIGHT)[0]
    n_held = int(reaches[0]) if reaches.size else e.size  # held: the levels below the first that reaches
    held = float(at_end_of_field[:n_held].sum())
    edge = float(at_end_of_field[n_held:].sum())
    edge_late = float(at_end_of_run[n_held:].sum())
    confined = e[n_held:] < -charge / grid.half_width
    edge_confined = float(np.minimum(at_end_of_field[n_held:], at_end_of_run[n_held:])[confined].sum())
    parity = _parity(phi)
    beyond = np.zeros(3)
    if n_held and e.size and charge > 0:
        top = {}
        for sign in np.unique(parity):
            mine = np.nonzero(parity == sign)[0]
            if mine.size:
                top[sign] = e[mine[-1]]  # highest grid level of this parity
        held_idx = np.arange(n_held)
        beyond = _rydberg_tail(e[held_idx], at_end_of_field[held_idx], parity[held_idx], top, charge)
    p_bound = held + edge + beyond[0]
    t = np.asarray(population_time, dtype=float)
    rate = 0.0
    if edge > 0 and edge_late > 0 and t[-1] > t[row]:
        rate = max(0.0, float(np.log(edge / edge_late)) / (t[-1] - t[row]))
    # exp() capped where the edge would exceed all the population not held
    edge_most = min(edge * float(np.exp(min(rate * max(field_end - field_start, 0.0), 700.0))),
                    max(1.0 - held - beyond[2], edge))
    lower = max(0.0, 1.0 - held - edge_most - beyond[2])
    upper = 1.0 - held - edge_confined - beyond[1]
    probability = 1.0 - p_bound
    converged = (upper - lower) <= 2 * CONVERGED_RELATIVE * abs(probability)
    return IonizationEstimate(
        probability=float(probability),
        lower=float(lower),
        upper=float(upper),
        held=held,
        edge=edge,
        beyond=float(beyond[0]),
        unheld=float(edge + beyond[0]),
        time=float(population_time[row]),
        states_found=int(e.size),
        states_held=n_held,
        complete=bool(complete),
        top_held_energy=float(e[n_held - 1]) if n_held else float("nan"),
        edge_loss_rate=rate,
        converged=converged,
    )
