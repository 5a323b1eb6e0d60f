"""The 1-D split-operator time loop in one compiled function, FFTW called from inside.

:meth:`Propagator.advance` on one electron on a line hands whole chunks of steps to
:func:`run_line`, which does exactly what the Python-driven loop does, in the same
order and with the same floating-point operations (so the results are bitwise the
same): per sub-step the fused kernels of :mod:`tdse1d.physics.kernels` and the two
FFTW plans of :class:`~tdse1d.physics.fftw_direct.LinePlans`; per step the observables
and, if asked, the surface-flux sample. A step then costs two FFTs and two passes over
memory with no return to the interpreter, near the floor of two transforms and the
point-wise products.

The driver is compiled without fast-math flags: the scalar arithmetic (phase angles,
the records) must round as the Python statements it replaces.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import math

from llvmlite import binding as _llvm
from numba import njit, types

from . import kernels
from .fftw_direct import AVAILABLE, LinePlans, fftw_execute

__all__ = ["AVAILABLE", "LinePlans", "run_line", "recorded_momentum"]

# CPython's abs(complex) is the C library's hypot and float ** 2 its pow; numba (and
# LLVM, which turns pow(x, 2) into x * x) round differently in the last bit now and then
_LIBM = ctypes.CDLL(ctypes.util.find_library("m"))
_llvm.add_symbol("tdse1d_c_hypot", ctypes.cast(_LIBM.hypot, ctypes.c_void_p).value)
_llvm.add_symbol("tdse1d_c_pow", ctypes.cast(_LIBM.pow, ctypes.c_void_p).value)
c_hypot = types.ExternalFunction("tdse1d_c_hypot", types.float64(types.float64, types.float64))
c_pow = types.ExternalFunction("tdse1d_c_pow", types.float64(types.float64, types.float64))


@njit(inline="always", error_model="numpy")
def recorded_momentum(carry, norm, kick_time, length, charge, field, vector_potential):
    """<P>(t_n) of a record, as ``Propagator._record_momentum``: the pending <K> of the
    step's first kinetic sub-step (``carry[0]``) times the norm, plus the first kick's
    impulse (``kick_time`` = its weight x dt) of the last record's mean force
    (``carry[1]``) and, in the length gauge, of the field; in the velocity gauge plus
    charge x A(t_n) x norm. Shared by the 1-D and 2-D compiled loops (same operations,
    same rounding)."""
    kick_force = carry[1]
    if length:
        kick_force += charge * field * norm
    p = carry[0] * norm + kick_time * kick_force
    if not length:
        p += charge * vector_potential * norm
    return p


if AVAILABLE:

    @njit(cache=True, nogil=True, error_model="numpy")
    def run_line(count, n0, forward, backward, psi, kick, kinetic, kick_c, kick_j, kinetic_w,
                 h, dx, dk, block, length, charge, every, x_first, k_first, coarse, fine, ones_c, ones_f,
                 ref_coarse, ref_fine, mask, x, grad, ref, k, e_mid, a_mid, electric, vecpot,
                 norm, dipole, momentum, acceleration, population, carry,
                 flux, f_dg, f_dh, f_first, f_dp, f_block, f_coarse, f_fine, f_right, f_left, stencil, f_dx,
                 f_radius_right, f_radius_left, scalars, volkov, step_phase, f_momenta,
                 surface_right, amp_right, surface_left, amp_left):
        """Take ``count`` steps from step ``n0``; returns the number taken before a norm
        check failed (``count`` if none did).

        Arrays are float64 views of the propagator's and the flux accumulator's work
        arrays (see :class:`~tdse1d.physics.line_step.LineStepper`); ``vecpot`` is A at
        every step, ``electric`` and the records at every ``every``-th step (record
        j is step j * every); ``carry`` holds the pending <k> of the first kinetic
        sub-step and <V'> of the last record, carried from one call to the next.
        """
        last = kick.shape[0] - 1
        # the linear-phase tables of the last angle (a Strang step's two kicks share their
        # midpoint field, so the second needs no new tables: bitwise the same)
        theta_tables = math.nan
        for step in range(count):
            n = n0 + step
            s0 = s1 = s2 = ovr = ovi = 0.0
            for i in range(last + 1):
                if length:
                    theta = 0.0
                    for q in range(2):
                        c = kick_c[i, q]
                        if c != 0.0:
                            theta += c * h * e_mid[n, kick_j[i, q]]
                    if theta != theta_tables:
                        kernels.linear_phase(theta, x_first, dx, block, coarse, fine)
                        theta_tables = theta
                    kc, kf = coarse, fine
                else:
                    kc, kf = ones_c, ones_f
                if i < last:
                    kernels.kick(psi, kick[i], kc, kf, block)
                    fftw_execute(forward)
                    if length:
                        lc, lf = ones_c, ones_f
                    else:
                        wh = kinetic_w[i] * h
                        kernels.linear_phase(wh * a_mid[n, i], k_first, dk, block, coarse, fine,
                                             0.5 * wh * a_mid[n, i] * a_mid[n, i])
                        lc, lf = coarse, fine
                    m0, m1 = kernels.kinetic_moment(psi, kinetic[i], lc, lf, block, k)
                    if i == 0:
                        carry[0] = m1 / m0 if m0 > 0 else 0.0
                    fftw_execute(backward)
                else:
                    a1 = vecpot[n + 1]
                    if (n + 1) % every == 0:
                        if not length and a1 != 0.0:
                            kernels.linear_phase(a1, x_first, dx, block, ref_coarse, ref_fine)
                            rc, rf = ref_coarse, ref_fine
                        else:
                            rc, rf = ones_c, ones_f
                        s0, s1, s2, ovr, ovi = kernels.kick_observe(psi, kick[i], kc, kf, block, mask, x, grad,
                                                                   ref, rc, rf)
                    else:
                        kernels.kick_absorb(psi, kick[i], kc, kf, block, mask)
                    if flux:
                        kernels.linear_phase(-f_dg[n], f_first, f_dp, f_block, f_coarse, f_fine, -0.5 * f_dh[n])
                        kernels.surface_terms(psi, f_right, stencil, f_dx, f_radius_right, a1, length, scalars, 0)
                        kernels.surface_terms(psi, f_left, stencil, f_dx, f_radius_left, a1, length, scalars, 2)
                        kernels.flux_accumulate(volkov, step_phase, f_coarse, f_fine, f_block, f_momenta, True,
                                                h, scalars[0], scalars[1], surface_right, amp_right,
                                                -h, scalars[2], scalars[3], surface_left, amp_left)
            if n % every == 0:
                # <p>(t_n): as Propagator._record_momentum
                j = n // every
                momentum[j] = recorded_momentum(carry, norm[j], kick_c[0, 0] * h, length, charge, e_mid[n, 0],
                                                vecpot[n])
            if (n + 1) % every == 0:
                # the position records of t_{n+1}: as Propagator._record_position
                j = (n + 1) // every
                norm[j] = s0 * dx
                dipole[j] = s1 * dx
                acceleration[j] = -s2 * dx - charge * electric[j] * s0 * dx
                # abs(complex) ** 2 as CPython computes it: the C library's hypot and pow
                population[j] = c_pow(c_hypot(ovr * dx, ovi * dx), 2.0)
                carry[1] = s2 * dx
                if not (norm[j] <= norm[j - 1] * (1 + 1e-9) + 1e-12):
                    return step
        return count

else:  # pragma: no cover - only without the FFTW library pyfftw uses
    run_line = None
