"""The time loop of one electron on a line: fused kernels, in compiled chunks or driven from Python.

:class:`~tdse1d.physics.propagation.Propagator` hands one electron on a line to
:class:`LineStepper`. Its work arrays are made once; a step is two FFTs and three fused
passes (:mod:`tdse1d.physics.kernels`). Chunks of steps run in the compiled loop of
:mod:`tdse1d.physics.time_loop` when FFTW can be called directly and no per-step
observable needs a Python callable; otherwise the same kernels are driven from Python.
Both take bitwise the same steps.

On steps whose observables are not recorded (the propagator's ``record_every``), the
last kick is :func:`~tdse1d.physics.kernels.kick_absorb`, which skips the sums.
"""

from __future__ import annotations

import numpy as np

from . import kernels, time_loop
from .fft import InPlaceFFT

__all__ = ["LineStepper"]

_NO_FLOAT, _NO_COMPLEX = np.zeros(2), np.zeros((4, 2))


def _flux_arguments(flux):
    """The surface-flux accumulator's work arrays as :func:`run_line` takes them (dummies if None)."""
    if flux is None:
        z = _NO_FLOAT
        return (False, z, z, z, 1.0, 1, z, z, 0, 0, z, 1.0, 0.0, 0.0, _NO_COMPLEX, z, z, z, z, z, z, z)
    v = flux._v
    return (True, flux._dg, flux._dh, flux._p_first, flux._dp, flux.block, v["_coarse"], v["_fine"],
            flux.right_index, flux.left_index, flux.stencil, flux.dx, flux.radius_right, flux.radius_left,
            flux._scalars, v["volkov"], v["_step_phase"], flux.momenta, v["_surface_right"], v["amp_right"],
            v["_surface_left"], v["amp_left"])


class LineStepper:
    """Work arrays and time loops of a propagator of one electron on a line.

    Parameters
    ----------
    propagator : Propagator
        Its plan (kicks, kinetic weights, midpoint fields), system, recording stride and
        observables; the Python-driven loop calls back ``propagator._end_step``.
    fft_effort : str
        FFTW planner flag.
    compiled : bool
        Use the compiled loop where it applies.
    """

    def __init__(self, propagator, fft_effort, compiled):
        self.prop = p = propagator
        grid, h = p.grid, p.time_step
        n = grid.points
        self.block = kernels.block_size(n)
        nb = n // self.block
        self._fft = InPlaceFFT(n, fft_effort)
        self.psi = self._fft.data
        x = grid.x
        k = grid.k
        v = p.system.potential
        self._x = np.ascontiguousarray(x)
        self._k = np.ascontiguousarray(k)
        self._mask, self._grad, self._reference = p.system.absorber_factor, p.system.force, p.system.reference

        # static phases, one per distinct coefficient; 1/N of the inverse FFT folded in
        def vphase(c):
            return np.ascontiguousarray(np.exp(-1j * c * h * v))

        kick_phase = [vphase(sum(c for c, _ in parts)) for parts in p._kick_parts]
        kinetic_phase = [np.ascontiguousarray(np.exp(-1j * wi * h * 0.5 * k**2) / n) for wi in p._kinetic_weights]

        # linear-phase tables (x in the length gauge, k in the velocity gauge)
        starts = np.arange(nb) * self.block
        self._x_first = x[starts].copy()
        self._k_first = k[starts].copy()
        # float64 views for the kernels (made once; views do not copy)
        f = lambda a: a.view(np.float64)  # noqa: E731
        self._v_psi = f(self.psi)
        self._v_kick = [f(a) for a in kick_phase]
        self._v_kinetic = [f(a) for a in kinetic_phase]
        self._v_coarse, self._v_fine = f(np.ones(nb, complex)), f(np.ones(self.block, complex))
        self._v_ref = f(self._reference)
        self._v_ref_coarse, self._v_ref_fine = f(np.ones(nb, complex)), f(np.ones(self.block, complex))
        self._v_ones_coarse, self._v_ones_fine = f(np.ones(nb, complex)), f(np.ones(self.block, complex))
        # the compiled loop's FFTW plans on the same array (None: the Python-driven loop)
        self.plans = time_loop.LinePlans(self.psi, fft_effort) if compiled and time_loop.AVAILABLE else None
        self._compiled_args = self._flux_args = None

    @property
    def psi_view(self):
        """Float64 view of the state (what the surface flux reads)."""
        return self._v_psi

    def velocity_reference_phase(self, a):
        """Tables of exp(-i A x) for the overlap with the length-gauge reference (ones otherwise)."""
        # psi_L = exp(i A x) psi_V, so <ref|psi_L> = sum conj(ref exp(-i A x)) psi_V:
        # the kernel conjugates ref', so it is given ref' = ref exp(-i A x)
        if self.prop.gauge == "velocity" and a != 0.0:
            kernels.linear_phase(a, self._x_first, self.prop.grid.spacing, self.block,
                                 self._v_ref_coarse, self._v_ref_fine)
            return self._v_ref_coarse, self._v_ref_fine
        return self._v_ones_coarse, self._v_ones_fine

    def position_moments(self, a):
        """Sums (no dx) of |psi|^2, x |psi|^2, V' |psi|^2 and <ref|psi_L>, A(t) = ``a``."""
        rc, rf = self.velocity_reference_phase(a)
        psi = self.psi
        d = psi.real**2 + psi.imag**2  # once per start/finish only, not in the loop
        rc, rf = rc.view(complex), rf.view(complex)
        r = self._reference * np.repeat(rc, self.block) * np.tile(rf, len(rc))
        return float(d.sum()), float(d @ self._x), float(d @ self._grad), complex(np.vdot(r, psi))

    def mean_momentum(self) -> float:
        """<k> of the current state (one extra FFT; the state is left unchanged)."""
        saved = self.psi.copy()
        self._fft.forward()
        d = self.psi.real**2 + self.psi.imag**2
        s0 = d.sum()
        mean_k = float(d @ self._k / s0) if s0 > 0 else 0.0
        self.psi[:] = saved
        return mean_k

    # -------------------------------------------------------------- loops
    def advance(self, count):
        """Take ``count`` steps (bounded by the caller); returns ``count``."""
        if self.plans is not None and not self.prop._measured:
            return self._advance_compiled(count)
        return self._advance_python(count)

    def _advance_python(self, count):
        p = self.prop
        psi = self._v_psi
        fft = self._fft
        block = self.block
        h = p.time_step
        dx = p.grid.spacing
        dk = p.grid.k[1]
        length = p.gauge == "length"
        every = p.record_every
        a_t = p._a_t
        x_first, k_first = self._x_first, self._k_first
        coarse, fine = self._v_coarse, self._v_fine
        ones_c, ones_f = self._v_ones_coarse, self._v_ones_fine
        kick_parts = p._kick_parts
        flux = p.surface_flux
        last = len(kick_parts) - 1
        for _ in range(count):
            n = p.step_index
            e_mid = p._e_mid[n]
            a_mid = p._a_mid[n]
            s0 = s1 = s2 = ovr = ovi = 0.0
            for i in range(last + 1):
                if length:
                    theta = 0.0
                    for c, j in kick_parts[i]:
                        theta += c * h * e_mid[j]
                    kernels.linear_phase(theta, x_first, dx, block, coarse, fine)
                    kc, kf = coarse, fine
                else:
                    kc, kf = ones_c, ones_f
                if i < last:
                    kernels.kick(psi, self._v_kick[i], kc, kf, block)
                    fft.forward()
                    if length:
                        lc, lf = ones_c, ones_f
                    else:
                        wh = p._kinetic_weights[i] * h
                        # exp(-i w h (k + A)^2 / 2) = static k^2 table * exp(-i w h (A k + A^2 / 2))
                        kernels.linear_phase(wh * a_mid[i], k_first, dk, block, coarse, fine,
                                             0.5 * wh * a_mid[i] * a_mid[i])
                        lc, lf = coarse, fine
                    m0, m1 = kernels.kinetic_moment(psi, self._v_kinetic[i], lc, lf, block, self._k)
                    if i == 0:
                        p._pending_momentum = m1 / m0 if m0 > 0 else 0.0
                    fft.backward()
                elif (n + 1) % every == 0:
                    rc, rf = self.velocity_reference_phase(a_t[n + 1])
                    s0, s1, s2, ovr, ovi = kernels.kick_observe(
                        psi, self._v_kick[i], kc, kf, block, self._mask,
                        self._x, self._grad, self._v_ref, rc, rf,
                    )
                else:
                    kernels.kick_absorb(psi, self._v_kick[i], kc, kf, block, self._mask)
            if flux is not None:
                flux.add(psi, n + 1, float(a_t[n + 1]), h, advance=True)
            p._end_step(n, s0, s1, s2, complex(ovr, ovi))
        return count

    def _advance_compiled(self, count):
        """``count`` steps in :func:`tdse1d.physics.time_loop.run_line` (bitwise the same steps)."""
        p = self.prop
        if self._compiled_args is None:
            kc = np.zeros((len(p._kick_parts), 2))
            kj = np.zeros((len(p._kick_parts), 2), np.int64)
            for i, parts in enumerate(p._kick_parts):
                for q, (c, j) in enumerate(parts):
                    kc[i, q], kj[i, q] = c, j
            obs = p.observables
            self._carry = np.zeros(2)
            self._compiled_args = (
                self.plans.forward, self.plans.backward, self._v_psi, np.array(self._v_kick),
                np.array(self._v_kinetic), kc, kj, np.asarray(p._kinetic_weights, float), p.time_step,
                p.grid.spacing, float(p.grid.k[1]), self.block, p.gauge == "length", p._charge_sum,
                p.record_every, self._x_first, self._k_first, self._v_coarse, self._v_fine,
                self._v_ones_coarse, self._v_ones_fine, self._v_ref_coarse, self._v_ref_fine, self._mask,
                self._x, self._grad, self._v_ref, self._k, np.ascontiguousarray(p._e_mid),
                np.ascontiguousarray(p._a_mid), obs.electric, p._a_t, obs.norm, obs.dipole, obs.momentum,
                obs.acceleration, obs.initial_population, self._carry)
        flux = p.surface_flux
        if self._flux_args is None or self._flux_args[0] is not flux:
            self._flux_args = (flux, _flux_arguments(flux))
        self._carry[:] = p._pending_momentum, p._force
        n0 = p.step_index
        taken = time_loop.run_line(count, n0, *self._compiled_args, *self._flux_args[1])
        failed = taken < count
        done = taken + 1 if failed else taken
        p.step_index = n0 + done
        if flux is not None:
            flux.step += done
        p._pending_momentum, p._force = float(self._carry[0]), float(self._carry[1])
        if failed:
            p._norm_failure(n0 + taken)
        return count
