"""Absorbing boundaries.

An absorber removes the outgoing part of the wavefunction near the edges of the box
so that it does not wrap around the periodic Fourier grid. Every absorber here reduces
to a real factor 0 < M(x) <= 1 applied at every time step, after the step's last
sub-step (never less often: a factor applied every few steps kicks the norm
periodically, and the Ehrenfest acceleration -E(t) N(t) then radiates a line at the
kick frequency). Applying it after the last sub-step rather than inside matters for a
composition scheme with negative sub-steps (4th order), which would otherwise
*amplify* the wave in those sub-steps, which a non-Hermitian term must never do.
The photoelectron spectrum is read at surfaces at the inner edges of the layers
(:mod:`tdse1d.spectra.surface_flux`), before any absorption.

Absorbers are small classes registered in :data:`ABSORBERS` under the name used by
``absorber.type``. Contract for an implementer of :class:`Absorber`:

* ``layer_factor(depth, time_step)`` returns the per-step factor in (0, 1] at the
  given depths into a layer (0 at its inner edge, 1 at the grid's edge; exactly 1 at
  depth 0);
* ``own_keys`` names the ``[absorber]`` keys only this absorber reads (the input
  reader refuses them with another absorber, naming this one).

:meth:`Absorber.step_factor` builds M on a grid of any number of axes: a layer of
``width`` bohr at both edges of every axis, M = prod_a layer_factor(depth_a) (for a
mask, the product of the 1-D masks; for a complex potential, the sum of the 1-D
potentials, exp(-sum_a W(x_a) dt)). On a 2-D grid every one of the four edges
absorbs, the corners twice.
"""

from __future__ import annotations

import numpy as np

from .grid import Grid
from ..registry import registrar

__all__ = ["Absorber", "CosineMask", "ComplexPotential", "NoAbsorber", "ABSORBERS", "register_absorber", "depth_into_layer"]

ABSORBERS: dict[str, type["Absorber"]] = {}


register_absorber = registrar(ABSORBERS)


def depth_into_layer(grid: Grid, width: float) -> np.ndarray:
    """0 inside the box, rising to 1 at the grid's edge across a layer of ``width`` (1-D grid)."""
    inner = grid.half_width - width
    return np.clip((np.abs(grid.x) - inner) / width, 0.0, 1.0)


class Absorber:
    """Base class of absorbers (contract in the module docstring).

    Parameters
    ----------
    exponent : float
        Exponent of a mask function.
    strength : float or None
        Peak of a complex absorbing potential (Hartree); None lets the absorber choose.
    """

    name = "?"

    #: [absorber] keys only this absorber reads (refused with another, naming this one)
    own_keys: tuple[str, ...] = ()

    def __init__(self, exponent: float = 0.125, strength: float | None = None):
        self.exponent = exponent
        self.strength = strength

    def layer_factor(self, depth: np.ndarray, time_step: float) -> np.ndarray:  # pragma: no cover
        """Per-step factor in (0, 1] at ``depth`` (0 to 1) into a layer; ``time_step`` in a.u."""
        raise NotImplementedError

    def step_factor(self, grid: Grid, width: float, time_step: float) -> np.ndarray:
        """M on ``grid`` (shape ``grid.shape``): layers of ``width`` bohr on both edges of every axis.

        Parameters
        ----------
        grid : Grid
            Any number of axes.
        width : float
            Layer width (bohr), the same on every axis.
        time_step : float
            Propagation time step (a.u.).

        Returns
        -------
        ndarray of float, shape ``grid.shape``
            Values in (0, 1], exactly 1 outside the layers.
        """
        if grid.ndim == 1:
            return self.layer_factor(depth_into_layer(grid, width), time_step)
        total = np.ones(grid.shape)
        for a in range(grid.ndim):
            line = self.layer_factor(depth_into_layer(grid.axis(a), width), time_step)
            total = total * line.reshape([-1 if b == a else 1 for b in range(grid.ndim)])
        return total


@register_absorber("mask")
class CosineMask(Absorber):
    """M(x) = cos^(1/8)(pi/2 * s) with s the depth into the layer (0 to 1).

    The mask of Krause, Schafer and Kulander, Phys. Rev. A 45, 4998 (1992), applied once
    per time step; ``exponent`` (default 1/8) sets how sharply it bites.
    """

    own_keys = ("exponent",)

    def layer_factor(self, depth, time_step):
        m = np.cos(0.5 * np.pi * depth) ** self.exponent
        # the grid's very edge would be exactly zero; keep the factor positive
        return np.maximum(m, 1e-30)


@register_absorber("complex-potential")
class ComplexPotential(Absorber):
    """Quadratic complex absorbing potential -i W(x), W = W0 s^2, as exp(-W dt) per step.

    Quadratic CAPs are common practice (e.g. Riss and Meyer, J. Phys. B 26, 4503 (1993),
    from memory). The default W0 = 1 Hartree absorbs a packet of momentum 1.5 a.u. in a
    40-bohr layer with less than 1e-5 of it reflected back into the box, where a step
    of the same height reflects more than 1e-3 (tests/test_photoelectrons.py).
    """

    own_keys = ("strength",)

    DEFAULT_STRENGTH = 1.0

    def layer_factor(self, depth, time_step):
        w0 = self.DEFAULT_STRENGTH if self.strength is None else self.strength
        return np.exp(-w0 * depth**2 * time_step)


@register_absorber("none")
class NoAbsorber(Absorber):
    """No absorption: the box is periodic (for field-free checks and bound dynamics)."""

    def layer_factor(self, depth, time_step):
        return np.ones(np.shape(depth))
