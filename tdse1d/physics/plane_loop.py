"""The split-operator time loop on a 2-D grid in one compiled function, FFTW called from inside.

:class:`~tdse1d.physics.grid_step.GridStepper` hands whole chunks of steps of a system on
a plane (two electrons on a line, each on its own axis) to :func:`run_plane`. It takes
the steps of the array loop of :mod:`tdse1d.physics.grid_step` (same sub-steps at the
same midpoint fields, same phase arrays), with fused passes over rows and two threaded
FFTW transforms (:class:`~tdse1d.physics.fftw_direct.GridPlans`) a step:

* a kick (potential phase times the field's phase, one short factor per axis);
* the kinetic phase in momentum space, with <K> of the first kinetic sub-step in the
  same pass (the momentum record needs it);
* the last kick with the absorber folded into its phase; in the same pass, on every
  step the norm the absorber took from each region of the plane (over the rows' runs
  where M < 1 only, :class:`~tdse1d.physics.pair_regions.RegionRecorder`), and on a
  record step the norm, <X>, <F>, the overlap with the reference state and the rows'
  sums over the regions' column pieces;
* within a chunk, the last kick of a step and the first of the next in one pass
  (:func:`run_plane`), so that a Strang step is two passes and two transforms.

The sums are taken per row, then over rows, so they differ from the array loop's only
in the order of the additions (round-off). The passes run on one thread, the
transforms on FFTW's: numba's parallel rows (its OpenMP pool beside the one FFTW
brings) made the step and the floor beside it 5 to 50 times slower on the shared two
cores (docs/performance.md), and with numba's own work queue the step was still
slower than on one thread. The driver is compiled without fast-math flags (its scalar
records), the passes with the reassociation that lets LLVM vectorise their sums.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from .fftw_direct import AVAILABLE, GridPlans, fftw_execute
from .time_loop import recorded_momentum
from .pair_regions import split_row_pieces

__all__ = ["AVAILABLE", "GridPlans", "run_plane", "axis_phase"]

_FAST = {"contract", "arcp", "nsz", "reassoc"}
_PASS = dict(cache=True, nogil=True, fastmath=_FAST, error_model="numpy")


@njit(cache=True, nogil=True)
def axis_phase(theta, u, offset, out):
    """out[j] = exp(-i (theta u[j] + offset)) as a float64 view (real, imaginary)."""
    for j in range(u.shape[0]):
        a = theta * u[j] + offset
        out[2 * j] = np.cos(a)
        out[2 * j + 1] = -np.sin(a)


@njit(inline="always", fastmath=_FAST)
def _cmul(ar, ai, br, bi):
    return ar * br - ai * bi, ar * bi + ai * br


@njit(**_PASS)
def kick_plane(psi, phase, f1, f2):
    """psi[i, j] *= phase[i, j] f1[i] f2[j] (float64 views)."""
    n1 = psi.shape[0]
    n2 = psi.shape[1] // 2
    for i in range(n1):
        ar = f1[2 * i]
        ai = f1[2 * i + 1]
        row = psi[i]
        prow = phase[i]
        for j in range(n2):
            fr, fi = _cmul(f2[2 * j], f2[2 * j + 1], ar, ai)
            qr, qi = _cmul(prow[2 * j], prow[2 * j + 1], fr, fi)
            row[2 * j], row[2 * j + 1] = _cmul(row[2 * j], row[2 * j + 1], qr, qi)


@njit(**_PASS)
def kinetic_plane(psi, phase, g1, g2, k1, k2, rows):
    """The kinetic sub-step psi *= phase g1[i] g2[j]; rows[i] = (sum |psi|^2, sum K |psi|^2)
    of row i before it (K = k1[i] + k2[j], the weighted momenta)."""
    n1 = psi.shape[0]
    n2 = psi.shape[1] // 2
    for i in range(n1):
        ar = g1[2 * i]
        ai = g1[2 * i + 1]
        s0 = 0.0
        s1 = 0.0
        row = psi[i]
        prow = phase[i]
        for j in range(n2):
            vr = row[2 * j]
            vi = row[2 * j + 1]
            d = vr * vr + vi * vi
            s0 += d
            s1 += d * k2[j]
            fr, fi = _cmul(g2[2 * j], g2[2 * j + 1], ar, ai)
            qr, qi = _cmul(prow[2 * j], prow[2 * j + 1], fr, fi)
            row[2 * j], row[2 * j + 1] = _cmul(vr, vi, qr, qi)
        rows[i, 0] = s0
        rows[i, 1] = s1 + k1[i] * s0


@njit(**_PASS)
def last_plane(psi, phase, f1, f2, observe, x2, fx1, fx2, force, separable, ref, phased, r1, r2, bounds, rows,
               pieces, loss, pointer, first, end, piece, absorbed):
    """The last kick (absorber folded into ``phase``); every step the absorbed norm
    |psi|^2 (1/M^2 - 1) added to absorbed[i, piece] over the runs of each row where
    M < 1; with ``observe``, rows[i] = (sum x2 |psi|^2, sum F |psi|^2, Re, Im of
    sum conj(ref r1 r2) psi) and pieces[i, p] = sum |psi|^2 over the columns of piece p.

    F is fx1[i] + force[0, j] if ``separable``, else force[i, j]; without ``phased``
    the reference is taken as it is (r1, r2 not read).
    """
    n1 = psi.shape[0]
    n2 = psi.shape[1] // 2
    for i in range(n1):
        ar = f1[2 * i]
        ai = f1[2 * i + 1]
        row = psi[i]
        prow = phase[i]
        for j in range(n2):
            fr, fi = _cmul(f2[2 * j], f2[2 * j + 1], ar, ai)
            qr, qi = _cmul(prow[2 * j], prow[2 * j + 1], fr, fi)
            row[2 * j], row[2 * j + 1] = _cmul(row[2 * j], row[2 * j + 1], qr, qi)
        if observe:
            # the sums over the row just written (in cache), one simple loop each so
            # that each vectorises
            rrow = ref[i]
            d_row = 0.0
            for p in range(bounds.shape[0] - 1):
                # a slice, so that the loop's index starts at 0: numba's negative-index
                # wrap-around then folds away and the loop vectorises
                seg = row[2 * bounds[p]:2 * bounds[p + 1]]
                s0 = 0.0
                for k in range(seg.shape[0]):
                    s0 += seg[k] * seg[k]
                pieces[i, p] = s0
                d_row += s0
            fcol = force[0] if separable else force[i]
            s1 = 0.0
            s2 = 0.0
            for j in range(n2):
                d = row[2 * j] * row[2 * j] + row[2 * j + 1] * row[2 * j + 1]
                s1 += d * x2[j]
                s2 += d * fcol[j]
            ovr = 0.0
            ovi = 0.0
            if phased:
                for j in range(n2):
                    rr, ri = _cmul(rrow[2 * j], rrow[2 * j + 1], r2[2 * j], r2[2 * j + 1])
                    wr = row[2 * j]
                    wi = row[2 * j + 1]
                    ovr += rr * wr + ri * wi
                    ovi += rr * wi - ri * wr
                # conj(r1[i]) times the row's sum
                ovr, ovi = _cmul(ovr, ovi, r1[2 * i], -r1[2 * i + 1])
            else:
                for j in range(n2):
                    rr = rrow[2 * j]
                    ri = rrow[2 * j + 1]
                    wr = row[2 * j]
                    wi = row[2 * j + 1]
                    ovr += rr * wr + ri * wi
                    ovi += rr * wi - ri * wr
            rows[i, 0] = s1
            rows[i, 1] = s2 + fx1[i] * d_row
            rows[i, 2] = ovr
            rows[i, 3] = ovi
        lrow = loss[i]
        for s in range(pointer[i], pointer[i + 1]):
            seg = row[2 * first[s]:2 * end[s]]
            lseg = lrow[first[s]:end[s]]
            t = 0.0
            for j in range(lseg.shape[0]):
                t += (seg[2 * j] * seg[2 * j] + seg[2 * j + 1] * seg[2 * j + 1]) * lseg[j]
            absorbed[i, piece[s]] += t


@njit(cache=True, nogil=True, error_model="numpy")
def _kick_angle(kick_c, kick_j, i, h, e_mid, n):
    """The field's angle theta of kick i of step n (length gauge): sum of c h E_mid."""
    theta = 0.0
    for q in range(2):
        c = kick_c[i, q]
        if c != 0.0:
            theta += c * h * e_mid[n, kick_j[i, q]]
    return theta


@njit(cache=True, nogil=True, error_model="numpy")
def _records(j, n1, x1, pieces, rows_x, volume, charge, electric, norm, dipole, acceleration, population, carry,
             inside, starts, stops, weight, absorbed_rows, absorbed_base, regions):
    """The position records of record j (as Propagator._record_position) from the last
    pass's row sums; returns whether the norm check holds."""
    s0 = 0.0
    s1 = 0.0
    s2 = 0.0
    ovr = 0.0
    ovi = 0.0
    for r in range(n1):
        d = 0.0
        for q in range(pieces.shape[1]):
            d += pieces[r, q]
        s0 += d
        s1 += d * x1[r] + rows_x[r, 0]
        s2 += rows_x[r, 1]
        ovr += rows_x[r, 2]
        ovi += rows_x[r, 3]
    norm[j] = s0 * volume
    dipole[j] = s1 * volume
    acceleration[j] = -s2 * volume - charge * electric[j] * s0 * volume
    population[j] = (ovr * ovr + ovi * ovi) * volume * volume
    carry[1] = s2 * volume
    out = regions[j]
    out[:, :] = absorbed_base
    split_row_pieces(pieces, inside, starts, stops, weight, out)
    split_row_pieces(absorbed_rows, inside, starts, stops, weight, out)
    return norm[j] <= norm[j - 1] * (1 + 1e-9) + 1e-12


@njit(cache=True, nogil=True, error_model="numpy")
def run_plane(count, n0, forward, backward, psi, kick, join, kinetic, kick_c, kick_j, kinetic_w, h, volume,
              length, charge, every, x1, x2, k1, k2, e_mid, a_mid, electric, vecpot,
              norm, dipole, momentum, acceleration, population, carry,
              fx1, fx2, force, separable, ref, ref_join, f1, f2, g1, g2, r1, r2, ones1, ones2, rows_k, rows_x,
              bounds, inside, starts, stops, weight, pieces, loss, pointer, first, end, piece,
              absorbed_rows, absorbed_base, regions):
    """Take ``count`` steps from step ``n0``; returns the number taken before a norm
    check failed (``count`` if none did).

    ``psi``, the phase stacks ``kick`` (sub-steps + 1, n1, 2 n2) and ``kinetic``
    (sub-steps, n1, 2 n2), ``ref`` and the per-axis tables ``f1`` ... ``r2`` are float64
    views; ``x1``, ``x2``, ``k1``, ``k2`` are the coordinates and momenta of each axis
    times its field weight; the force F along the coupling is ``force`` or, if
    ``separable``, fx1[i] + fx2[j]; the records are as :func:`tdse1d.physics.time_loop.run_line`
    writes them (record j is step j * every), with ``volume`` the volume element, and
    regions[j] the (P0, P1, P2) of each radius at record j: the state's (``pieces``
    split by :func:`~tdse1d.physics.pair_regions.split_row_pieces`), ``absorbed_base``
    and what ``absorbed_rows`` gathered since the chunk began. ``carry`` holds <K> of
    step n's first kinetic sub-step and <F> of the last record.

    Within a chunk the last kick of step n and the first of step n + 1 are one pass
    with ``join`` = kick[last] kick[0] and the sum of their field angles: a step is then
    two passes and two transforms. The records of t_{n+1} are read in that pass: the
    densities are those after step n (the first kick of n + 1 is unimodular), and the
    overlap <ref|psi_n> is taken as <ref kick[0] exp(-i theta X)|psi> with
    ``ref_join`` = ref kick[0]. A chunk ends on a whole step.
    """
    last = kick.shape[0] - 1
    n1 = psi.shape[0]
    pending = False  # the last kick of the previous step is still to be applied
    theta_pending = 0.0
    for step in range(count):
        n = n0 + step
        for i in range(last + 1):
            theta = _kick_angle(kick_c, kick_j, i, h, e_mid, n) if length else 0.0
            if i == 0 and pending:
                observe = n % every == 0
                a0 = vecpot[n]
                if length:
                    axis_phase(theta + theta_pending, x1, 0.0, f1)
                    axis_phase(theta + theta_pending, x2, 0.0, f2)
                    p1, p2 = f1, f2
                else:
                    p1, p2 = ones1, ones2
                # the overlap's phase: exp(-i (theta + A) X) of the first kick and the gauge
                angle = theta + (0.0 if length else a0)
                phased = observe and angle != 0.0
                if phased:
                    axis_phase(angle, x1, 0.0, r1)
                    axis_phase(angle, x2, 0.0, r2)
                last_plane(psi, join, p1, p2, observe, x2, fx1, fx2, force, separable, ref_join, phased, r1, r2,
                           bounds, rows_x, pieces, loss, pointer, first, end, piece, absorbed_rows)
                pending = False
                if observe:
                    if not _records(n // every, n1, x1, pieces, rows_x, volume, charge, electric, norm, dipole,
                                    acceleration, population, carry, inside, starts, stops, weight,
                                    absorbed_rows, absorbed_base, regions):
                        return step - 1
            elif i < last:
                if length:
                    axis_phase(theta, x1, 0.0, f1)
                    axis_phase(theta, x2, 0.0, f2)
                    kick_plane(psi, kick[i], f1, f2)
                else:
                    kick_plane(psi, kick[i], ones1, ones2)
            if i < last:
                fftw_execute(forward)
                if length:
                    q1, q2 = ones1, ones2
                else:
                    wh = kinetic_w[i] * h
                    am = a_mid[n, i]
                    axis_phase(wh * am, k1, 0.5 * wh * charge * am * am, g1)
                    axis_phase(wh * am, k2, 0.0, g2)
                    q1, q2 = g1, g2
                kinetic_plane(psi, kinetic[i], q1, q2, k1, k2, rows_k)
                if i == 0:
                    m0 = 0.0
                    m1 = 0.0
                    for r in range(n1):
                        m0 += rows_k[r, 0]
                        m1 += rows_k[r, 1]
                    carry[0] = m1 / m0 if m0 > 0 else 0.0
                    if n % every == 0:
                        # <P>(t_n), as Propagator._record_momentum (before the records of t_{n+1})
                        j = n // every
                        momentum[j] = recorded_momentum(carry, norm[j], kick_c[0, 0] * h, length, charge,
                                                        e_mid[n, 0], vecpot[n])
                fftw_execute(backward)
            elif step < count - 1:
                pending = True
                theta_pending = theta
            else:  # the chunk's last step ends whole
                observe = (n + 1) % every == 0
                a1 = vecpot[n + 1]
                if length:
                    axis_phase(theta, x1, 0.0, f1)
                    axis_phase(theta, x2, 0.0, f2)
                    p1, p2 = f1, f2
                else:
                    p1, p2 = ones1, ones2
                phased = observe and not length and a1 != 0.0
                if phased:
                    axis_phase(a1, x1, 0.0, r1)
                    axis_phase(a1, x2, 0.0, r2)
                last_plane(psi, kick[i], p1, p2, observe, x2, fx1, fx2, force, separable, ref, phased, r1, r2,
                           bounds, rows_x, pieces, loss, pointer, first, end, piece, absorbed_rows)
                if observe:
                    if not _records((n + 1) // every, n1, x1, pieces, rows_x, volume, charge, electric, norm,
                                    dipole, acceleration, population, carry, inside, starts, stops, weight,
                                    absorbed_rows, absorbed_base, regions):
                        return step
    return count
