"""Assemble the two-electron atom of an input (``[atom] model = "two-electron"``).

The wavefunction of the two-electron atom lives on a square 2-D grid: ``[grid] points``
and ``spacing`` are those of each axis (both axes alike, as the exchange symmetry
needs). Their automatic values follow the one-electron rules of
:mod:`tdse1d.semiclassical.estimates` with limits suited to a grid of points^2:

* spacing: min(:data:`PAIR_MAX_SPACING`, pi / p) with p = 6 sqrt(Up) the largest kinetic
  momentum of a backscattered electron in the pulse (the one-electron rule, without its
  1.5 margin: the cost of the 2-D grid goes as 1/dx^2, and what reaches the edge of
  momentum space is absorbed at the edges of the box first). At 0.4 bohr the ground
  state of the standard helium model (Z = 2, a = b = 1) is within 2e-6 Hartree of its
  converged value (measured against spacings down to 0.1 bohr; the test suite checks
  1e-3 against an independent finite-difference solution);
* box: inner half-width max(2 alpha, :data:`PAIR_MIN_INNER`) with alpha = E0/w^2 the
  quiver amplitude (2 alpha is the farthest a returning electron goes), plus an
  absorber of max(:data:`PAIR_MIN_ABSORBER`, inner/4) on each side;
* time step: :data:`PAIR_TIME_STEP` (the one-electron rule's largest step; its
  convergence for this model is measured in validation/, not assumed); field-free time
  after the pulses as for one electron (2 cycles).

The ionization potentials are those of the atom, E_ion - E_atom, and of the ion,
-E_ion, with E_ion the ground state of the one-electron ion (soft-core, charge Z,
softening a) on one axis of the same grid.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from .schema import RunConfig
from .spec import InputError
from ..physics.grid import Grid, fast_fft_size
from ..physics.potentials import POTENTIALS
from ..physics.states import BoundStates, bound_states
from ..physics.two_electron import TwoElectronAtom

if TYPE_CHECKING:  # imported where the states are found (scipy.fft, scipy.sparse)
    from ..physics.states_2d import PairStates

__all__ = ["PairProblem", "build_pair_problem", "pair_state_count", "check_pair_absorber", "is_pair_model", "PAIR_MAX_SPACING", "PAIR_MAX_POINTS"]

#: coarsest automatic spacing (bohr): the ground state within 2e-6 Hartree (see above)
PAIR_MAX_SPACING = 0.4
#: smallest inner half-width of the automatic box (bohr): the bound states and a margin
PAIR_MIN_INNER = 40.0
#: narrowest automatic absorber (bohr)
PAIR_MIN_ABSORBER = 20.0
#: most points per axis (4096^2 complex numbers are 256 MiB per wavefunction)
PAIR_MAX_POINTS = 4096
#: states of the atom computed when atom.bound_states is auto
PAIR_DEFAULT_STATES = 3
#: automatic time step (a.u.)
PAIR_TIME_STEP = 0.05


def is_pair_model(config: RunConfig) -> bool:
    """Whether the input's model is a two-electron atom (a 2-D wavefunction)."""
    return getattr(POTENTIALS[config.atom.model], "dimensions", 1) == 2


@dataclass(frozen=True)
class PairProblem:
    """The two-electron atom of an input on its grid, with its states and its ion's.

    Attributes
    ----------
    config : RunConfig
    grid : Grid
        The grid of each axis (bohr); the wavefunction's grid is grid x grid.
    atom : TwoElectronAtom
    states : PairStates or None
        The lowest states of the atom, of its spin (Hartree); None for an estimate.
    ion_states : BoundStates or None
        Every bound state of the one-electron ion on one axis of the grid (Hartree).
    field : Field
    time : TimeAxis
        The run's steps (a.u.).
    absorber_width : float
        Width of the absorbing layer on each edge of each axis (bohr).
    warnings : tuple of str
    """

    config: RunConfig
    grid: Grid
    atom: TwoElectronAtom
    states: PairStates
    ion_states: BoundStates
    field: object = None
    time: object = None
    absorber_width: float = 0.0
    warnings: tuple[str, ...] = ()

    @property
    def potential(self) -> TwoElectronAtom:
        """The model (the name the one-electron problem uses)."""
        return self.atom

    @property
    def ion_energy(self) -> float:
        """Ground-state energy of the one-electron ion (Hartree)."""
        return float(self.ion_states.energies[0])

    @property
    def ionization_potential(self) -> float:
        """Ip of the atom from its initial state, E_ion - E_atom (Hartree)."""
        return self.ion_energy - float(self.states.energies[min(self.config.atom.initial_state)])

    @property
    def ion_ionization_potential(self) -> float:
        """Ip of the ion, -E_ion (Hartree)."""
        return -self.ion_energy

    @property
    def bound(self) -> np.ndarray:
        """Which of the atom's states lie below the ion's ground state (truly bound)."""
        return np.asarray(self.states.energies) < self.ion_energy


def _inner_half_width(field) -> float:
    alpha = max((p.peak_field / p.omega**2 for p in field.pulses), default=0.0)
    return max(2 * alpha, PAIR_MIN_INNER)


def _pair_grid(config: RunConfig, field) -> Grid:
    """The grid of each axis: the input's, or the automatic rule of the module docstring."""
    up = max((p.peak_field**2 / (4 * p.omega**2) for p in field.pulses), default=0.0)
    spacing = config.grid.spacing
    if spacing is None:
        spacing = PAIR_MAX_SPACING if up == 0 else min(PAIR_MAX_SPACING, math.pi / (6 * math.sqrt(up)))
    points = config.grid.points
    if points is None:
        inner = _inner_half_width(field)
        half_width = inner + max(PAIR_MIN_ABSORBER, inner / 4)
        points = fast_fft_size(int(math.ceil(2 * half_width / spacing)))
    if points > PAIR_MAX_POINTS:
        raise InputError(f"the two-electron atom's grid has points^2 points: at most {PAIR_MAX_POINTS} per axis, "
                         f"got {points} (the box asked for is +-{points * spacing / 2:.4g} bohr at a spacing of "
                         f"{spacing:.3g} bohr)", "grid.points", config.source)
    if points % 2:
        raise InputError(f"must be even for the Fourier grid, got {points}", "grid.points", config.source)
    return Grid(points, spacing)


def pair_state_count(config: RunConfig, with_states: bool = True) -> int:
    """States of the atom a problem computes: ``atom.bound_states`` (or
    :data:`PAIR_DEFAULT_STATES`), at least up to the initial state; with
    ``with_states=False`` only up to the initial state."""
    top = max(config.atom.initial_state)
    count = config.atom.bound_states if config.atom.bound_states is not None else PAIR_DEFAULT_STATES
    return max(count if with_states else 1, top + 1)


def build_pair_problem(config: RunConfig, with_states: bool = True, compute_states: bool = True) -> PairProblem:
    """Resolve an input of the two-electron model into a :class:`PairProblem`.

    Parameters
    ----------
    config : RunConfig
        With ``atom.model = "two-electron"``.
    with_states : bool
        Compute ``atom.bound_states`` states (or :data:`PAIR_DEFAULT_STATES`);
        otherwise only up to the initial state.
    compute_states : bool
        False: compute no states at all (``states`` and ``ion_states`` are None), for
        an estimate of the run's grid, steps and resources.

    Raises
    ------
    InputError
        For a grid the model cannot use, or an initial state not found.
    """
    from .problem import AFTER_PULSE_CYCLES, FIELD_FREE_DURATION, TimeAxis, build_field

    if not is_pair_model(config):
        raise InputError("is not a two-electron model", "atom.model", config.source)
    atom = POTENTIALS[config.atom.model].from_config(config.atom)
    field = build_field(config)
    grid = _pair_grid(config, field)
    top = max(config.atom.initial_state)
    notes = []
    states = ion_states = None
    if compute_states:
        from ..physics.states_2d import pair_states  # scipy.fft and scipy.sparse: not for one-electron inputs

        states = pair_states(grid, atom, count=pair_state_count(config, with_states))
        ion_states = bound_states(grid, atom.ion())
    if states is not None and not states.converged:
        notes.append(f"the two-electron states did not converge: residuals up to {np.max(states.residuals):.2g} "
                     "Hartree")
    if states is not None and top > 0 and not states.energies[top] < ion_states.energies[0]:
        notes.append(f"the initial state {top} lies above the ion's ground state: it is not bound")
    prop = config.propagation
    dt = prop.time_step if prop.time_step is not None else PAIR_TIME_STEP
    if prop.after_pulse is not None:
        after = prop.after_pulse
    else:
        after = AFTER_PULSE_CYCLES * 2 * math.pi / field.omega if field.pulses else FIELD_FREE_DURATION
    start, end = field.start, field.end + after
    time = TimeAxis(start, end, max(1, int(math.ceil((end - start) / dt - 1e-9))))
    width = config.absorber.width
    if width is None:
        width = max(PAIR_MIN_ABSORBER, _inner_half_width(field) / 4)
    return PairProblem(config, grid, atom, states, ion_states, field, time, width, tuple(notes))


#: smallest unabsorbed half-width (bohr) a run may leave: the bound states (the
#: neutral's outer electron decays as exp(-sqrt(2 Ip1) |x|), 1e-9 of its density beyond
#: 8 bohr in the standard model) and the regions' radii (pair_regions.RADII, up to 15)
PAIR_MIN_UNABSORBED = 16.0


def check_pair_absorber(problem: PairProblem) -> None:
    """Refuse, before a run (the states are found on any box), absorbing layers that
    leave less than :data:`PAIR_MIN_UNABSORBED` bohr unabsorbed on each side.

    Raises
    ------
    InputError
        Naming ``absorber.width``.
    """
    config = problem.config
    if config.absorber.type == "none":
        return
    inner = problem.grid.half_width - problem.absorber_width
    if inner < PAIR_MIN_UNABSORBED:
        given = "" if config.absorber.width is not None else " (the automatic width)"
        raise InputError(f"absorbing layers of {problem.absorber_width:.4g} bohr{given} leave +-{inner:.4g} bohr "
                         f"unabsorbed in a box of +-{problem.grid.half_width:.4g} bohr, less than the "
                         f"{PAIR_MIN_UNABSORBED:g} bohr the atom and the regions of its readings need: narrow the "
                         "absorber or enlarge the grid (grid.points)", "absorber.width", config.source)
