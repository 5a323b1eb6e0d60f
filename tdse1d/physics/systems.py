"""Systems the split-operator propagator moves: what it needs to know about the physics.

The propagator (:mod:`tdse1d.physics.propagation`) knows nothing of electrons or
dimensions. It asks a :class:`System` for the field-free potential on the grid, the
coordinate that couples to the laser field and its momentum counterpart, the
absorber factor, the state whose population it records, and the per-step observables
the system adds. One electron on a line is :class:`OneElectron`; two electrons on a
line, each on its own axis of a 2-D grid, is a subclass that builds its arrays and
registers itself with :func:`register_system`, and needs no copy of the propagator.

Coupling to the field (dipole approximation, electron charge -1, E = -dA/dt). A
system gives one weight w_a per grid axis; the coupling coordinate is
X = sum_a w_a x_a and its momentum counterpart K = sum_a w_a k_a:

* length gauge: V(t) = V + E(t) X  (one electron: x E; two electrons: (x1 + x2) E);
* velocity gauge: T(t) = sum_a (k_a + w_a A(t))^2 / 2, A^2 term included, so that
  psi_L = exp(i A X) psi_V exactly.

Because X is linear in the coordinates, exp(-i theta X) is a product of one short
factor per axis: the propagator never takes an ``exp`` of a whole grid inside its loop.
The Ehrenfest theorem for P = sum_a w_a p_a reads dP/dt = -<F> - (sum_a w_a^2) E N
with F = sum_a w_a dV/dx_a the derivative of V along the coupling (the ``force``
array); that is the recorded acceleration.
"""

from __future__ import annotations

import numpy as np

from .grid import Grid
from .observables import PerStepObservable
from ..registry import registrar

__all__ = ["System", "OneElectron", "SYSTEMS", "register_system"]

SYSTEMS: dict[str, type["System"]] = {}

register_system = registrar(SYSTEMS)


class System:
    """What the propagator needs to know about a system (base class; also usable as is).

    Contract for an implementer (subclass, build the arrays in ``__init__`` and pass
    them to ``System.__init__``, then register with ``@register_system("name")``):

    * ``grid`` -- a :class:`~tdse1d.physics.grid.Grid` of any number of axes;
    * ``potential`` -- the field-free potential V on the grid (Hartree, shape
      ``grid.shape``), real;
    * ``force`` -- F = sum_a w_a dV/dx_a on the grid (Hartree/bohr), the derivative of
      V along the coupling: it gives the Ehrenfest acceleration and the momentum record;
    * ``field_weights`` -- one weight per axis: how many electron charges move along
      that axis in the field (1 for an axis that is an electron's coordinate, 0 for
      one that does not couple); X = sum_a w_a x_a, K = sum_a w_a k_a;
    * ``absorber_factor`` -- per-step factor in (0, 1] on the grid, or None for none
      (build it with ``Absorber.step_factor(grid, width, time_step)``, which covers
      every edge of every axis);
    * ``reference`` -- state whose population is recorded each step (length gauge,
      shape ``grid.shape``), or None;
    * :meth:`per_step_observables` -- optional: entries with a ``measure(propagator)``
      callable, recorded after every step beside the built-in ones (norm, dipole <X>,
      momentum <P>, acceleration, initial_population), which every system gets.

    The constructor checks every array once; the propagator trusts them afterwards.

    Parameters
    ----------
    grid : Grid
    potential, force : ndarray, shape ``grid.shape``
        V (Hartree) and F = sum_a w_a dV/dx_a (Hartree/bohr).
    field_weights : sequence of float, one per axis
    absorber_factor : ndarray, shape ``grid.shape``, optional
    reference : ndarray, shape ``grid.shape``, optional
    """

    name = "?"

    def __init__(self, grid: Grid, potential, force, field_weights, absorber_factor=None, reference=None):
        if not isinstance(grid, Grid):
            raise TypeError(f"grid must be a Grid, got {type(grid).__name__}")
        shape = grid.shape
        self.grid = grid
        self.potential = self._real(potential, "potential", shape)
        self.force = self._real(force, "force", shape)
        w = tuple(float(v) for v in np.atleast_1d(field_weights))
        if len(w) != grid.ndim or not all(np.isfinite(w)):
            raise ValueError(f"field_weights needs one finite weight per axis ({grid.ndim}), got {field_weights}")
        self.field_weights = w
        if absorber_factor is None:
            self.absorber_factor = np.ones(shape)
        else:
            m = self._real(absorber_factor, "absorber_factor", shape)
            if np.any(m <= 0) or np.any(m > 1):
                raise ValueError("absorber_factor must hold values in (0, 1] on the grid")
            self.absorber_factor = m
        if reference is None:
            self.reference = np.zeros(shape, complex)
        else:
            ref = np.ascontiguousarray(reference, dtype=complex)
            if ref.shape != shape or not np.all(np.isfinite(ref)):
                raise ValueError(f"reference must be a finite array of shape {shape}, got {ref.shape}")
            self.reference = ref

    @staticmethod
    def _real(values, what, shape):
        arr = np.ascontiguousarray(values, dtype=float)
        if arr.shape != shape:
            raise ValueError(f"{what} must have the grid's shape {shape}, got {arr.shape}")
        if not np.all(np.isfinite(arr)):
            raise ValueError(f"{what} holds non-finite values")
        return arr

    def coupling(self) -> np.ndarray:
        """X = sum_a w_a x_a on the grid (bohr), shape ``grid.shape``."""
        return self._weighted(self.grid.positions)

    def coupling_momentum(self) -> np.ndarray:
        """K = sum_a w_a k_a on the momentum grid in FFT order (a.u.), shape ``grid.shape``."""
        return self._weighted(self.grid.momenta)

    def _weighted(self, coordinate):
        total = np.zeros(self.grid.shape)
        for a, w in enumerate(self.field_weights):
            if w != 0.0:
                total = total + w * coordinate(a)
        return total

    @property
    def charge_sum(self) -> float:
        """sum_a w_a^2: the factor of E N in dP/dt and of A^2/2 in the kinetic energy."""
        return float(sum(w * w for w in self.field_weights))

    @property
    def is_line(self) -> bool:
        """One electron on a 1-D grid (the propagator's fused 1-D kernels apply)."""
        return self.grid.ndim == 1 and self.field_weights == (1.0,)

    def per_step_observables(self) -> tuple[PerStepObservable, ...]:
        """Extra quantities recorded every step (entries with ``measure``); none by default."""
        return ()

    def __repr__(self):
        return f"<{type(self).__name__} on {'x'.join(map(str, self.grid.shape))} points, field weights {self.field_weights}>"


@register_system("one-electron")
class OneElectron(System):
    """One electron on a line in a model potential.

    Parameters
    ----------
    grid : Grid
        1-D grid.
    potential : Potential
        Provides ``value(x)`` (Hartree) and ``gradient(x)`` (Hartree/bohr).
    absorber_factor, reference : ndarray, optional
        As for :class:`System`.
    """

    def __init__(self, grid: Grid, potential, absorber_factor=None, reference=None):
        if grid.ndim != 1:
            raise ValueError(f"one electron on a line needs a 1-D grid, got {grid.ndim} axes")
        x = grid.x
        super().__init__(grid, potential.value(x), potential.gradient(x), (1.0,), absorber_factor, reference)
        self.model = potential
