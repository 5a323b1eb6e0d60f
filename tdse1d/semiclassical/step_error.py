"""The splitting error of a time step, estimated where it arises, and the step it allows.

A split-operator step treats the kinetic energy and the potential one after the other.
For a free electron driven by the laser field (kinetic energy plus x E(t), E uniform in
space) the splitting is exact but for a global phase: the commutators of the leading
error terms, [T, [T, xE]] and [xE, [xE, T]], are zero and a number (backward error
analysis of the Strang splitting, e.g. Hairer, Lubich and Wanner, Geometric Numerical
Integration, Springer 2006, ch. IX; from memory). The error comes from near the core,
where the potential is curved: its leading term is dt^p times commutators of T with the
derivatives of V, largest for the fastest electron that crosses the core, the one
returning with the highest classical energy (3.17 Up, Corkum 1993).

So the error of a step dt is measured on that electron: a Gaussian packet of the return
momentum is sent through the model's core, field-free, with the run's splitting scheme
at dt and at dt/2 on a small grid, and the difference, divided by 1 - 2^-p (Richardson's
step doubling for a method of order p), is the splitting error of one passage: the
2-norm of the error of a unit-norm wavefunction. A harmonic's amplitude from that
return is wrong by at most this fraction, so its log10 by at most error / ln 10.

Pure numerics (numpy FFTs on a few hundred points, a few ms per estimate).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

__all__ = ["StepError", "Probe", "probe", "propagate_probe", "passage_error", "step_for_tolerance", "DEFAULT_TOLERANCE"]

#: default splitting error per core passage of the fastest returning electron (2-norm
#: of the error of a unit-norm wavefunction): a plateau harmonic's log10 moves by at most
#: 1e-2 / ln 10 = 0.004 decade per return from it (the target is 0.02 decade RMS)
DEFAULT_TOLERANCE = 1e-2
#: the probe packet's width (bohr): several softenings, narrow in momentum (1/(2 w))
_PACKET_WIDTH = 3.0
#: the packet starts and ends this far from the core (bohr): outside the core region
_PACKET_DISTANCE = 18.0
#: largest spacing of the probe grid (bohr): the runs' own largest (estimates.MAX_SPACING)
_PROBE_SPACING = 0.2


@dataclass(frozen=True)
class StepError:
    """The splitting error of a time step (see the module docstring).

    Attributes
    ----------
    time_step : float
        The step (a.u. of time).
    error : float
        Estimated 2-norm error of one passage of the core (dimensionless).
    momentum : float
        Momentum of the probe electron far from the core (a.u.).
    order : int
        Order of the splitting scheme.
    """

    time_step: float
    error: float
    momentum: float
    order: int


def _probe(potential_values, x, k, psi, weights, dt, steps):
    """``steps`` steps of the symmetric composition of Strang steps ``weights``."""
    kinetic = 0.5 * k**2
    kicks = [np.exp(-0.5j * w * dt * potential_values) for w in weights]
    drifts = [np.exp(-1j * w * dt * kinetic) for w in weights]
    for _ in range(steps):
        for kick, drift in zip(kicks, drifts):
            psi = np.fft.ifft(drift * np.fft.fft(psi * kick)) * kick
    return psi


@dataclass(frozen=True)
class Probe:
    """The probe of :func:`passage_error`: a packet aimed at the core on a small grid.

    Attributes
    ----------
    x, k : ndarray
        Positions (bohr) and momenta in FFT order (a.u.).
    potential_values : ndarray
        V(x) (Hartree).
    packet : ndarray of complex
        The initial packet (unit 2-norm over the grid points).
    duration : float
        The time (a.u.) in which it crosses the core.
    """

    x: np.ndarray
    k: np.ndarray
    potential_values: np.ndarray
    packet: np.ndarray
    duration: float


def probe(potential, momentum: float) -> Probe:
    """The probe packet of ``momentum`` (a.u., > 0) for ``potential`` (core at x = 0)."""
    # the grid resolves the packet's momenta (p + 3 sigma_p, plus the core's pull)
    depth = max(0.0, -float(potential.value(np.zeros(1))[0]))
    p_top = math.sqrt(momentum**2 + 2 * depth) + 3 / _PACKET_WIDTH
    spacing = min(_PROBE_SPACING, math.pi / (1.5 * p_top))
    half = _PACKET_DISTANCE + 6 * _PACKET_WIDTH
    n = 1 << int(math.ceil(math.log2(2 * half / spacing)))
    x = (np.arange(n) - n // 2) * spacing
    k = 2 * np.pi * np.fft.fftfreq(n, spacing)
    packet = np.exp(-((x + _PACKET_DISTANCE) ** 2) / (4 * _PACKET_WIDTH**2) + 1j * momentum * x)
    packet /= np.linalg.norm(packet)
    return Probe(x, k, potential.value(x), packet, 2 * _PACKET_DISTANCE / momentum)


def propagate_probe(pr: Probe, weights, time_step: float, steps: int) -> np.ndarray:
    """The probe packet after ``steps`` steps of ``time_step`` (a.u.) of the scheme ``weights``."""
    return _probe(pr.potential_values, pr.x, pr.k, pr.packet, weights, time_step, steps)


def passage_error(potential, momentum: float, time_step: float, weights, order: int) -> StepError:
    """Splitting error of one passage of the core at ``momentum`` with step ``time_step``.

    Parameters
    ----------
    potential : Potential
        The model (its ``value(x)``, Hartree, x in bohr); the core at x = 0.
    momentum : float
        Momentum of the electron far from the core (a.u.), > 0.
    time_step : float
        The step (a.u.), > 0.
    weights : sequence of float
        The splitting scheme's Strang sub-step weights (summing to 1).
    order : int
        The scheme's order p.

    Returns
    -------
    StepError
        The 2-norm of (psi_dt - psi_dt/2) / (1 - 2^-p) after crossing (dimensionless).
    """
    pr = probe(potential, momentum)
    steps = max(2, int(math.ceil(pr.duration / time_step)))
    coarse = propagate_probe(pr, weights, time_step, steps)
    fine = propagate_probe(pr, weights, 0.5 * time_step, 2 * steps)
    error = float(np.linalg.norm(coarse - fine)) / (1 - 2.0**-order)
    return StepError(time_step, error, momentum, order)


@functools.lru_cache(maxsize=64)  # pure; the same atom and pulse ask again (a scan's points, a resumed run)
def step_for_tolerance(potential, momentum: float, weights, order: int, tolerance: float = DEFAULT_TOLERANCE,
                       first: float = 0.02, largest: float = 0.05) -> StepError:
    """The largest step (up to ``largest``) whose passage error is at most ``tolerance``.

    The error is measured at ``first``, the step scaled by (tolerance / error)^(1/p),
    and the error measured again there; a step whose error still exceeds the tolerance
    (the law dt^p not yet reached) is shrunk the same way until it does not.

    Parameters
    ----------
    potential : Potential
    momentum : float
        Momentum of the fastest returning electron far from the core (a.u.).
    weights : sequence of float
        The scheme's Strang sub-step weights.
    order : int
        The scheme's order p.
    tolerance : float
        Largest passage error (dimensionless, > 0).
    first, largest : float
        First trial step and largest step returned (a.u.).

    Returns
    -------
    StepError
        The step chosen and its estimated error.
    """
    if not tolerance > 0:
        raise ValueError(f"tolerance must be positive, got {tolerance}")
    dt = min(first, largest)
    for _ in range(8):
        est = passage_error(potential, momentum, dt, weights, order)
        if est.error <= 0:
            return passage_error(potential, momentum, largest, weights, order)
        scale = (tolerance / est.error) ** (1 / order)
        if est.error <= tolerance and (scale < 1.2 or dt >= largest):
            return est
        # aim 10 % below the tolerance, so the next measurement lands inside it
        dt = min(largest, dt * 0.9 * scale)
    return est
