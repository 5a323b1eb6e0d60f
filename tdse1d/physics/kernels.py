"""Fused point-wise kernels of the split-operator step (compiled with numba).

A split-operator step is two FFTs and a few point-wise products. Done one numpy
operation at a time, each product is a separate pass over memory and the observables
(norm, dipole, force, momentum) are more passes; here each half of the step is one
loop that multiplies and accumulates in the same pass.

Field-dependent phases are linear in x (length gauge, x E) or in k (velocity gauge,
k A). Rather than an ``exp`` of the whole array every step, such a phase
exp(-i theta u_j), with u_j = u_0 + j du on blocks of length B, is factored as
``coarse[b] * fine[m]`` for j = b B + m: two short arrays of about sqrt(N) values each.
"""

from __future__ import annotations

import numpy as np
from numba import njit

__all__ = [
    "block_size", "linear_phase", "kick", "kick_observe", "kick_absorb", "kinetic_moment",
    "density_moments", "observe", "surface_values", "surface_terms", "flux_accumulate", "plane_wave_sum",
]


def block_size(points: int) -> int:
    """A block length B dividing points/2 (so no block straddles k = 0), near sqrt(N)."""
    half = points // 2
    best = 1
    for b in range(1, half + 1):
        if half % b == 0 and b * b <= 4 * points:
            best = b
    return best


@njit(cache=True, nogil=True)
def linear_phase(theta, first, step, block, coarse, fine, offset=0.0):
    """Fill ``coarse``, ``fine`` (float64 views of complex arrays) so that
    coarse[b] * fine[m] = exp(-i (theta u_{bB+m} + offset)).

    ``first[b]`` is u at the start of block b, ``step`` the spacing du within a block;
    the constant phase ``offset`` (radians) goes into ``coarse`` at no cost.
    """
    for b in range(coarse.shape[0] // 2):
        a = theta * first[b] + offset
        coarse[2 * b] = np.cos(a)
        coarse[2 * b + 1] = -np.sin(a)
    for m in range(block):
        a = theta * step * m
        fine[2 * m] = np.cos(a)
        fine[2 * m + 1] = -np.sin(a)


# Kernels work on float64 views of the complex arrays (real, imaginary interleaved):
# written-out complex arithmetic vectorises where numba's complex type does not.
# Reassociation lets LLVM vectorise the sums; "nnan"/"ninf" are left out so that a
# blown-up wavefunction still shows up as a non-finite norm.
# The kick loops below repeat their phase-factor lines on purpose: factored into one
# inlined helper (tried 2026-12-03), the same products compile to different fused
# multiply-adds under "contract", and the compiled loop is then no longer bitwise equal
# to the array loop (tests/test_compiled_loop.py).
_FAST = {"contract", "arcp", "nsz", "reassoc"}
_JIT = dict(cache=True, nogil=True, fastmath=_FAST, error_model="numpy")


@njit(inline="always", **_JIT)
def _cmul(ar, ai, br, bi):
    """(ar + i ai)(br + i bi), as a (real, imaginary) pair."""
    return ar * br - ai * bi, ar * bi + ai * br


@njit(**_JIT)
def kick(psi, phase, coarse, fine, block):
    """psi_j *= phase_j * coarse[j // B] * fine[j % B] (all float64 views)."""
    nb = psi.shape[0] // (2 * block)
    for b in range(nb):
        cr = coarse[2 * b]
        ci = coarse[2 * b + 1]
        o = 2 * b * block
        for m in range(block):
            j = o + 2 * m
            fr, fi = _cmul(fine[2 * m], fine[2 * m + 1], cr, ci)
            qr, qi = _cmul(phase[j], phase[j + 1], fr, fi)
            psi[j], psi[j + 1] = _cmul(psi[j], psi[j + 1], qr, qi)


@njit(**_JIT)
def kick_observe(psi, phase, coarse, fine, block, mask, x, grad, ref, ref_coarse, ref_fine):
    """Last kick of a step, the absorber, and the position-space observables.

    Returns (sum |psi|^2, sum x |psi|^2, sum V'(x) |psi|^2, Re and Im of sum conj(ref') psi)
    over the grid (no dx factor), where ref'_j = ref_j * ref_coarse[b] * ref_fine[m].
    """
    nb = psi.shape[0] // (2 * block)
    s0 = 0.0
    s1 = 0.0
    s2 = 0.0
    ovr = 0.0
    ovi = 0.0
    for b in range(nb):
        cr = coarse[2 * b]
        ci = coarse[2 * b + 1]
        rcr = ref_coarse[2 * b]
        rci = ref_coarse[2 * b + 1]
        o = 2 * b * block
        for m in range(block):
            i = b * block + m
            j = o + 2 * m
            fr, fi = _cmul(fine[2 * m], fine[2 * m + 1], cr, ci)
            qr, qi = _cmul(phase[j], phase[j + 1], fr, fi)
            wr, wi = _cmul(psi[j], psi[j + 1], qr * mask[i], qi * mask[i])
            psi[j] = wr
            psi[j + 1] = wi
            d = wr * wr + wi * wi
            s0 += d
            s1 += d * x[i]
            s2 += d * grad[i]
            gr, gi = _cmul(ref_fine[2 * m], ref_fine[2 * m + 1], rcr, rci)
            rr, ri = _cmul(ref[j], ref[j + 1], gr, gi)
            ovr += rr * wr + ri * wi
            ovi += rr * wi - ri * wr
    return s0, s1, s2, ovr, ovi


@njit(**_JIT)
def kick_absorb(psi, phase, coarse, fine, block, mask):
    """The last kick of a step and the absorber, as :func:`kick_observe` without the sums
    (the steps whose observables are not recorded); the same products in the same order."""
    nb = psi.shape[0] // (2 * block)
    for b in range(nb):
        cr = coarse[2 * b]
        ci = coarse[2 * b + 1]
        o = 2 * b * block
        for m in range(block):
            i = b * block + m
            j = o + 2 * m
            fr, fi = _cmul(fine[2 * m], fine[2 * m + 1], cr, ci)
            qr, qi = _cmul(phase[j], phase[j + 1], fr, fi)
            wr, wi = _cmul(psi[j], psi[j + 1], qr * mask[i], qi * mask[i])
            psi[j] = wr
            psi[j + 1] = wi


@njit(**_JIT)
def kinetic_moment(psi, phase, coarse, fine, block, k):
    """Kinetic step in momentum space, returning (sum |psi_k|^2, sum k |psi_k|^2)
    of the wave (the phase does not change |psi_k|)."""
    nb = psi.shape[0] // (2 * block)
    s0 = 0.0
    s1 = 0.0
    for b in range(nb):
        cr = coarse[2 * b]
        ci = coarse[2 * b + 1]
        o = 2 * b * block
        for m in range(block):
            i = b * block + m
            j = o + 2 * m
            fr, fi = _cmul(fine[2 * m], fine[2 * m + 1], cr, ci)
            qr, qi = _cmul(phase[j], phase[j + 1], fr, fi)
            vr = psi[j]
            vi = psi[j + 1]
            d = vr * vr + vi * vi
            s0 += d
            s1 += d * k[i]
            psi[j], psi[j + 1] = _cmul(vr, vi, qr, qi)
    return s0, s1


@njit(**_JIT)
def density_moments(psi, u):
    """(sum |psi_j|^2, sum u_j |psi_j|^2) of a float64 view ``psi`` and a real ``u`` (flat)."""
    s0 = 0.0
    s1 = 0.0
    for i in range(u.shape[0]):
        d = psi[2 * i] * psi[2 * i] + psi[2 * i + 1] * psi[2 * i + 1]
        s0 += d
        s1 += d * u[i]
    return s0, s1


@njit(**_JIT)
def observe(psi, u, force, ref):
    """(sum |psi|^2, sum u |psi|^2, sum force |psi|^2, Re and Im of sum conj(ref) psi),
    all arrays flat (``psi``, ``ref``: float64 views of complex arrays)."""
    s0 = 0.0
    s1 = 0.0
    s2 = 0.0
    ovr = 0.0
    ovi = 0.0
    for i in range(u.shape[0]):
        wr = psi[2 * i]
        wi = psi[2 * i + 1]
        d = wr * wr + wi * wi
        s0 += d
        s1 += d * u[i]
        s2 += d * force[i]
        rr = ref[2 * i]
        ri = ref[2 * i + 1]
        ovr += rr * wr + ri * wi
        ovi += rr * wi - ri * wr
    return s0, s1, s2, ovr, ovi


@njit(**_JIT)
def surface_values(psi, index, stencil):
    """psi and (dx times) its derivative at grid point ``index`` of a float64 view.

    The derivative is the central finite difference sum_m stencil[m] psi[index + m - r]
    with r = (len(stencil) - 1) / 2, not yet divided by dx. Returns (Re psi, Im psi,
    Re dx psi', Im dx psi').
    """
    r = (stencil.shape[0] - 1) // 2
    dr = 0.0
    di = 0.0
    for m in range(stencil.shape[0]):
        j = 2 * (index + m - r)
        dr += stencil[m] * psi[j]
        di += stencil[m] * psi[j + 1]
    return psi[2 * index], psi[2 * index + 1], dr, di


@njit(**_JIT)
def surface_terms(psi, index, stencil, dx, x0, a, length, out, row):
    """The two coefficients of the flux integrand at one surface, velocity gauge.

    With psi_V and psi_V' at grid point ``index`` (position ``x0``), writes
    out[row] = (Re, Im) of psi_V / 2 and out[row + 1] = (Re, Im) of A psi_V - i psi_V' / 2,
    so that (p/2 + A) psi_V - (i/2) psi_V' = p out[row] + out[row + 1]. A length-gauge
    ``psi`` (``length`` true) is transformed first: psi_V = exp(-i A x) psi_L,
    psi_V' = exp(-i A x) (psi_L' - i A psi_L).
    """
    vr, vi, dr, di = surface_values(psi, index, stencil)
    dr /= dx
    di /= dx
    if length:
        # psi_L' - i A psi_L, then both times exp(-i A x0)
        dr, di = dr + a * vi, di - a * vr
        c = np.cos(a * x0)
        sn = -np.sin(a * x0)
        vr, vi = _cmul(vr, vi, c, sn)
        dr, di = _cmul(dr, di, c, sn)
    out[row, 0] = 0.5 * vr
    out[row, 1] = 0.5 * vi
    # A psi - (i/2) psi' = (A vr + di/2) + i (A vi - dr/2)
    out[row + 1, 0] = a * vr + 0.5 * di
    out[row + 1, 1] = a * vi - 0.5 * dr


@njit(**_JIT)
def flux_accumulate(volkov, step_phase, coarse, fine, block, momentum, advance,
                    weight_right, right_a, right_b, surface_right, amp_right,
                    weight_left, left_a, left_b, surface_left, amp_left):
    """One time sample of the surface-flux integrals (all arrays float64 views).

    If ``advance``: volkov_j *= step_phase_j * coarse[j // B] * fine[j % B] (the Volkov
    phase exp(i Phi(p_j, t)) moved on by one step). Then, for each side s,
    amp_s_j += weight_s * surface_s_j * volkov_j * (p_j * a_s + b_s), with the complex
    scalars a_s = (right_a[0] + i right_a[1]) etc.
    """
    nb = volkov.shape[0] // (2 * block)
    rar = right_a[0]
    rai = right_a[1]
    rbr = right_b[0]
    rbi = right_b[1]
    lar = left_a[0]
    lai = left_a[1]
    lbr = left_b[0]
    lbi = left_b[1]
    for b in range(nb):
        cr = coarse[2 * b]
        ci = coarse[2 * b + 1]
        o = 2 * b * block
        for m in range(block):
            i = b * block + m
            j = o + 2 * m
            ur = volkov[j]
            ui = volkov[j + 1]
            if advance:
                fr, fi = _cmul(fine[2 * m], fine[2 * m + 1], cr, ci)
                qr, qi = _cmul(step_phase[j], step_phase[j + 1], fr, fi)
                ur, ui = _cmul(ur, ui, qr, qi)
                volkov[j] = ur
                volkov[j + 1] = ui
            p = momentum[i]
            gr, gi = _cmul(ur, ui, surface_right[j], surface_right[j + 1])
            hr, hi = _cmul(gr, gi, p * rar + rbr, p * rai + rbi)
            amp_right[j] += weight_right * hr
            amp_right[j + 1] += weight_right * hi
            gr, gi = _cmul(ur, ui, surface_left[j], surface_left[j + 1])
            hr, hi = _cmul(gr, gi, p * lar + lbr, p * lai + lbi)
            amp_left[j] += weight_left * hr
            amp_left[j + 1] += weight_left * hi


@njit(cache=True, nogil=True)
def plane_wave_sum(psi, first, last, x0, dx, momentum, out):
    """out_j = sum_{n=first}^{last-1} psi_n exp(-i p_j (x0 + n dx)) (complex arrays).

    A direct sum by the recurrence z^n, z = exp(-i p dx), so no exponential per term.
    """
    for jj in range(momentum.shape[0]):
        p = momentum[jj]
        zr = np.cos(p * dx)
        zi = -np.sin(p * dx)
        a = p * (x0 + first * dx)
        wr = np.cos(a)
        wi = -np.sin(a)
        sr = 0.0
        si = 0.0
        for n in range(first, last):
            v = psi[n]
            sr += v.real * wr - v.imag * wi
            si += v.real * wi + v.imag * wr
            wr, wi = wr * zr - wi * zi, wr * zi + wi * zr
        out[jj] = complex(sr, si)
