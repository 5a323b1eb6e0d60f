"""Numerical health of a run: signs that the grid or the absorber does not fit the physics.

Non-finite values and a growing norm stop the run at once (the propagator raises
:class:`~tdse1d.propagate.NumericalError`); a grid smaller than the quiver excursion or
coarser than the highest momentum of the pulse is flagged before the run by
:func:`tdse1d.problem.build_problem` (``Problem.warnings``). During the run,
:class:`HealthMonitor` looks at the length-gauge wavefunction at the population cadence
for three symptoms, each a small check registered in :data:`CHECKS`:

* ``absorber-edge``: the fraction of the norm in the outermost 10% of an absorbing layer
  exceeds :data:`EDGE_FRACTION`. A working absorber has emptied the wave before it gets
  there; what reaches the grid's edge wraps around the periodic Fourier box.
* ``momentum-limit``: the fraction of the norm at ``|k| > 0.9 k_max`` (one FFT) exceeds
  :data:`MOMENTUM_FRACTION`: the grid spacing cannot represent the momenta the pulse
  produces, and they alias.
* ``absorber-reflection``: after the pulses (no field drives electrons back, so far from
  the ion every electron moves out), the wave in an absorbing layer and the stretch of
  box inside it (as wide as the layer, at least a quarter of the inner box) that moves
  back towards the ion, relative to the one moving out, exceeds
  :data:`REFLECTION_RATIO`, with the region holding at least :data:`REFLECTION_MIN_NORM`
  of the norm. A mask or complex potential that varies too fast for slow electrons
  reflects them (common practice; the local momentum split is taken from the
  Hann-windowed FFT of the region's wavefunction).

Each symptom is reported once, at its first occurrence, with the step and time.
The thresholds are common-practice choices of ours, not published values.
"""

from __future__ import annotations

import numpy as np

from .propagate import NumericalError

__all__ = ["HealthMonitor", "CHECKS", "EDGE_FRACTION", "MOMENTUM_FRACTION", "REFLECTION_RATIO"]

#: fraction of the norm allowed in the outermost 10% of an absorbing layer
EDGE_FRACTION = 1e-4
#: fraction of the norm allowed at |k| > 0.9 k_max
MOMENTUM_FRACTION = 1e-5
#: returning / outgoing density inside an absorbing layer, after the pulses
REFLECTION_RATIO = 0.5
#: the reflection test needs at least this fraction of the norm in the layer
REFLECTION_MIN_NORM = 1e-5

CHECKS = {}


def register_check(name: str):
    def decorate(fn):
        CHECKS[name] = fn
        return fn

    return decorate


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
        # the layer and a stretch of the box inside it: a reflected wave shows there too,
        # and a thin layer alone holds too few points for a local momentum split
        start = inner - max(width, 0.25 * inner)
        self.right = np.flatnonzero(x > start)
        self.left = np.flatnonzero(x < -start)
        self.high_k = np.abs(grid.k) > 0.9 * grid.max_momentum
        self.field_end = problem.field.end if problem.field.pulses else -np.inf


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
    for side, idx, sign in (("right", geo.right, 1), ("left", geo.left, -1)):
        if len(idx) < 8:
            continue
        held = density[idx].sum() * geo.dx / norm
        if held < REFLECTION_MIN_NORM:
            continue
        back, out = _inward_outward(psi[idx], sign)
        if out > 0 and back / out > REFLECTION_RATIO:
            return (f"the {side} absorber sends back {back / out:.2f} of what enters it "
                    f"(it holds {held:.2e} of the norm): it reflects; make it wider or smoother")
    return None


class HealthMonitor:
    """Runs the :data:`CHECKS` on a run's wavefunction and collects warnings.

    Parameters
    ----------
    problem : Problem
    strict : bool
        Raise :class:`~tdse1d.propagate.NumericalError` at the first warning.

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
