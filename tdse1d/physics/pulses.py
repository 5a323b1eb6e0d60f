"""Laser pulses, defined through their vector potential.

Every pulse is defined by its vector potential A(t); the electric field is the
analytic derivative E(t) = -dA/dt (no finite differences), so that a pulse whose A
vanishes before and after it has zero area, int E dt = 0, as a propagating pulse must.
Pulses add: the field of a run is the sum of its ``[[laser]]`` tables.

Conventions
-----------
Time zero is the reference of every ``delay``: a pulse's envelope is centred at
``t = delay`` (default 0). The simulation starts when the earliest pulse starts and
ends ``after_pulse`` after the latest one ends (see :func:`field_window`).
An analytic pulse of peak field E0, carrier frequency w, carrier-envelope phase phi and
linear chirp rate b has, with tau = t - delay,

    A(t) = -(E0 / w) f(tau) sin(w tau + b tau^2 / 2 + phi),

so that E(t) ~ E0 f(tau) cos(w tau + b tau^2/2 + phi): phi = 0 is a cosine pulse whose
field crest sits at the envelope's centre. The instantaneous frequency is w + b tau.

Envelopes are small classes registered in :data:`ENVELOPES` under the name used by the
input key ``envelope``. Contract for an implementer of :class:`Envelope`:

* ``half_extent``: the envelope is exactly zero for |tau| >= half_extent (a.u.);
* ``value(tau)`` and ``derivative(tau)`` are the field envelope f and df/dtau,
  analytic, for arrays of tau, with f(0) = 1 and f = 0 outside the support;
* ``from_config(laser, omega)`` builds it from a validated ``[[laser]]`` table;
* ``own_keys`` names the ``[[laser]]`` keys only this envelope reads (the input reader
  refuses them with another envelope, naming this one), and ``check(laser)`` returns
  ``(message, key)`` for a combination of keys the envelope cannot take, or None.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..registry import registrar

__all__ = [
    "Envelope",
    "Sin2",
    "Gaussian",
    "FlatTop",
    "ENVELOPES",
    "register_envelope",
    "Pulse",
    "AnalyticPulse",
    "TabulatedPulse",
    "Field",
]

ENVELOPES: dict[str, type["Envelope"]] = {}


register_envelope = registrar(ENVELOPES)


class Envelope:
    """Base class of pulse envelopes (contract in the module docstring)."""

    name = "?"
    half_extent: float
    #: [[laser]] keys only this envelope reads
    own_keys: tuple[str, ...] = ()

    @classmethod
    def check(cls, laser):
        """``(message, key)`` if the validated ``laser`` table does not suit this envelope, else None."""
        return None

    def value(self, tau):  # pragma: no cover - abstract
        raise NotImplementedError

    def derivative(self, tau):  # pragma: no cover - abstract
        raise NotImplementedError

    @property
    def intensity_fwhm(self) -> float:
        """Full width at half maximum of f^2 (a.u. of time)."""
        raise NotImplementedError  # pragma: no cover


@register_envelope("sin2")
@dataclass(frozen=True)
class Sin2(Envelope):
    """f = cos^2(pi tau / T) for |tau| < T/2: a sin^2 pulse of total length T.

    Given as ``cycles`` (T = cycles * 2 pi / w) or as ``fwhm``: the intensity f^2 =
    cos^4 has FWHM = (2 T / pi) arccos(2^(-1/4)) ~ 0.3641 T.
    """

    total_length: float

    FWHM_PER_LENGTH = 2 / math.pi * math.acos(2 ** -0.25)

    @property
    def half_extent(self):
        return 0.5 * self.total_length

    def value(self, tau):
        tau = np.asarray(tau, dtype=float)
        inside = np.abs(tau) < self.half_extent
        return np.where(inside, np.cos(np.pi * tau / self.total_length) ** 2, 0.0)

    def derivative(self, tau):
        tau = np.asarray(tau, dtype=float)
        inside = np.abs(tau) < self.half_extent
        arg = np.pi * tau / self.total_length
        return np.where(inside, -np.pi / self.total_length * np.sin(2 * arg), 0.0)

    @property
    def intensity_fwhm(self):
        return self.FWHM_PER_LENGTH * self.total_length

    @classmethod
    def from_config(cls, laser, omega):
        if laser.cycles is not None:
            return cls(laser.cycles * 2 * math.pi / omega)
        return cls(laser.fwhm / cls.FWHM_PER_LENGTH)


@register_envelope("gaussian")
@dataclass(frozen=True)
class Gaussian(Envelope):
    """Gaussian field envelope f = exp(-2 ln2 tau^2 / fwhm^2), intensity FWHM ``fwhm``.

    Cut where the field envelope has fallen to ``TRUNCATION`` (1e-6, at +-3.16 fwhm);
    outside, A is exactly zero. The field's area is then zero to within 1e-6 E0/w.
    """

    fwhm: float

    TRUNCATION = 1e-6

    @property
    def half_extent(self):
        return self.fwhm * math.sqrt(math.log(1 / self.TRUNCATION) / (2 * math.log(2)))

    def _rate(self):
        return 2 * math.log(2) / self.fwhm**2

    def value(self, tau):
        tau = np.asarray(tau, dtype=float)
        inside = np.abs(tau) < self.half_extent
        return np.where(inside, np.exp(-self._rate() * tau**2), 0.0)

    def derivative(self, tau):
        tau = np.asarray(tau, dtype=float)
        return -2 * self._rate() * tau * self.value(tau)

    @property
    def intensity_fwhm(self):
        return self.fwhm

    @classmethod
    def from_config(cls, laser, omega):
        if laser.fwhm is not None:
            return cls(laser.fwhm)
        # cycles given: read as the intensity FWHM in optical cycles
        return cls(laser.cycles * 2 * math.pi / omega)


@register_envelope("flat-top")
@dataclass(frozen=True)
class FlatTop(Envelope):
    """Flat top of total length T with sin^2 ramps of length R at either end.

    f = sin^2(pi s / (2R)) on the rising ramp (s = time since the start), 1 on the
    plateau, and the mirror image on the falling ramp.
    """

    total_length: float
    ramp: float
    own_keys = ("ramp_cycles",)

    @classmethod
    def check(cls, laser):
        if laser.cycles is None:
            return "a flat-top pulse is given by 'cycles' (total length)", "cycles"
        if 2 * laser.ramp_cycles > laser.cycles:
            return (f"two ramps of {laser.ramp_cycles:g} cycles do not fit in {laser.cycles:g} cycles",
                    "ramp_cycles")
        return None

    @property
    def half_extent(self):
        return 0.5 * self.total_length

    def value(self, tau):
        tau = np.asarray(tau, dtype=float)
        s = self.half_extent - np.abs(tau)  # distance from the nearer edge
        ramp = np.sin(0.5 * np.pi * np.clip(s, 0, None) / self.ramp) ** 2
        return np.where(s >= self.ramp, 1.0, np.where(s > 0, ramp, 0.0))

    def derivative(self, tau):
        tau = np.asarray(tau, dtype=float)
        s = self.half_extent - np.abs(tau)
        ds = 0.5 * np.pi / self.ramp * np.sin(np.pi * np.clip(s, 0, None) / self.ramp)
        return np.where((s > 0) & (s < self.ramp), -np.sign(tau) * ds, 0.0)

    @property
    def intensity_fwhm(self):
        # f^2 = 1/2 where sin^2 = 2^-1/2 on each ramp
        s_half = 2 * self.ramp / math.pi * math.asin(2 ** -0.25)
        return self.total_length - 2 * s_half

    @classmethod
    def from_config(cls, laser, omega):
        period = 2 * math.pi / omega
        return cls(laser.cycles * period, laser.ramp_cycles * period)


class Pulse:
    """Base class of one laser pulse.

    Contract: ``vector_potential(t)`` and ``electric(t)`` for arrays of t (a.u.) with
    E = -dA/dt analytically; ``start`` and ``end`` bound the support of E (a.u.);
    ``omega`` is the carrier frequency (a.u.) and ``peak_field`` the peak amplitude.
    """

    omega: float
    peak_field: float
    start: float
    end: float

    def vector_potential(self, t):  # pragma: no cover - abstract
        raise NotImplementedError

    def electric(self, t):  # pragma: no cover - abstract
        raise NotImplementedError


@dataclass(frozen=True)
class AnalyticPulse(Pulse):
    """A carrier under an envelope (formula in the module docstring).

    Parameters
    ----------
    envelope : Envelope
    omega : float
        Carrier angular frequency at the envelope's centre (a.u.).
    peak_field : float
        Peak field amplitude E0 (a.u.).
    cep : float
        Carrier-envelope phase (rad).
    delay : float
        Time of the envelope's centre (a.u.).
    chirp : float
        Linear chirp rate b = d(omega)/dt (a.u.).
    """

    envelope: Envelope
    omega: float
    peak_field: float
    cep: float = 0.0
    delay: float = 0.0
    chirp: float = 0.0

    @property
    def start(self):
        return self.delay - self.envelope.half_extent

    @property
    def end(self):
        return self.delay + self.envelope.half_extent

    def _phase(self, tau):
        return self.omega * tau + 0.5 * self.chirp * tau**2 + self.cep

    def vector_potential(self, t):
        tau = np.asarray(t, dtype=float) - self.delay
        return -(self.peak_field / self.omega) * self.envelope.value(tau) * np.sin(self._phase(tau))

    def electric(self, t):
        tau = np.asarray(t, dtype=float) - self.delay
        phase = self._phase(tau)
        rate = self.omega + self.chirp * tau
        f = self.envelope.value(tau)
        df = self.envelope.derivative(tau)
        return (self.peak_field / self.omega) * (df * np.sin(phase) + f * rate * np.cos(phase))


class TabulatedPulse(Pulse):
    """A field given as samples E(t_i), e.g. read from a measured or shaped pulse.

    E is interpolated with a cubic spline and A = -int E dt is its exact
    antiderivative, so E = -dA/dt holds to rounding. A field with non-zero area leaves
    A(end) = -area != 0 after the pulse; that is physical for such a table and is
    reported by :attr:`area` (the run's checks warn about it).

    Parameters
    ----------
    time, field : array_like
        Sample times (a.u., increasing) and field values (a.u.).
    omega : float
        Carrier frequency used for harmonic orders and estimates (a.u.).
    delay : float
        Shift added to the sample times (a.u.).
    """

    def __init__(self, time, field, omega, delay=0.0):
        time = np.asarray(time, dtype=float) + delay
        field = np.asarray(field, dtype=float)
        # imported here: scipy.interpolate costs about half a second to import, and only
        # a tabulated field needs it (an analytic pulse never does)
        from scipy.interpolate import CubicSpline

        self._spline_e = CubicSpline(time, field, bc_type="natural")
        self._spline_a = self._spline_e.antiderivative()
        self.omega = float(omega)
        self.peak_field = float(np.max(np.abs(field)))
        self.start = float(time[0])
        self.end = float(time[-1])
        self.delay = float(delay)

    @property
    def area(self) -> float:
        """int E dt over the table (a.u.); zero for a propagating pulse."""
        return float(self._spline_a(self.end))

    def vector_potential(self, t):
        t = np.clip(np.asarray(t, dtype=float), self.start, self.end)
        return -self._spline_a(t)

    def electric(self, t):
        t = np.asarray(t, dtype=float)
        inside = (t >= self.start) & (t <= self.end)
        return np.where(inside, self._spline_e(np.clip(t, self.start, self.end)), 0.0)


class Field:
    """The total field: the sum of a run's pulses.

    Parameters
    ----------
    pulses : sequence of Pulse
    """

    def __init__(self, pulses):
        self.pulses = tuple(pulses)

    def electric(self, t):
        t = np.asarray(t, dtype=float)
        total = np.zeros_like(t)
        for p in self.pulses:
            total = total + p.electric(t)
        return total

    def vector_potential(self, t):
        t = np.asarray(t, dtype=float)
        total = np.zeros_like(t)
        for p in self.pulses:
            total = total + p.vector_potential(t)
        return total

    @property
    def start(self) -> float:
        """Earliest start of any pulse (a.u.); 0 without pulses."""
        return min((p.start for p in self.pulses), default=0.0)

    @property
    def end(self) -> float:
        """Latest end of any pulse (a.u.); 0 without pulses."""
        return max((p.end for p in self.pulses), default=0.0)

    @property
    def omega(self) -> float:
        """Carrier frequency of the first pulse (a.u.), the reference of harmonic orders."""
        return self.pulses[0].omega if self.pulses else float("nan")
