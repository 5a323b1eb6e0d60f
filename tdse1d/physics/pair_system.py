"""The two-electron atom as a :class:`~tdse1d.physics.systems.System` of the propagator.

Each electron has its own axis of a square 2-D grid; both couple to the field with
weight 1, so the coupling coordinate is x1 + x2 (length gauge) and p1 + p2 (velocity
gauge), and the recorded acceleration is the total dipole acceleration
-<dV/dx1 + dV/dx2> - 2 E(t) N(t), whose spectrum is the harmonic spectrum of the atom
(the repulsion drops out of it: an internal force).

Beside the propagator's own observables the system records, at every record step, the
probabilities of the neutral atom, of single and of double ionization from regions of
the (x1, x2) plane (:mod:`tdse1d.physics.pair_regions`), with the norm the absorbers
took on every step attributed to its region, at the reported radius and at the others
of :data:`~tdse1d.physics.pair_regions.RADII` (their spread is the reading's
uncertainty). The 2-D steppers take these readings in their own passes
(:meth:`TwoElectrons.fused_readings`); the entries' ``measure`` reads the start of a run.
"""

from __future__ import annotations

import numpy as np

from .grid import Grid
from .observables import PerStepObservable
from .pair_regions import RADII, RegionRecorder
from .systems import System, register_system
from .two_electron import TwoElectronAtom

__all__ = ["TwoElectrons", "region_observable_names"]

_KINDS = ("neutral", "single_ionization", "double_ionization")


def _radius_tag(radius: float) -> str:
    return f"{radius:g}".replace(".", "p")


def region_observable_names(radii=RADII) -> tuple[str, ...]:
    """Names of the per-step region observables: the first radius plain
    (``neutral``, ``single_ionization``, ``double_ionization``), the others with
    ``_r<R>`` (e.g. ``double_ionization_r8``)."""
    names = list(_KINDS)
    for r in radii[1:]:
        names += [f"{k}_r{_radius_tag(r)}" for k in _KINDS]
    return tuple(names)


@register_system("two-electron")
class TwoElectrons(System):
    """Two electrons on a line, one per axis of a square 2-D grid.

    Parameters
    ----------
    axis : Grid
        The 1-D grid of each axis (points, spacing in bohr).
    atom : TwoElectronAtom
    absorber_factor : ndarray, shape (points, points), optional
        Per-step absorber factor M in (0, 1] (``Absorber.step_factor`` on the 2-D grid).
    reference : ndarray, shape (points, points), optional
        State whose population is recorded (the initial state).
    radii : tuple of float
        Radii (bohr) of the regions; the first is the one reported.
    """

    def __init__(self, axis: Grid, atom: TwoElectronAtom, absorber_factor=None, reference=None, radii=RADII):
        if not isinstance(atom, TwoElectronAtom):
            raise TypeError(f"TwoElectrons needs a TwoElectronAtom, got {type(atom).__name__}")
        if axis.ndim != 1:
            raise ValueError(f"give the 1-D grid of one axis, got {axis.ndim} axes")
        grid = Grid.product(axis, axis)
        x1, x2 = grid.positions(0), grid.positions(1)
        super().__init__(grid, atom.value(x1, x2), atom.field_gradient(x1, x2), (1.0, 1.0), absorber_factor,
                         reference)
        self.model = atom
        self.axis = axis
        self.radii = tuple(radii)
        self.recorder = RegionRecorder(axis.x, axis.spacing, absorber_factor, self.radii)
        self._reading = None  # (step index, readings) of the last step measured
        self._started = None

    def _read(self, propagator) -> np.ndarray:
        n = propagator.step_index
        if self._reading is None or self._reading[0] != n:
            first = self._started is None
            if first:
                self._started = n
            # the stepper counts what each step's absorber takes (RegionRecorder.absorb)
            values = self.recorder.read(propagator.psi)
            if first and n > 0:  # a resumed run: what was absorbed before is in the record
                recorded = np.array([[getattr(propagator.observables, name)[n]
                                      for name in self._names_of(k)] for k in range(len(self.radii))])
                if np.all(np.isfinite(recorded)):
                    self.recorder.absorbed = recorded - values
                    values = recorded
            self._reading = (n, values)
        return self._reading[1]

    def fused_readings(self):
        """(recorder, names): the region readings as the 2-D steppers take them in their
        own passes (:mod:`tdse1d.physics.grid_step`), the names in the recorder's order
        (radius by radius, neutral, single, double)."""
        return self.recorder, region_observable_names(self.radii)

    def _names_of(self, k: int) -> tuple[str, ...]:
        names = region_observable_names(self.radii)
        return names[3 * k:3 * k + 3]

    def per_step_observables(self) -> tuple[PerStepObservable, ...]:
        entries = []
        words = {"neutral": "neutral atom: |x1|, |x2| < R", "single_ionization": "single ionization: one |x_i| >= R",
                 "double_ionization": "double ionization: |x1|, |x2| >= R"}
        for k, r in enumerate(self.radii):
            for j, name in enumerate(self._names_of(k)):
                kind = _KINDS[j]
                entries.append(PerStepObservable(
                    name, "1", f"{words[kind]}, R = {r:g} bohr, with the norm absorbed from that region",
                    lambda prop, k=k, j=j: float(self._read(prop)[k, j])))
        return tuple(entries)
