"""A quasi-static WKB tunnelling estimate of the ionization yield for the model's own
one-dimensional potential, with the classical period of a bound orbit and the
barrier-suppression field. Pure numerics on arrays, atomic units; the field and sign
conventions are those of :mod:`tdse1d.semiclassical.three_step`.

Potentials
----------
The tunnelling functions accept any object ``potential`` with methods
``value(x)`` and ``gradient(x)`` that map a 1-D float array of positions
(bohr) to arrays of the same shape (hartree, hartree/bohr).  The potential
must be attractive, ``V(x) <= 0``, and vanish far from the centres, as the
soft-core sums ``-Z / sqrt((x - xc)**2 + a**2)`` do.  No symmetry is assumed:
the two signs of the field are treated separately.
"""

import numpy as np
from scipy.integrate import cumulative_trapezoid, quad
from scipy.interpolate import CubicSpline
from scipy.optimize import brentq, minimize_scalar


# --------------------------------------------------------------------------
# Quasi-static tunnelling
# --------------------------------------------------------------------------

# Samples of U(x) - E used to locate turning points; they are then refined by
# brentq, so this only limits how narrow a forbidden region can be resolved.
_BARRIER_SAMPLES = 2049
_BOUND_SAMPLES = 8193
# Gauss-Legendre rule for the barrier integral in the variable theta with
# x = a + (b - a) (1 - cos theta) / 2, which makes sqrt(U - E) analytic at the
# turning points.
_GL_X, _GL_W = np.polynomial.legendre.leggauss(64)
_TABLE_NODES = 256
# exp(-700) ~ 1e-304: below the field where the barrier exponent of a pure
# linear ramp reaches this value the rate is set to zero.
_MAX_EXPONENT = 700.0


class _Mirrored:
    """The potential seen after ``x -> -x``, so that every field is positive."""

    def __init__(self, potential):
        self._potential = potential

    def value(self, x):
        return self._potential.value(-x)

    def gradient(self, x):
        return -self._potential.gradient(-x)


def _oriented(potential, sign):
    return potential if sign > 0 else _Mirrored(potential)


def _check_potential(potential, energy):
    for method in ("value", "gradient"):
        if not callable(getattr(potential, method, None)):
            raise TypeError(f"potential must have a callable {method}(x) method")
    probe = np.linspace(-1.0, 1.0, 3)
    for method in ("value", "gradient"):
        out = np.asarray(getattr(potential, method)(probe))
        if out.shape != probe.shape:
            raise ValueError(
                f"potential.{method}(x) must return an array shaped like x, "
                f"got shape {out.shape} for input shape {probe.shape}"
            )
    energy = float(energy)
    if not (np.isfinite(energy) and energy < 0.0):
        raise ValueError(f"energy must be a negative bound-state energy, got {energy}")
    return energy


def _scalar(function, x):
    return float(function(np.array([x]))[0])


def _allowed_intervals(potential, energy):
    """Classically allowed intervals ``V(x) < E`` of the field-free potential."""
    extent = 4.0
    while min(_scalar(potential.value, -extent), _scalar(potential.value, extent)) <= 0.25 * energy:
        extent *= 2.0
        if extent > 1e5:
            raise ValueError("potential does not decay to zero within |x| < 1e5 bohr")
    x = np.linspace(-extent, extent, _BOUND_SAMPLES)
    v = np.asarray(potential.value(x), dtype=float)
    if not np.all(np.isfinite(v)):
        raise ValueError("potential.value returned non-finite values")
    if np.max(v) > 1e-12 * abs(energy):
        raise ValueError("potential must be attractive (V <= 0) for the tunnelling estimate")
    inside = v < energy
    if not inside.any():
        raise ValueError(
            f"energy {energy} lies below the minimum {np.min(v):.6g} of the potential"
        )
    edges = np.flatnonzero(inside[1:] != inside[:-1])

    def shifted(s):
        return _scalar(potential.value, s) - energy

    roots = [brentq(shifted, x[i], x[i + 1], xtol=1e-14, rtol=1e-15) for i in edges]
    return list(zip(roots[::2], roots[1::2]))


def classical_period(potential, energy):
    """Period of the field-free classical bound motion at a given energy.

    ``T = 2 * sum_i int_{a_i}^{b_i} dx / sqrt(2 (E - V(x)))`` over all
    classically allowed intervals ``V < E``.  For a multi-well potential
    whose wells are classically disconnected at this energy the sum counts
    every well once, which is the attempt period of a state shared between
    them.

    Parameters
    ----------
    potential : object
        Has ``value(x)`` (hartree) and ``gradient(x)`` (hartree/bohr), see the
        module docstring.
    energy : float
        Bound-state energy (hartree, negative).

    Returns
    -------
    float
        Classical period (a.u. of time).
    """
    energy = _check_potential(potential, energy)
    total = 0.0
    for a, b in _allowed_intervals(potential, energy):
        half = 0.5 * (b - a)

        def integrand(theta):
            x = a + half * (1.0 - np.cos(theta))
            kinetic = energy - _scalar(potential.value, x)
            return half * np.sin(theta) / np.sqrt(2.0 * kinetic) if kinetic > 0.0 else 0.0

        value, _ = quad(integrand, 0.0, np.pi, limit=200, epsabs=0.0, epsrel=1e-11)
        total += 2.0 * value
    return total


def _barrier_profile(potential, energy, field, intervals):
    """Grid and ``U - E`` between the outer exit region and the well (field > 0).

    The electron starts at the lowest point of ``U`` inside the down-field
    (leftmost) allowed interval and leaves towards ``-x``.  Because
    ``V <= 0``, ``U < E`` for every ``x < E / field``, so the grid starts a
    little beyond that point.
    """
    a, b = intervals[0]
    well = np.linspace(a, b, 257)
    start = well[np.argmin(potential.value(well) + field * well)]
    x = np.linspace(1.01 * energy / field - 1.0, start, _BARRIER_SAMPLES)
    return x, potential.value(x) + field * x - energy


def _wkb_exponent(potential, energy, field, intervals):
    """``2 int sqrt(2 (U - E)) dx`` over the forbidden region for ``field > 0``."""
    x, excess = _barrier_profile(potential, energy, field, intervals)
    forbidden = excess > 0.0
    if not forbidden.any():
        return 0.0

    def shifted(s):
        return _scalar(potential.value, s) + field * s - energy

    edges = np.flatnonzero(forbidden[1:] != forbidden[:-1])
    bounds = [brentq(shifted, x[i], x[i + 1], xtol=1e-13, rtol=1e-15) for i in edges]
    if forbidden[-1]:
        bounds.append(x[-1])
    theta = 0.5 * np.pi * (1.0 + _GL_X)
    total = 0.0
    for lo, hi in zip(bounds[::2], bounds[1::2]):
        half = 0.5 * (hi - lo)
        s = lo + half * (1.0 - np.cos(theta))
        momentum = np.sqrt(2.0 * np.maximum(potential.value(s) + field * s - energy, 0.0))
        total += 2.0 * 0.5 * np.pi * half * np.sum(_GL_W * momentum * np.sin(theta))
    return total


def _barrier_top(potential, energy, field, intervals):
    """Height of the highest point of ``U - E`` on the way out (field > 0)."""
    x, excess = _barrier_profile(potential, energy, field, intervals)
    i = int(np.argmax(excess))
    lo, hi = x[max(i - 1, 0)], x[min(i + 1, x.size - 1)]
    result = minimize_scalar(
        lambda s: -(_scalar(potential.value, s) + field * s - energy),
        bounds=(lo, hi), method="bounded", options={"xatol": 1e-10 * max(1.0, abs(x[i]))},
    )
    return max(excess[i], -result.fun)


def _suppression_field(potential, energy, intervals):
    """Barrier-suppression field for field > 0 (see barrier_suppression_field)."""
    # Coulomb value Ip**2 / (4 Z) with Z = 1 as the starting guess.
    low = high = 0.25 * energy ** 2
    for _ in range(200):
        if _barrier_top(potential, energy, low, intervals) > 0.0:
            break
        low *= 0.5
    else:
        raise ValueError("no potential barrier found on the down-field side")
    for _ in range(200):
        if _barrier_top(potential, energy, high, intervals) <= 0.0:
            break
        high *= 2.0
    else:
        raise ValueError("barrier is not suppressed by any field strength")
    return brentq(lambda f: _barrier_top(potential, energy, f, intervals),
                  low, high, xtol=1e-15, rtol=1e-13)


def barrier_suppression_field(potential, energy, field_sign=1):
    """Field at which the down-field barrier top drops to the bound energy.

    Solves ``max_x [V(x) + F x] = E`` on the exit side for ``F`` with brentq.
    For a Coulomb potential ``-Z/|x|`` this is ``Ip**2 / (4 Z)`` (common
    practice).

    Parameters
    ----------
    potential : object
        Has ``value(x)`` and ``gradient(x)``, see the module docstring.
    energy : float
        Bound-state energy (hartree, negative).
    field_sign : {1, -1}, optional
        Sign of the field; ``+1`` lowers the barrier at ``x < 0``.

    Returns
    -------
    float
        Barrier-suppression field strength (a.u., positive).
    """
    energy = _check_potential(potential, energy)
    if field_sign not in (1, -1):
        raise ValueError(f"field_sign must be 1 or -1, got {field_sign!r}")
    oriented = _oriented(potential, field_sign)
    return _suppression_field(oriented, energy, _allowed_intervals(oriented, energy))


def tunnelling_rate(field_strength, potential, energy):
    """Quasi-static WKB tunnelling rate through the field-lowered barrier.

    ``Gamma(F) = exp(-2 int sqrt(2 (U(x) - E)) dx) / T``, with
    ``U(x) = V(x) + F x``, the integral over the classically forbidden region
    between the well and the outside on the down-field side, and ``T`` the
    field-free classical period (:func:`classical_period`).  This is the
    Gamow/WKB barrier-penetration estimate (Landau and Lifshitz, Quantum
    Mechanics, section 50, from memory).  For a short-range well in a weak
    field the exponent tends to ``(2/3) (2 Ip)**1.5 / F``, the exponent of the
    Keldysh/ADK rate (Keldysh, Sov. Phys. JETP 20, 1307 (1965), from memory).
    When no forbidden region is left (above barrier suppression) the rate
    saturates at ``1/T``.

    The field-free period is used rather than the period in ``U``: the latter
    diverges logarithmically as the barrier top approaches ``E`` and would make
    the estimate fall to zero at the barrier-suppression field; both agree in
    the weak-field limit where the estimate is meaningful.

    Parameters
    ----------
    field_strength : array_like
        Signed electric field ``F`` (a.u.).  ``F > 0`` pushes the electron
        towards ``-x``.
    potential : object
        Has ``value(x)`` and ``gradient(x)``, see the module docstring.
    energy : float
        Bound-state energy (hartree, negative).

    Returns
    -------
    ndarray or float
        Rate (1 / a.u. of time), same shape as ``field_strength``.
    """
    energy = _check_potential(potential, energy)
    field = np.asarray(field_strength, dtype=float)
    if not np.all(np.isfinite(field)):
        raise ValueError("field_strength contains non-finite values")
    period = classical_period(potential, energy)
    rate = np.zeros(field.shape)
    for sign in (1, -1):
        chosen = sign * field > 0.0
        if not chosen.any():
            continue
        oriented = _oriented(potential, sign)
        intervals = _allowed_intervals(oriented, energy)
        exponents = [_wkb_exponent(oriented, energy, f, intervals) for f in np.abs(field[chosen])]
        rate[chosen] = np.exp(-np.asarray(exponents)) / period
    return rate[()] if rate.ndim == 0 else rate


class _RateTable:
    """Tabulated rate for one field sign, interpolated in ``log F``.

    ``F * W(F)`` (``W`` the WKB exponent) varies slowly, from the Keldysh
    constant ``(2/3) (2 Ip)**1.5`` at weak field to zero at barrier
    suppression, so a cubic spline of it resolves the exponent finely where
    the rate matters.
    """

    def __init__(self, potential, energy, period):
        intervals = _allowed_intervals(potential, energy)
        self.period = period
        self.suppression = _suppression_field(potential, energy, intervals)
        keldysh = (2.0 / 3.0) * (-2.0 * energy) ** 1.5
        self.weakest = min(keldysh / _MAX_EXPONENT, 0.01 * self.suppression)
        nodes = np.geomspace(self.weakest, self.suppression, _TABLE_NODES)
        exponents = np.array([_wkb_exponent(potential, energy, f, intervals) for f in nodes])
        self.spline = CubicSpline(np.log(nodes), nodes * exponents)

    def __call__(self, field):
        rate = np.zeros(field.shape)
        rate[field > self.suppression] = 1.0 / self.period
        tabulated = (field >= self.weakest) & (field <= self.suppression)
        f = field[tabulated]
        exponent = np.maximum(self.spline(np.log(f)) / f, 0.0)
        rate[tabulated] = np.exp(-exponent) / self.period
        return rate


def tunnelling_yield(time, electric, potential, energy):
    """Quasi-static tunnelling ionization probability accumulated over a pulse.

    ``P(t) = 1 - exp(-int_{t_0}^{t} Gamma(E(t')) dt')`` with the rate of
    :func:`tunnelling_rate`, evaluated from a table of field strengths per
    field sign (log-spaced up to the barrier-suppression field) and
    integrated by the trapezoidal rule.  Rates whose exponent exceeds about
    700 are set to zero.

    Parameters
    ----------
    time : array_like, shape (m,)
        Increasing time grid (a.u.).
    electric : array_like, shape (m,)
        Electric field ``E(t)`` (a.u.).
    potential : object
        Has ``value(x)`` and ``gradient(x)``, see the module docstring.
    energy : float
        Bound-state energy (hartree, negative).

    Returns
    -------
    ndarray, shape (m,)
        Ionization probability up to each time (dimensionless, in [0, 1]).
    """
    energy = _check_potential(potential, energy)
    time = np.asarray(time, dtype=float)
    electric = np.asarray(electric, dtype=float)
    if time.ndim != 1 or time.size < 2:
        raise ValueError(f"time must be 1-D with at least 2 samples, got shape {time.shape}")
    if electric.shape != time.shape:
        raise ValueError(f"electric has shape {electric.shape}, time has shape {time.shape}")
    if not (np.all(np.isfinite(time)) and np.all(np.isfinite(electric))):
        raise ValueError("time and electric must be finite")
    if not np.all(np.diff(time) > 0.0):
        raise ValueError("time must be strictly increasing")
    rate = tunnelling_rates(electric, potential, energy)
    return -np.expm1(-cumulative_trapezoid(rate, time, initial=0.0))


def tunnelling_rates(electric, potential, energy):
    """The rate of :func:`tunnelling_rate` at each sample of a field history, from a
    table of field strengths per field sign (as :func:`tunnelling_yield` uses it).

    Parameters
    ----------
    electric : array_like
        Electric field samples ``E(t)`` (a.u.).
    potential : object
        Has ``value(x)`` and ``gradient(x)``, see the module docstring.
    energy : float
        Bound-state energy (hartree, negative).

    Returns
    -------
    ndarray
        Rate (1 / a.u. of time), shaped like ``electric``.
    """
    energy = _check_potential(potential, energy)
    electric = np.asarray(electric, dtype=float)
    if not np.all(np.isfinite(electric)):
        raise ValueError("electric must be finite")
    rate = np.zeros(electric.shape)
    for sign in (1, -1):
        chosen = sign * electric > 0.0
        if chosen.any():
            rate[chosen] = _rate_table(potential, energy, sign)(np.abs(electric[chosen]))
    return rate


#: rate tables made in this process, by (potential, energy, field sign): a table depends
#: on the atom and its level only, so a scan's points over the laser share it (building
#: one is 256 WKB integrals, 0.06-0.08 s; most recent last, at most this many kept)
_TABLES: dict = {}
_MAX_TABLES = 16


def _rate_table(potential, energy, sign) -> _RateTable:
    """The :class:`_RateTable` of ``potential`` for a field of ``sign``, made once per
    process for a hashable potential (the frozen dataclasses of
    :mod:`tdse1d.physics.potentials`): the same object, so the same rates to the last bit."""
    try:
        key = (potential, float(energy), int(sign))
        hash(key)
    except TypeError:  # a potential that cannot be a key: made each time
        return _RateTable(_oriented(potential, sign), energy, classical_period(potential, energy))
    table = _TABLES.pop(key, None)
    if table is None:
        table = _RateTable(_oriented(potential, sign), energy, classical_period(potential, energy))
        while len(_TABLES) >= _MAX_TABLES:
            _TABLES.pop(next(iter(_TABLES)))
    _TABLES[key] = table
    return table
