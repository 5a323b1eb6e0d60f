"""The split-operator time loop on a grid of any number of axes, with array operations.

:class:`~tdse1d.physics.propagation.Propagator` runs one electron on a line through the
fused 1-D kernels of :mod:`tdse1d.physics.kernels`; every other
:class:`~tdse1d.physics.systems.System` (two electrons on a 2-D grid, one electron
in a field along one axis of a plane...) through :class:`GridStepper`. It takes the
same sub-steps in the same order (the propagator's plan of kicks and kinetic steps at
their midpoint fields), with whole-array numpy products and an FFTW transform over
every axis that may use several threads.

The field enters through the coupling coordinate X = sum_a w_a x_a (and K in the
velocity gauge), so its phase exp(-i theta X) is applied as one short factor per
coupled axis, broadcast along the others: no ``exp`` of the whole grid in the loop.
"""

from __future__ import annotations

import numpy as np

from .fft import InPlaceFFT

__all__ = ["GridStepper"]


class GridStepper:
    """Work arrays and the time loop of a propagator on a grid of several axes.

    Parameters
    ----------
    propagator : Propagator
        The propagator whose plan (kicks, kinetic weights, midpoint fields), system
        and observables this stepper uses; it calls back ``propagator._end_step``.
    fft_effort : str
        FFTW planner flag.
    threads : int
        FFTW threads.
    """

    def __init__(self, propagator, fft_effort, threads):
        self.prop = p = propagator
        system = p.system
        grid = system.grid
        h = p.time_step
        self.shape = grid.shape
        self._fft = InPlaceFFT(grid.shape, fft_effort, threads)
        self.psi = self._fft.data
        nd = grid.ndim
        self._bshape = [tuple(-1 if b == a else 1 for b in range(nd)) for a in range(nd)]
        self._others = [tuple(b for b in range(nd) if b != a) for a in range(nd)]
        self._x_axes = [grid.axis(a).x for a in range(nd)]
        self._k_axes = [grid.axis(a).k for a in range(nd)]
        self._coupled = [(a, w) for a, w in enumerate(system.field_weights) if w != 0.0]
        v = system.potential
        kicks = [np.exp(-1j * sum(c for c, _ in parts) * h * v) for parts in p._kick_parts]
        kicks[-1] = kicks[-1] * system.absorber_factor  # the absorber after the last sub-step
        self._kick_phase = kicks
        t = grid.kinetic_energy()
        self._kinetic_phase = [np.exp(-1j * wi * h * t) / grid.size for wi in p._kinetic_weights]
        self._force = system.force.ravel()
        self._reference = system.reference
        self._d = np.empty(self.shape)
        self._d2 = np.empty(self.shape)

    # ------------------------------------------------------------ pieces
    def _linear(self, theta, coordinates, offset=0.0):
        """psi *= exp(-i (theta sum_a w_a u_a + offset)), one short factor per coupled axis."""
        psi = self.psi
        for n, (a, w) in enumerate(self._coupled):
            f = np.exp(-1j * (theta * w * coordinates[a] + (offset if n == 0 else 0.0)))
            np.multiply(psi, f.reshape(self._bshape[a]), out=psi)

    def _density(self):
        d, d2 = self._d, self._d2
        np.multiply(self.psi.real, self.psi.real, out=d)
        np.multiply(self.psi.imag, self.psi.imag, out=d2)
        np.add(d, d2, out=d)
        return d

    def _coupled_moment(self, d, coordinates):
        """(sum d, sum d * sum_a w_a u_a) from the marginals of d along each coupled axis."""
        s1 = 0.0
        for a, w in self._coupled:
            marginal = d.sum(axis=self._others[a]) if self._others[a] else d
            s1 += w * float(marginal @ coordinates[a])
        return float(d.sum()), s1

    def position_moments(self, a):
        """Sums (no volume element) of |psi|^2, X |psi|^2, F |psi|^2 and <ref|psi_L>.

        ``a`` is A(t) of the current state, used to compare a velocity-gauge state with
        the length-gauge reference: <ref|psi_L> = sum conj(ref) exp(i A X) psi_V.
        """
        d = self._density()
        s0, s1 = self._coupled_moment(d, self._x_axes)
        s2 = float(d.ravel() @ self._force)
        psi = self.psi
        if self.prop.gauge == "velocity" and a != 0.0:
            psi = psi.copy()
            for a_, w in self._coupled:
                psi *= np.exp(1j * a * w * self._x_axes[a_]).reshape(self._bshape[a_])
        return s0, s1, s2, complex(np.vdot(self._reference, psi))

    def mean_momentum(self) -> float:
        """<K> of the current state (the state is left unchanged)."""
        saved = self.psi.copy()
        self._fft.forward()
        s0, s1 = self._coupled_moment(self._density(), self._k_axes)
        self.psi[:] = saved
        return s1 / s0 if s0 > 0 else 0.0

    # -------------------------------------------------------------- loop
    def advance(self, count: int) -> int:
        """Take ``count`` steps (the caller has bounded it); returns ``count``."""
        p = self.prop
        psi, fft = self.psi, self._fft
        h = p.time_step
        length = p.gauge == "length"
        kick_parts = p._kick_parts
        last = len(kick_parts) - 1
        charge_sum = p._charge_sum
        obs = p.observables
        for _ in range(count):
            n = p.step_index
            e_mid = p._e_mid[n]
            a_mid = p._a_mid[n]
            for i in range(last + 1):
                np.multiply(psi, self._kick_phase[i], out=psi)
                if length:
                    theta = 0.0
                    for c, j in kick_parts[i]:
                        theta += c * h * e_mid[j]
                    self._linear(theta, self._x_axes)
                if i == last:
                    break
                fft.forward()
                if i == 0:
                    s0, s1 = self._coupled_moment(self._density(), self._k_axes)
                    p._pending_momentum = s1 / s0 if s0 > 0 else 0.0
                np.multiply(psi, self._kinetic_phase[i], out=psi)
                if not length:
                    # exp(-i w h sum_a (k_a + w_a A)^2 / 2) = static table * exp(-i w h (A K + W A^2 / 2))
                    wh = p._kinetic_weights[i] * h
                    self._linear(wh * a_mid[i], self._k_axes, 0.5 * wh * charge_sum * a_mid[i] * a_mid[i])
                fft.backward()
            s0, s1, s2, overlap = self.position_moments(obs.vector_potential[n + 1])
            p._end_step(n, s0, s1, s2, overlap)
        return count
