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

* ``step_factor(grid, width, time_step)`` returns M(x) on the grid (float array,
  values in (0, 1], exactly 1 outside the two absorbing layers of ``width`` bohr);
* ``own_keys`` names the ``[absorber]`` keys only this absorber reads (the input
  reader refuses them with another absorber, naming this one).
"""

from __future__ import annotations

import numpy as np

from .grid import Grid
from ..registry import registrar

__all__ = ["Absorber", "CosineMask", "ComplexPotential", "NoAbsorber", "ABSORBERS", "register_absorber", "depth_into_layer"]

ABSORBERS: dict[str, type["Absorber"]] = {}


register_absorber = registrar(ABSORBERS)


def depth_into_layer(grid: Grid, width: float) -> np.ndarray:
    """0 inside the box, rising to 1 at the grid's edge across a layer of ``width``."""
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

    def step_factor(self, grid: Grid, width: float, time_step: float) -> np.ndarray:  # pragma: no cover
        raise NotImplementedError


@register_absorber("mask")
class CosineMask(Absorber):
    """M(x) = cos^(1/8)(pi/2 * s) with s the depth into the layer (0 to 1).

    The mask of Krause, Schafer and Kulander, Phys. Rev. A 45, 4998 (1992), applied once
    per time step; ``exponent`` (default 1/8) sets how sharply it bites.
    """

    own_keys = ("exponent",)

    def step_factor(self, grid, width, time_step):
        s = depth_into_layer(grid, width)
        m = np.cos(0.5 * np.pi * s) ** self.exponent
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

    def step_factor(self, grid, width, time_step):
        s = depth_into_layer(grid, width)
        w0 = self.DEFAULT_STRENGTH if self.strength is None else self.strength
        return np.exp(-w0 * s**2 * time_step)


@register_absorber("none")
class NoAbsorber(Absorber):
    """No absorption: the box is periodic (for field-free checks and bound dynamics)."""

    def step_factor(self, grid, width, time_step):
        return np.ones(grid.points)
