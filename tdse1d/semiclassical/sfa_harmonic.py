"""Strong-field approximation (SFA) of the harmonic dipole in one dimension.

The dipole of Lewenstein, Balcou, Ivanov, L'Huillier and Corkum, Phys. Rev. A 49, 2117
(1994), for a sampled linearly polarised field, with the saddle point taken in the
momentum and a numerical integral over the excursion (return minus ionization) time.
Conventions (docs/sfa.md holds the derivation): electron charge -1, ``E = -dA/dt``,
length gauge ``H = p^2/2 + V(x) + x E(t)``; continuum states ``<x|v> = exp(i v x) /
sqrt(2 pi)`` of kinetic momentum ``v``; canonical momentum ``p``, kinetic ``p + A(t)``.
With no depletion of the ground state,

    x(t) = -i int_0^inf dtau sqrt(2 pi / (i tau)) d*(p_s + A(t)) E(t - tau)
                 d(p_s + A(t - tau)) exp(-i S(t, tau)) + c.c.,

    p_s = -(1/tau) int_{t-tau}^t A,   S = Ip tau + (1/2) int_{t-tau}^t A^2 - tau p_s^2 / 2,

where ``d(v) = <v|x|0> = (1/sqrt(2 pi)) int exp(-i v x) x phi_0(x) dx`` is the dipole
matrix element of the model's own ground state ``phi_0`` (its momentum-space
wavefunction on the run's grid, evaluated as the grid's trigonometric interpolant).
``x(t)`` is the expectation value <x> the time-dependent run records (the physical
dipole is -x; powers do not see the sign). Pure numerics, atomic units, no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numba import njit, prange
from scipy.interpolate import CubicSpline

__all__ = ["DipoleTable", "dipole_table", "ExcursionWindow", "SampledField", "sample_field",
           "SfaDipole", "sfa_dipole", "sfa_time_step", "saddle_terms", "PHASE_PER_STEP", "MAX_TIME_STEP"]

#: largest phase (rad) the integrand's fastest oscillation, exp(-i (Ip + 4 Up) tau), turns
#: through in one time step: the rectangle rule over tau then errs by about
#: PHASE_PER_STEP^2 / 24 = 0.3 % of the amplitude (midpoint-rule estimate, common practice)
PHASE_PER_STEP = 0.25
#: the time step is never longer than this (a.u.), whatever the field
MAX_TIME_STEP = 0.2
#: spacing of the tabulated dipole matrix element (a.u. of momentum): d(v) changes on the
#: scale of the ground state's momentum width sqrt(2 Ip) >= 0.3 a.u., so linear
#: interpolation errs by (h / 0.3)^2 / 8 < 1e-6 of its value
TABLE_STEP = 1e-3
#: the ground state is cut where |phi_0| has fallen below this fraction of its maximum
#: before the Fourier sum (the tails carry nothing at this level)
SUPPORT_LEVEL = 1e-12


@dataclass(frozen=True, eq=False)
class DipoleTable:
    """Dipole matrix element ``d(v) = <v|x|0>`` tabulated on a uniform momentum axis.

    Attributes
    ----------
    start : float
        First momentum of the table (a.u.).
    step : float
        Momentum spacing (a.u.).
    values : ndarray of complex
        ``d(v)`` (a.u.); zero beyond the grid's largest momentum ``pi / dx``.
    """

    start: float
    step: float
    values: np.ndarray

    @property
    def momentum(self) -> np.ndarray:
        """Momenta of the table (a.u.)."""
        return self.start + self.step * np.arange(self.values.size)

    def __call__(self, v):
        """``d(v)`` by linear interpolation (zero outside the table)."""
        v = np.asarray(v, dtype=float)
        m = self.momentum
        return (np.interp(v, m, self.values.real, left=0.0, right=0.0)
                + 1j * np.interp(v, m, self.values.imag, left=0.0, right=0.0))


def dipole_table(x, wavefunction, max_momentum, step=TABLE_STEP) -> DipoleTable:
    """Tabulate ``d(v) = (1/sqrt(2 pi)) int exp(-i v x) x phi_0(x) dx`` of a bound state.

    Parameters
    ----------
    x : array_like, shape (n,)
        Uniform grid (bohr).
    wavefunction : array_like, shape (n,)
        Bound state on that grid, normalised to ``sum |phi|^2 dx = 1`` (bohr^-1/2).
    max_momentum : float
        The table covers ``[-max_momentum, max_momentum]`` (a.u.); above the grid's
        ``pi / dx`` the values are zero (the grid represents no such momentum).
    step : float
        Momentum spacing of the table (a.u.).

    Returns
    -------
    DipoleTable
    """
    x = np.asarray(x, dtype=float)
    phi = np.asarray(wavefunction)
    if x.ndim != 1 or phi.shape != x.shape or x.size < 4:
        raise ValueError(f"x and wavefunction must be 1-D of equal length >= 4, got {x.shape}, {phi.shape}")
    dx = float(x[1] - x[0])
    max_momentum, step = float(max_momentum), float(step)
    if not (dx > 0 and max_momentum > 0 and step > 0 and math.isfinite(max_momentum)):
        raise ValueError("x must increase and max_momentum, step must be positive and finite")
    keep = np.abs(phi) >= SUPPORT_LEVEL * np.max(np.abs(phi))
    lo, hi = np.flatnonzero(keep)[[0, -1]]
    xs, ps = x[lo:hi + 1], phi[lo:hi + 1]
    count = 2 * int(math.ceil(max_momentum / step)) + 1
    v = -step * (count // 2) + step * np.arange(count)
    values = np.zeros(count, dtype=complex)
    inside = np.abs(v) <= math.pi / dx
    # blocks keep the (momenta x points) phase matrix small
    idx = np.flatnonzero(inside)
    for block in np.array_split(idx, max(1, idx.size * xs.size // 2_000_000)):
        values[block] = np.exp(-1j * np.outer(v[block], xs)) @ (xs * ps) * dx / math.sqrt(2 * math.pi)
    return DipoleTable(float(v[0]), step, values)


@dataclass(frozen=True)
class ExcursionWindow:
    """Weights of excursion times ``tau`` in the SFA integrals, in optical periods ``T``.

    The full window is 1 up to ``end`` and falls as cos^2 to 0 over ``taper``, so that
    a hard edge adds no spurious line. The short and long branches are split by a
    cos^2 step of half-width ``split_width`` around ``split``: short = full * step,
    long = full * (1 - step), so short + long = full exactly. The default split, 0.66
    T, is the excursion time of the classical cutoff trajectory in a monochromatic
    field (birth 17 degrees after a field crest, return 255 degrees: Corkum, Phys.
    Rev. Lett. 71, 1994 (1993), from memory); first returns end at 1 T.
    """

    end: float = 1.0
    taper: float = 0.15
    split: float = 0.66
    split_width: float = 0.05
    #: excursions shorter than this are ramped in as sin^2 from 0 (default: none removed)
    start: float = 0.0

    def __post_init__(self):
        if not (self.end > 0 and self.taper >= 0 and 0 < self.split < self.end and self.split_width >= 0
                and 0 <= self.start < self.end):
            raise ValueError(f"inconsistent excursion window {self}")

    def weights(self, tau, period):
        """(full, short, long) weights at excursion times ``tau`` (a.u.)."""
        s = np.asarray(tau, dtype=float) / period
        full = np.where(s <= self.end, 1.0, 0.0)
        if self.start > 0:
            full = full * np.sin(0.5 * np.pi * np.clip(s / self.start, 0.0, 1.0)) ** 2
        if self.taper > 0:
            ramp = (s > self.end) & (s < self.end + self.taper)
            full = np.where(ramp, np.cos(0.5 * np.pi * (s - self.end) / self.taper) ** 2, full)
        if self.split_width > 0:
            u = np.clip((s - self.split + self.split_width) / (2 * self.split_width), 0.0, 1.0)
            step = np.cos(0.5 * np.pi * u) ** 2
        else:
            step = (s <= self.split).astype(float)
        return full, full * step, full * (1.0 - step)

    def reach(self, period) -> float:
        """Longest excursion time with a non-zero weight (a.u.)."""
        return (self.end + self.taper) * period


@dataclass(frozen=True, eq=False)
class SampledField:
    """A field on a uniform time grid with the running integrals the SFA needs (a.u.).

    ``integral_a[i] = int_{t_0}^{t_i} A`` and ``integral_a2[i] = int_{t_0}^{t_i} A^2``,
    exact integrals of the cubic spline through the samples of A.
    """

    time: np.ndarray
    electric: np.ndarray
    vector_potential: np.ndarray
    integral_a: np.ndarray
    integral_a2: np.ndarray

    @property
    def step(self) -> float:
        return float(self.time[1] - self.time[0])


def sample_field(time, electric, vector_potential) -> SampledField:
    """Check a sampled field and add its running integrals.

    Parameters
    ----------
    time : array_like, shape (n,)
        Uniform increasing times (a.u.).
    electric, vector_potential : array_like, shape (n,)
        ``E(t)`` and ``A(t)`` (a.u.), with ``E = -dA/dt``.
    """
    t = np.asarray(time, dtype=float)
    e = np.asarray(electric, dtype=float)
    a = np.asarray(vector_potential, dtype=float)
    if t.ndim != 1 or t.size < 8 or e.shape != t.shape or a.shape != t.shape:
        raise ValueError(f"time, electric and vector_potential must be 1-D of equal length >= 8, "
                         f"got {t.shape}, {e.shape}, {a.shape}")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(e)) and np.all(np.isfinite(a))):
        raise ValueError("the sampled field holds non-finite values")
    dt = np.diff(t)
    if not (dt[0] > 0 and np.allclose(dt, dt[0], rtol=1e-6, atol=0)):
        raise ValueError("time must be uniform and increasing")
    spline_a = CubicSpline(t, a)
    spline_a2 = CubicSpline(t, a * a)
    return SampledField(t, e, a, spline_a.antiderivative()(t), spline_a2.antiderivative()(t))


@njit(cache=True, inline="always")
def _interp(table, start, inv_step, v):
    u = (v - start) * inv_step
    if u < 0.0 or u >= table.size - 1:
        return 0.0j
    i = int(u)
    f = u - i
    return table[i] * (1.0 - f) + table[i + 1] * f


@njit(cache=True, inline="always")
def _saddle(p1, p2, ip, dt, i, k, jj):
    """Momentum saddle point p_s and action S of the excursion from t_k to t_i
    (tau = (jj + 1) dt), from the running integrals P1 = int A and P2 = int A^2: the
    lines the harmonic dipole and the rescattered photoelectrons share."""
    tau = (jj + 1) * dt
    i1 = p1[i] - p1[k]
    ps = -i1 / tau
    # S = Ip tau + I2/2 - tau ps^2/2 with I1 = -tau ps: -tau ps^2/2 = i1 ps / 2
    phase = ip * tau + 0.5 * (p2[i] - p2[k]) + 0.5 * i1 * ps
    return ps, phase


@njit(cache=True, parallel=True, nogil=True)
def _dipole_kernel(a, e, p1, p2, ip, dt, w_short, w_long, table, start, inv_step, out_short, out_long):
    """out[i] = sum_j w[j] d*(p_s + A_i) E_k d(p_s + A_k) exp(-i S), k = i - j - 1."""
    n = a.size
    jmax = w_short.size
    for i in prange(n):
        acc_s = 0.0j
        acc_l = 0.0j
        for jj in range(min(jmax, i)):
            k = i - jj - 1
            if e[k] == 0.0:
                continue
            ps, phase = _saddle(p1, p2, ip, dt, i, k, jj)
            d_ret = _interp(table, start, inv_step, ps + a[i])
            d_ion = _interp(table, start, inv_step, ps + a[k])
            term = d_ret.conjugate() * d_ion * e[k] * complex(math.cos(phase), -math.sin(phase))
            acc_s += w_short[jj] * term
            acc_l += w_long[jj] * term
        out_short[i] = acc_s
        out_long[i] = acc_l


def _tau_weights(dt, count, period, window):
    """Quadrature weights times the momentum-saddle factor sqrt(2 pi / (i tau)).

    tau_j = j dt, j = 1..count. The integrand goes as tau^-1/2 at small tau; its
    integral over [0, dt] is 2 dt f(dt) for that law, and the trapezoid rule over
    [dt, inf) gives dt f(dt) / 2: the first weight is 2.5 dt, the others dt.
    """
    tau = dt * np.arange(1, count + 1)
    quad = np.full(count, dt)
    quad[0] = 2.5 * dt
    saddle = np.sqrt(2 * np.pi / (1j * tau))
    _, short, long_ = window.weights(tau, period)
    return quad * saddle * short, quad * saddle * long_


@dataclass(frozen=True, eq=False)
class SfaDipole:
    """The SFA dipole <x>(t) of the short and long branches (a.u.); total = short + long.

    Attributes
    ----------
    time : ndarray
        Uniform sample times (a.u.).
    short, long : ndarray
        <x>(t) from excursions weighted by the short and the long branch windows.
    ionization_potential, period : float
        Ip (hartree) and the optical period T used for the window (a.u.).
    window : ExcursionWindow
    """

    time: np.ndarray
    short: np.ndarray
    long: np.ndarray
    ionization_potential: float
    period: float
    window: ExcursionWindow

    @property
    def total(self) -> np.ndarray:
        return self.short + self.long


def sfa_dipole(field: SampledField, dipole: DipoleTable, ionization_potential, period,
               window: ExcursionWindow | None = None) -> SfaDipole:
    """SFA dipole of the ground state ``d`` in the sampled ``field`` (module docstring).

    Parameters
    ----------
    field : SampledField
        From :func:`sample_field`; its step sets the tau quadrature (see
        :data:`PHASE_PER_STEP` for the step that converges).
    dipole : DipoleTable
        ``d(v)`` of the ground state (:func:`dipole_table`), covering every kinetic
        momentum ``p_s + A`` the field makes.
    ionization_potential : float
        Ip > 0 (hartree): minus the ground-state energy on the same grid.
    period : float
        Optical period T of the fundamental (a.u.), the unit of the window.
    window : ExcursionWindow, optional
        Default :class:`ExcursionWindow()`.

    Returns
    -------
    SfaDipole
    """
    if not isinstance(field, SampledField) or not isinstance(dipole, DipoleTable):
        raise TypeError("field must be a SampledField and dipole a DipoleTable")
    ip, period = float(ionization_potential), float(period)
    if not (ip > 0 and math.isfinite(ip) and period > 0 and math.isfinite(period)):
        raise ValueError(f"ionization_potential and period must be positive and finite, got {ip}, {period}")
    window = window or ExcursionWindow()
    dt = field.step
    count = int(math.ceil(window.reach(period) / dt))
    w_short, w_long = _tau_weights(dt, count, period, window)
    n = field.time.size
    out_s = np.zeros(n, dtype=complex)
    out_l = np.zeros(n, dtype=complex)
    _dipole_kernel(field.vector_potential, field.electric, field.integral_a, field.integral_a2, ip, dt,
                   w_short, w_long, dipole.values, dipole.start, 1.0 / dipole.step, out_s, out_l)
    # x = -i sum + c.c. = 2 Im(sum)
    return SfaDipole(field.time, 2.0 * out_s.imag, 2.0 * out_l.imag, ip, period, window)


def sfa_time_step(ionization_potential, ponderomotive_energy) -> float:
    """Default time step (a.u.): PHASE_PER_STEP / (Ip + 4 Up), at most MAX_TIME_STEP."""
    rate = float(ionization_potential) + 4.0 * float(ponderomotive_energy)
    return min(MAX_TIME_STEP, PHASE_PER_STEP / rate)


def saddle_terms(field: SampledField, dipole: DipoleTable, ionization_potential, rows, steps):
    """The momentum-integrated integrand of :func:`sfa_dipole`, pair by pair (plain numpy).

    ``sqrt(2 pi / (i tau)) d*(p_s + A(t)) E(t') d(p_s + A(t')) exp(-i S)`` at return
    times ``t = time[rows]`` and excursions ``tau = steps * dt`` (arrays broadcast
    together; ``t' = t - tau`` on the grid). :func:`sfa_dipole` sums the same terms
    with its quadrature and window weights in a compiled loop; this vectorised form is
    the plain-numpy route of the same sum (the benchmark) and the unit the tests
    check against a brute-force momentum integral.

    Returns
    -------
    ndarray of complex
    """
    rows, steps = np.broadcast_arrays(np.asarray(rows, dtype=np.intp), np.asarray(steps, dtype=np.intp))
    if np.any(steps < 1) or np.any(rows - steps < 0) or np.any(rows >= field.time.size):
        raise ValueError("need 1 <= steps <= rows < len(time)")
    ip = float(ionization_potential)
    k = rows - steps
    tau = steps * field.step
    i1 = field.integral_a[rows] - field.integral_a[k]
    ps = -i1 / tau
    phase = ip * tau + 0.5 * (field.integral_a2[rows] - field.integral_a2[k]) + 0.5 * i1 * ps
    a = field.vector_potential
    return (np.sqrt(2 * np.pi / (1j * tau)) * np.conj(dipole(ps + a[rows])) * dipole(ps + a[k])
            * field.electric[k] * np.exp(-1j * phase))
