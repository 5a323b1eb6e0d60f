"""Numerical health of a run: signs that the grid or the absorber does not fit the physics.

Non-finite values and a growing norm stop the run at once (the propagator raises
:class:`~tdse1d.physics.propagation.NumericalError`); a grid smaller than the quiver excursion or
coarser than the highest momentum of the pulse is flagged before the run by
:func:`tdse1d.input.problem.build_problem` (``Problem.warnings``). During the run,
:class:`HealthMonitor` looks at the length-gauge wavefunction at the population cadence
for three symptoms, each a small check registered in :data:`CHECKS`:

* ``absorber-edge``: the fraction of the norm in the outermost 10% of an absorbing layer
  exceeds :data:`EDGE_FRACTION`. A working absorber has emptied the wave before it gets
  there; what reaches the grid's edge wraps around the periodic Fourier box.
* ``momentum-limit``: the fraction of the norm at ``|k| > 0.9 k_max`` (one FFT) exceeds
  :data:`MOMENTUM_FRACTION`: the grid spacing cannot represent the momenta the pulse
  produces, and they alias.
* ``absorber-reflection``: from half an optical cycle after the pulses on (no field drives
  electrons back, so in the layer every electron moves out), the wave in an absorbing
  layer (with at least 10 bohr in front of a thinner layer), bound states projected out,
  that moves back towards the ion, relative to the one moving out, exceeds
  :data:`REFLECTION_RATIO`, with the region holding at least :data:`REFLECTION_MIN_NORM`
  of the norm and the returning part above :data:`REFLECTED_OF_ABSORBED` of the norm
  absorbed so far. A mask or complex potential that varies too fast for slow electrons
  reflects them (common practice; the local momentum split is taken from the
  Hann-windowed FFT of the region's wavefunction).

Each symptom is reported once, at its first occurrence, with the step and time.
The thresholds are common-practice choices of ours, not published values.
"""

from __future__ import annotations

import numpy as np

from ..errors import NumericalError
from ..physics.threads import one_blas_thread
from ..registry import registrar

__all__ = ["HealthMonitor", "CHECKS", "EDGE_FRACTION", "MOMENTUM_FRACTION", "REFLECTION_RATIO"]

#: fraction of the norm allowed in the outermost 10% of an absorbing layer
EDGE_FRACTION = 1e-4
#: fraction of the norm allowed at |k| > 0.9 k_max
MOMENTUM_FRACTION = 1e-5
#: returning / outgoing density inside an absorbing layer, after the pulses
REFLECTION_RATIO = 0.5
#: returning norm, as a fraction of the norm absorbed so far, that counts as a reflection
REFLECTED_OF_ABSORBED = 0.01
#: shortest stretch of box (bohr) looked at in front of a thin absorbing layer
MIN_STRETCH = 10.0
#: the reflection test needs at least this fraction of the norm in the layer
REFLECTION_MIN_NORM = 1e-5

CHECKS = {}


register_check = registrar(CHECKS, attribute=None)


class _Geometry:
    """Index sets of the grid regions the checks look at."""

    def __init__(self, problem):
        grid = problem.grid
        x = grid.x
        width = float(problem.absorber_width)
        inner = grid.half_width - width
        self.dx = grid.spacing
        self.has_absorber = problem.config.absorber.type != "none" and width > 0
        # without an absorber, what reaches the outer 5% of the box wraps around
        edge = 0.1 * width if self.has_absorber else 0.05 * grid.half_width
        self.outer = np.flatnonzero(np.abs(x) > grid.half_width - edge)
        # The layer itself: after the pulses nothing but a reflection (or a wrap-around)
        # moves back towards the ion there, while just inside the box electrons the last
        # cycles drove outwards still drift back. A layer thinner than MIN_STRETCH holds
        # too few points for a local momentum split: then the region reaches into the box.
        start = min(inner, grid.half_width - MIN_STRETCH)
        self.right = np.flatnonzero(x > start)
        self.left = np.flatnonzero(x < -start)
        # bound states are removed first: their tails hold both directions equally
        self.states = problem.states.wavefunctions
        self.high_k = np.abs(grid.k) > 0.9 * grid.max_momentum
        # electrons the last half cycle sent into a layer come back out within about that
        period = 2 * np.pi / problem.field.omega if problem.field.pulses else 0.0
        self.field_end = problem.field.end + 0.5 * period if problem.field.pulses else -np.inf


@register_check("absorber-edge")
def _edge(geo, psi, density, norm, t):
    frac = density[geo.outer].sum() * geo.dx / norm
    if frac > EDGE_FRACTION:
        where = "outermost 10% of the absorber" if geo.has_absorber else "outer 5% of the box, which has no absorber"
        return f"{frac:.2e} of the norm has reached the {where} (widen the absorber or the box)"
    return None


@register_check("momentum-limit")
def _momentum(geo, psi, density, norm, t):
    phi = np.fft.fft(psi)
    dens_k = phi.real**2 + phi.imag**2
    frac = dens_k[geo.high_k].sum() / dens_k.sum()
    if frac > MOMENTUM_FRACTION:
        return (f"{frac:.2e} of the norm is at |k| > 0.9 of the grid's largest momentum "
                "(reduce the grid spacing)")
    return None


def _inward_outward(psi_layer, outward_sign):
    w = np.hanning(len(psi_layer))
    phi = np.fft.fft(psi_layer * w)
    k = np.fft.fftfreq(len(psi_layer))
    d = phi.real**2 + phi.imag**2
    out = d[outward_sign * k > 0].sum()
    back = d[outward_sign * k < 0].sum()
    return back, out


@register_check("absorber-reflection")
def _reflection(geo, psi, density, norm, t):
    if not geo.has_absorber or t <= geo.field_end:
        return None
    # real products on the (re, im) pairs: a real matrix times a complex vector would
    # first copy the matrix to complex
    pairs = np.ascontiguousarray(psi, dtype=np.complex128).view(np.float64).reshape(-1, 2)
    amplitudes = (geo.states @ pairs) * geo.dx
    continuum = psi - (geo.states.T @ amplitudes).view(np.complex128).ravel()
    for side, idx, sign in (("right", geo.right, 1), ("left", geo.left, -1)):
        if len(idx) < 8:
            continue
        part = continuum[idx]
        held = float(np.sum(part.real**2 + part.imag**2)) * geo.dx / norm
        if held < REFLECTION_MIN_NORM:
            continue
        back, out = _inward_outward(part, sign)
        returning = held * back / (back + out) if back + out > 0 else 0.0
        absorbed = max(1.0 - norm, 0.0)
        # a layer that takes in far more than it sends back is doing its job, whatever
        # the local ratio: what comes back must also matter against what was absorbed
        if out > 0 and back / out > REFLECTION_RATIO and returning > REFLECTED_OF_ABSORBED * absorbed:
            return (f"the {side} absorber sends back {back / out:.2f} of what enters it "
                    f"({returning:.2e} of the norm on its way back, {absorbed:.2e} absorbed so far): "
                    "it reflects; make it wider or smoother")
    return None


class HealthMonitor:
    """Runs the :data:`CHECKS` on a run's wavefunction and collects warnings.

    Parameters
    ----------
    problem : Problem
    strict : bool
        Raise :class:`~tdse1d.physics.propagation.NumericalError` at the first warning.

    Attributes
    ----------
    warnings : list of str
        One line per symptom, at its first occurrence, with step and time (a.u.).
    """

    def __init__(self, problem, strict: bool = False):
        self.geometry = _Geometry(problem)
        self.strict = strict
        self.warnings = []
        self._seen = set()

    def check(self, step: int, time: float, psi):
        """Look at the length-gauge wavefunction ``psi`` of ``step`` (time in a.u.)."""
        density = psi.real**2 + psi.imag**2
        norm = density.sum() * self.geometry.dx
        if not norm > 0:
            return
        with one_blas_thread():
            self._check(step, time, psi, density, norm)

    def _check(self, step, time, psi, density, norm):
        for name, fn in CHECKS.items():
            if name in self._seen:
                continue
            message = fn(self.geometry, psi, density, norm, time)
            if message is None:
                continue
            self._seen.add(name)
            if self.strict:
                raise NumericalError(f"{name}: {message}", step, time)
            self.warnings.append(f"{name}: {message} at step {step}, t = {time:.6g} a.u.")
