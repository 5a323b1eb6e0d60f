"""Strong-field approximation of the photoelectron spectrum in one dimension.

Conventions of :mod:`.sfa_harmonic` (electron charge -1, E = -dA/dt, length gauge,
continuum ``<x|v> = exp(i v x) / sqrt(2 pi)``). The final momentum p (A = 0 after the
pulse) is reached

* directly (first order in the field; Keldysh, Sov. Phys. JETP 20, 1307 (1965); in
  this form Lewenstein et al., Phys. Rev. A 49, 2117 (1994)):

      M0(p) = -i int dt E(t) d(p + A(t)) exp(i Phi_p(t)),
      Phi_p(t) = int_{t_s}^t (p + A)^2 / 2 + Ip t;

* after one elastic collision with the model's own potential V (first-order Born
  rescattering; Lohr, Klaiber, Becker et al., Phys. Rev. A 55, R4003 (1997) and
  Milosevic et al., J. Phys. B 39, R203 (2006), from memory), with the intermediate
  momentum k taken at its saddle point as for the harmonics:

      M1(p) = -int dt exp(i Phi_p(t)) int_0 dtau sqrt(2 pi / (i tau)) Vt(p - k_s)
                   E(t - tau) d(k_s + A(t - tau)) exp(-i S(t, tau)),

  ``Vt(q) = (1/2 pi) int exp(-i q x) V(x) dx`` on the run's grid, V brought smoothly
  to zero over the outer quarter of the box (:data:`POTENTIAL_TAPER`): a tail cut at
  the box edge would add a 1/q tail to Vt that swamps the backscattering of a
  soft-core atom (its Vt falls as exp(-a q)), and the cut leaves Vt finite at q = 0
  (forward scattering); k_s and S as in :mod:`.sfa_harmonic`.

``dP/dp = |M(p)|^2``; per side ``dP/dE = |M(p)|^2 / |p|`` at ``p = -sqrt(2E)`` (left)
and ``+sqrt(2E)`` (right). Pure numerics, atomic units, no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numba import njit, prange

from .sfa_harmonic import DipoleTable, ExcursionWindow, SampledField, _interp, _saddle, _tau_weights

__all__ = ["PotentialTable", "potential_table", "SfaPhotoelectrons", "sfa_photoelectrons",
           "INTERMEDIATE_STEP", "PHOTOELECTRON_WINDOW"]

#: spacing (a.u.) of the intermediate-momentum grid on which the excursion integral is
#: gathered before the collision: Vt(q) of a soft-core atom changes on the scale 1/a of
#: its softening (a ~ 1 bohr), so 0.01 a.u. resolves it with linear deposition
INTERMEDIATE_STEP = 0.01
#: excursions up to 1.5 T, tapered over 0.25 T: the first return of every trajectory
#: (up to 1 T) and the start of the second; the 10 Up backscattered electrons return
#: first (Paulus et al., J. Phys. B 27, L703 (1994), from memory)
PHOTOELECTRON_WINDOW = ExcursionWindow(end=1.5, taper=0.25, split=0.66, split_width=0.05)
#: V(x) is multiplied by cos^2 going from 1 to 0 over this outer fraction of each half box
POTENTIAL_TAPER = 0.25
#: times per block of the rescattering sum (memory: block x intermediate momenta)
_BLOCK = 1024


@dataclass(frozen=True, eq=False)
class PotentialTable:
    """``Vt(q) = (1/2 pi) int exp(-i q x) V(x) dx`` on a uniform momentum axis (a.u.)."""

    start: float
    step: float
    values: np.ndarray


def potential_table(x, potential_values, max_momentum, step=1e-3) -> PotentialTable:
    """Tabulate the Fourier transform of the model potential sampled on the run's grid.

    Parameters
    ----------
    x : array_like, shape (n,)
        Uniform grid (bohr).
    potential_values : array_like, shape (n,)
        V(x) (hartree); tapered to zero at the box edges (:data:`POTENTIAL_TAPER`).
    max_momentum : float
        Table over ``[-max_momentum, max_momentum]`` (a.u.).
    step : float
        Momentum spacing (a.u.).
    """
    x = np.asarray(x, dtype=float)
    v = np.asarray(potential_values, dtype=float)
    if x.ndim != 1 or v.shape != x.shape:
        raise ValueError(f"x and potential_values must be 1-D of equal length, got {x.shape}, {v.shape}")
    dx = float(x[1] - x[0])
    edge = np.max(np.abs(x))
    u = np.clip((np.abs(x) - (1 - POTENTIAL_TAPER) * edge) / (POTENTIAL_TAPER * edge), 0.0, 1.0)
    v = v * np.cos(0.5 * np.pi * u) ** 2
    count = 2 * int(math.ceil(float(max_momentum) / step)) + 1
    q = -step * (count // 2) + step * np.arange(count)
    values = np.zeros(count, dtype=complex)
    for block in np.array_split(np.arange(count), max(1, count * x.size // 2_000_000)):
        values[block] = np.exp(-1j * np.outer(q[block], x)) @ v * dx / (2 * math.pi)
    return PotentialTable(float(q[0]), float(step), values)


@njit(cache=True, parallel=True, nogil=True)
def _gather(first, count_t, a, e, p1, p2, ip, dt, weights, table, start, inv_step, k0, inv_dk, out):
    """out[i - first, m] += weight of excursions ending at t_i deposited at k_s ~ k_m."""
    jmax = weights.size
    nk = out.shape[1]
    for r in prange(count_t):
        i = first + r
        for jj in range(min(jmax, i)):
            k = i - jj - 1
            if e[k] == 0.0:
                continue
            ks, phase = _saddle(p1, p2, ip, dt, i, k, jj)
            d_ion = _interp(table, start, inv_step, ks + a[k])
            term = weights[jj] * d_ion * e[k] * complex(math.cos(phase), -math.sin(phase))
            u = (ks - k0) * inv_dk
            m = int(math.floor(u))
            f = u - m
            if 0 <= m < nk - 1:
                out[r, m] += term * (1.0 - f)
                out[r, m + 1] += term * f


@dataclass(frozen=True, eq=False)
class SfaPhotoelectrons:
    """SFA photoelectron spectra per side on an energy axis.

    Attributes
    ----------
    energy : ndarray
        Final kinetic energies E > 0 (hartree).
    direct_left, direct_right, rescattered_left, rescattered_right, total_left, total_right : ndarray
        dP/dE (hartree^-1) of the direct amplitude, the rescattered one and their
        coherent sum, towards -x (left) and +x (right).
    """

    energy: np.ndarray
    direct_left: np.ndarray
    direct_right: np.ndarray
    rescattered_left: np.ndarray
    rescattered_right: np.ndarray
    total_left: np.ndarray
    total_right: np.ndarray


@njit(cache=True, parallel=True, nogil=True)
def _direct_kernel(p, t, a, e, p1, p2, ip, dt, table, start, inv_step, out):
    """out[m] = -i dt sum_i E_i d(p_m + A_i) exp(i Phi_p(t_i))."""
    for m in prange(p.size):
        pk = p[m]
        acc = 0.0j
        for i in range(t.size):
            if e[i] == 0.0:
                continue
            phase = 0.5 * pk * pk * (t[i] - t[0]) + pk * p1[i] + 0.5 * p2[i] + ip * t[i]
            acc += e[i] * _interp(table, start, inv_step, pk + a[i]) * complex(math.cos(phase), math.sin(phase))
        out[m] = -1j * dt * acc


def _direct(field, dipole, ip, p):
    """M0(p) for an array of final momenta (a.u.)."""
    out = np.empty(p.size, dtype=complex)
    _direct_kernel(p, field.time, field.vector_potential, field.electric, field.integral_a, field.integral_a2,
                   ip, field.step, dipole.values, dipole.start, 1.0 / dipole.step, out)
    return out


def _phases(field, ip, p, rows):
    t = field.time[rows]
    return (0.5 * np.outer(p * p, t - field.time[0]) + np.outer(p, field.integral_a[rows])
            + 0.5 * field.integral_a2[rows] + ip * t)


def sfa_photoelectrons(field: SampledField, dipole: DipoleTable, potential: PotentialTable,
                       ionization_potential, period, energy, *, rescattering=True,
                       window: ExcursionWindow = PHOTOELECTRON_WINDOW) -> SfaPhotoelectrons:
    """Direct and rescattered SFA photoelectron spectra on ``energy`` (module docstring).

    Parameters
    ----------
    field : SampledField
        The pulse, sampled until the field has ended (A = 0 at the last sample).
    dipole : DipoleTable
        ``d(v)`` of the ground state.
    potential : PotentialTable
        ``Vt(q)`` of the model potential on the run's grid, covering |p - k_s|.
    ionization_potential : float
        Ip (hartree).
    period : float
        Optical period T (a.u.), the unit of ``window``.
    energy : array_like
        Final kinetic energies (hartree), positive.
    rescattering : bool
        Compute the rescattered amplitude (the costly part); otherwise it is zero.
    window : ExcursionWindow
        Excursion times of the rescattering integral.

    Returns
    -------
    SfaPhotoelectrons
    """
    energy = np.asarray(energy, dtype=float)
    if energy.ndim != 1 or energy.size < 2 or not np.all(energy > 0) or not np.all(np.isfinite(energy)):
        raise ValueError("energy must be a 1-D array of positive finite energies")
    ip, period = float(ionization_potential), float(period)
    if not (ip > 0 and period > 0):
        raise ValueError(f"ionization_potential and period must be positive, got {ip}, {period}")
    p_abs = np.sqrt(2 * energy)
    p = np.concatenate([-p_abs, p_abs])
    m0 = _direct(field, dipole, ip, p)
    m1 = np.zeros_like(m0)
    if rescattering:
        dt = field.step
        count = int(math.ceil(window.reach(period) / dt))
        w_short, w_long = _tau_weights(dt, count, period, window)
        weights = w_short + w_long
        a_max = float(np.max(np.abs(field.vector_potential)))
        k_axis = np.arange(-a_max - 2 * INTERMEDIATE_STEP, a_max + 2 * INTERMEDIATE_STEP, INTERMEDIATE_STEP)
        q = p[:, None] - k_axis[None, :]
        vt = (np.interp(q, potential.start + potential.step * np.arange(potential.values.size),
                        potential.values.real, left=0.0, right=0.0)
              + 1j * np.interp(q, potential.start + potential.step * np.arange(potential.values.size),
                               potential.values.imag, left=0.0, right=0.0))
        n = field.time.size
        for first in range(0, n, _BLOCK):
            rows = np.arange(first, min(n, first + _BLOCK))
            g = np.zeros((rows.size, k_axis.size), dtype=complex)
            _gather(first, rows.size, field.vector_potential, field.electric, field.integral_a,
                    field.integral_a2, ip, dt, weights, dipole.values, dipole.start, 1.0 / dipole.step,
                    float(k_axis[0]), 1.0 / INTERMEDIATE_STEP, g)
            if not np.any(g):
                continue
            collision = vt @ g.T  # (momenta, times)
            m1 -= dt * np.sum(collision * np.exp(1j * _phases(field, ip, p, rows)), axis=1)
    half = energy.size
    jac = 1.0 / p_abs

    def side(m):
        return np.abs(m[:half]) ** 2 * jac, np.abs(m[half:]) ** 2 * jac

    d_l, d_r = side(m0)
    r_l, r_r = side(m1)
    t_l, t_r = side(m0 + m1)
    return SfaPhotoelectrons(energy, d_l, d_r, r_l, r_r, t_l, t_r)
