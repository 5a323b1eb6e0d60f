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

__all__ = ["block_size", "linear_phase", "kick", "kick_observe", "kinetic_moment"]


def block_size(points: int) -> int:
    """A block length B dividing points/2 (so no block straddles k = 0), near sqrt(N)."""
    half = points // 2
    best = 1
    for b in range(1, half + 1):
        if half % b == 0 and b * b <= 4 * points:
            best = b
    return best


@njit(cache=True, nogil=True)
def linear_phase(theta, first, step, block, coarse, fine):
    """Fill ``coarse``, ``fine`` (float64 views of complex arrays) so that
    coarse[b] * fine[m] = exp(-i theta u_{bB+m}).

    ``first[b]`` is u at the start of block b, ``step`` the spacing du within a block.
    """
    for b in range(coarse.shape[0] // 2):
        a = theta * first[b]
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
