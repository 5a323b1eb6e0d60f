"""Quantum orbits: the complex saddle points of the SFA harmonic dipole in time.

For a harmonic of photon energy Omega the stationary points of the SFA action in the
ionization time t', the return time t and the canonical momentum p solve (Lewenstein
et al., Phys. Rev. A 49, 2117 (1994); conventions of :mod:`.sfa_harmonic`)

    (p + A(t'))^2 / 2 + Ip = 0          (tunnelling: ionization time complex)
    int_{t'}^{t} (p + A) dt'' = 0        (return to the ion)
    (p + A(t))^2 / 2 + Ip = Omega        (recombination).

They are solved for a locally monochromatic field ``A(t) = A0 sin(theta)``, ``theta =
w t + phi``, fitted to the sampled A(t) around each crest of the field: the equations
need A at complex times, which a sampled field does not give. ``Re t`` is the emission
time of the quantum orbit; the short and long orbits of a half cycle approach each
other closest at the cutoff (the branch point), which for Ip << Up lies at
``3.17 Up + 1.32 Ip`` (Lewenstein 1994). Pure numerics, atomic units, no I/O.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

__all__ = ["OrbitBranches", "monochromatic_orbits", "cutoff_law", "HalfCycleOrbits", "pulse_orbits", "CREST_FRACTION"]

#: half cycles whose crest field is at least this fraction of the largest are analysed
#: (the central ones, where the emission-time comparison is made)
CREST_FRACTION = 0.6
#: Newton iterations and tolerance of the saddle-point solve
_NEWTON_STEPS = 60
_NEWTON_TOL = 1e-11
#: classical birth phase of the cutoff trajectory, 17 degrees after the crest
#: (Corkum, Phys. Rev. Lett. 71, 1994 (1993), from memory), refined here numerically
_CUTOFF_BIRTH_GUESS = math.radians(17.0)


@dataclass(frozen=True, eq=False)
class OrbitBranches:
    """Short and long quantum orbits of one half cycle of ``A = A0 sin(theta)``.

    Phases ``theta = w t`` measured from the field crest (E extremal at theta = 0).

    Attributes
    ----------
    energy : ndarray
        Photon energies Omega (hartree), increasing, up to and beyond the cutoff.
    birth_short, return_short, birth_long, return_long : ndarray of complex
        Complex ionization and return phases (rad) of each branch at each energy.
    cutoff : float
        Photon energy (hartree) where the two branches approach closest.
    cutoff_index : int
        Index of ``energy`` nearest that point.
    """

    energy: np.ndarray
    birth_short: np.ndarray
    return_short: np.ndarray
    birth_long: np.ndarray
    return_long: np.ndarray
    cutoff: float
    cutoff_index: int


def _newton(z, a0, ip, omega_photon):
    """Solve the two saddle-point equations for (theta', theta) by Newton from ``z``.

    With q = (cos theta - cos theta') / (theta - theta') (= p / A0 at the saddle):
    f1 = A0^2 (q + sin theta')^2 + 2 Ip, f2 = A0^2 (q + sin theta)^2 + 2 Ip - 2 Omega;
    analytic Jacobian (dq/dtheta' = (sin theta' + q) / tau, dq/dtheta = -(sin theta + q) / tau).
    Returns None when Newton does not converge.
    """
    t0, t1 = complex(z[0]), complex(z[1])
    a2 = a0 * a0
    for _ in range(_NEWTON_STEPS):
        tau = t1 - t0
        if tau == 0:
            return None
        s0, s1 = cmath.sin(t0), cmath.sin(t1)
        q = (cmath.cos(t1) - cmath.cos(t0)) / tau
        u0, u1 = q + s0, q + s1
        f1 = a2 * u0 * u0 + 2 * ip
        f2 = a2 * u1 * u1 + 2 * ip - 2 * omega_photon
        dq0, dq1 = u0 / tau, -u1 / tau
        j11 = 2 * a2 * u0 * (dq0 + cmath.cos(t0))
        j12 = 2 * a2 * u0 * dq1
        j21 = 2 * a2 * u1 * dq0
        j22 = 2 * a2 * u1 * (dq1 + cmath.cos(t1))
        det = j11 * j22 - j12 * j21
        if det == 0:
            return None
        d0 = (j22 * f1 - j12 * f2) / det
        d1 = (j11 * f2 - j21 * f1) / det
        # damped: a step longer than 0.6 rad could jump to another branch
        size = max(abs(d0), abs(d1))
        if size > 0.6:
            d0, d1 = d0 * 0.6 / size, d1 * 0.6 / size
        t0, t1 = t0 - d0, t1 - d1
        if size < _NEWTON_TOL:
            return (t0, t1)
    return None


def _classical_return(birth):
    """First return phase of a classical electron born at rest at phase ``birth``."""
    def x(theta):
        return np.cos(birth) - np.cos(theta) - np.sin(birth) * (theta - birth)
    grid = np.linspace(birth + 1e-3, birth + 2.5 * math.pi, 600)
    values = x(grid)
    sign = np.flatnonzero(np.sign(values[1:]) != np.sign(values[:-1]))
    if not sign.size:
        return math.nan
    i = sign[0]
    return brentq(x, grid[i], grid[i + 1], xtol=1e-14)


def monochromatic_orbits(ionization_potential, vector_amplitude, omega, energies=None) -> OrbitBranches:
    """Short and long quantum orbits of ``A = A0 sin(w t)`` for photon energies.

    Each branch is followed by continuation in the photon energy from a classical
    orbit in the plateau (birth 40 degrees after the crest for the short branch, 8 for
    the long one), upwards through the cutoff and downwards to Ip.

    Parameters
    ----------
    ionization_potential : float
        Ip > 0 (hartree).
    vector_amplitude : float
        A0 > 0 (a.u.); Up = A0^2 / 4.
    omega : float
        Angular frequency w (a.u.).
    energies : array_like, optional
        Photon energies (hartree), increasing; default 400 from Ip to Ip + 4.5 Up.

    Returns
    -------
    OrbitBranches
    """
    ip, a0, w = float(ionization_potential), float(vector_amplitude), float(omega)
    if not (ip > 0 and a0 > 0 and w > 0):
        raise ValueError(f"Ip, A0 and omega must be positive, got {ip}, {a0}, {w}")
    up = a0 * a0 / 4
    energies = (np.linspace(ip + 1e-3 * up, ip + 4.5 * up, 400) if energies is None
                else np.asarray(energies, dtype=float))
    out = {}
    for name, birth in (("short", math.radians(40.0)), ("long", math.radians(8.0))):
        back = _classical_return(birth)
        omega_start = ip + 2 * up * (math.sin(back) - math.sin(birth)) ** 2
        z = _newton([birth + 0.3j * math.sqrt(ip / up), back + 0.05j], a0, ip, omega_start)
        if z is None:
            raise ValueError(f"no {name} quantum orbit found near the classical one (Ip/Up = {ip / up:.3g})")
        births = np.full(energies.size, np.nan + 0j)
        returns = np.full(energies.size, np.nan + 0j)
        start = int(np.searchsorted(energies, omega_start))
        for order in (range(start, energies.size), range(start - 1, -1, -1)):
            current = z
            level = omega_start
            for i in order:
                # a few sub-steps between samples keep Newton on the branch
                for sub in np.linspace(level, energies[i], 3)[1:]:
                    nxt = _newton(current, a0, ip, sub)
                    if nxt is None:
                        break
                    current = nxt
                else:
                    births[i], returns[i] = current
                    level = energies[i]
                    continue
                break
        out[name] = (births, returns)
    gap = np.abs(out["short"][1] - out["long"][1]) + np.abs(out["short"][0] - out["long"][0])
    gap = np.where(np.isfinite(gap), gap, np.inf)
    k = int(np.argmin(gap))
    cutoff = float(energies[k])
    if 0 < k < energies.size - 1 and np.all(np.isfinite(gap[k - 1:k + 2])):
        # the gap closes like |Omega - Omega_c|^1/2 at a branch point: refine on gap^2
        y = gap[k - 1:k + 2] ** 2
        x = energies[k - 1:k + 2]
        curvature = y[0] - 2 * y[1] + y[2]
        if curvature > 0:
            cutoff = float(x[1] + 0.5 * (x[1] - x[0]) * (y[0] - y[2]) / curvature)
    return OrbitBranches(energies, out["short"][0], out["short"][1], out["long"][0], out["long"][1], cutoff, k)


def cutoff_law(ionization_potential, ponderomotive_energy, samples=300) -> float:
    """The SFA cutoff law ``Ip F(Ip/Up) + 3.17 Up`` of Lewenstein et al. (1994): the
    quantum-orbit cutoff (branch point) of a monochromatic field of that Up (hartree).

    The saddle-point equations in the phase ``w t`` do not hold w, so the branch point
    in units of Up depends on Ip/Up alone: F near 1.32 for Ip << Up, decreasing slowly
    towards 1 as Ip/Up grows (docs/sfa.md gives the values measured in the tests).

    Parameters
    ----------
    ionization_potential, ponderomotive_energy : float
        Ip > 0 and Up > 0 (hartree).
    samples : int
        Photon energies the branches are followed on, over
        [Ip + 2.6 Up, 1.4 Ip + 3.8 Up] (the branch point lies inside for every Ip/Up:
        F between 1 and 1.32); the point is refined between samples
        (:func:`monochromatic_orbits`).

    Returns
    -------
    float
        The cutoff photon energy (hartree).
    """
    ip, up = float(ionization_potential), float(ponderomotive_energy)
    if not (ip > 0 and up > 0):
        raise ValueError(f"Ip and Up must be positive, got {ip}, {up}")
    energies = np.linspace(ip + 2.6 * up, 1.4 * ip + 3.8 * up, int(samples))
    return monochromatic_orbits(ip, 2 * math.sqrt(up), 1.0, energies).cutoff


@dataclass(frozen=True, eq=False)
class HalfCycleOrbits:
    """Quantum orbits of one half cycle of a pulse, in the pulse's own time (a.u.).

    Attributes
    ----------
    crest_time : float
        Time of the field crest the orbits are born after.
    ponderomotive_energy : float
        Local Up = A0^2 / 4 of the fitted monochromatic field (hartree).
    energy : ndarray
        Photon energies (hartree).
    emission_short, emission_long : ndarray
        ``Re t`` of the return of each branch (a.u.); NaN beyond the cutoff.
    ionization_short, ionization_long : ndarray
        ``Re t'`` (a.u.); NaN beyond the cutoff.
    cutoff : float
        Quantum-orbit cutoff of this half cycle (hartree).
    """

    crest_time: float
    ponderomotive_energy: float
    energy: np.ndarray
    emission_short: np.ndarray
    emission_long: np.ndarray
    ionization_short: np.ndarray
    ionization_long: np.ndarray
    cutoff: float


def _local_fit(time, a, omega, crest):
    """A0, phase of A ~ A0 sin(w (t - crest) + phi) over the excursions after a crest."""
    period = 2 * math.pi / omega
    sel = (time >= crest - 0.25 * period) & (time <= crest + period)
    u = omega * (time[sel] - crest)
    basis = np.column_stack([np.sin(u), np.cos(u)])
    (s, c), *_ = np.linalg.lstsq(basis, a[sel], rcond=None)
    return math.hypot(s, c), math.atan2(c, s)


def pulse_orbits(time, electric, vector_potential, omega, ionization_potential, energies=None,
                 crest_fraction=CREST_FRACTION) -> tuple[HalfCycleOrbits, ...]:
    """Quantum orbits of each central half cycle of a sampled pulse.

    Around each crest of |E| of at least ``crest_fraction`` of the largest, A(t) is
    fitted over [crest - T/4, crest + T] by ``A0 sin(w (t - crest) + phi)``; the orbits
    of that field (:func:`monochromatic_orbits`) are shifted onto the pulse's time.

    Parameters
    ----------
    time, electric, vector_potential : array_like, shape (n,)
        Uniform samples of t, E(t), A(t) (a.u.), E = -dA/dt.
    omega : float
        Carrier angular frequency (a.u.).
    ionization_potential : float
        Ip (hartree).
    energies : array_like, optional
        Photon energies (hartree); default 400 from Ip to Ip + 4.5 Up of the largest
        crest.
    crest_fraction : float
        See above.

    Returns
    -------
    tuple of HalfCycleOrbits
        In time order.
    """
    t = np.asarray(time, dtype=float)
    e = np.asarray(electric, dtype=float)
    a = np.asarray(vector_potential, dtype=float)
    mag = np.abs(e)
    crests = np.flatnonzero((mag[1:-1] >= mag[:-2]) & (mag[1:-1] > mag[2:])) + 1
    crests = crests[mag[crests] >= crest_fraction * mag.max()]
    period = 2 * math.pi / omega
    crests = crests[(t[crests] - 0.25 * period >= t[0]) & (t[crests] + period <= t[-1])]
    fits = [_local_fit(t, a, omega, t[i]) for i in crests]
    if energies is None and fits:
        up = max(f[0] for f in fits) ** 2 / 4
        energies = np.linspace(ionization_potential + 1e-3 * up, ionization_potential + 4.5 * up, 400)
    out = []
    for i, (a0, phi) in zip(crests, fits):
        # E is extremal where theta = w (t - crest) + phi is a multiple of pi; orbits
        # of A0 sin(theta) are computed with the crest at theta = 0
        crest_phase = math.pi * round(phi / math.pi)
        orbits = monochromatic_orbits(ionization_potential, a0, omega, energies)
        shift = t[i] + (crest_phase - phi) / omega
        beyond = np.arange(orbits.energy.size) > orbits.cutoff_index
        def real(z):
            return np.where(beyond, np.nan, z.real / omega + shift)
        out.append(HalfCycleOrbits(float(t[i]), a0 * a0 / 4, orbits.energy, real(orbits.return_short),
                                   real(orbits.return_long), real(orbits.birth_short), real(orbits.birth_long),
                                   orbits.cutoff))
    return tuple(out)
