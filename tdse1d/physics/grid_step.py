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

On a 2-D grid, chunks of steps run in the compiled loop of
:mod:`tdse1d.physics.plane_loop` (two fused passes and two threaded FFTW transforms
a Strang step) when FFTW can be called directly, the propagator is ``compiled`` and every
per-step observable is either the propagator's own or one of the system's fused
readings. A system offers such readings with ``fused_readings()`` returning
``(recorder, names)``: a :class:`~tdse1d.physics.pair_regions.RegionRecorder` whose
(P0, P1, P2) of each radius fill the observables ``names`` (radius by radius); both
loops count the norm its absorber takes on every step (``recorder.absorb``), so the
readings hold whatever the recording stride. The array loop stays as the reference
(``compiled=False``): ``tests/test_pair_step.py`` compares the two.
"""

from __future__ import annotations

import numpy as np

from . import kernels, plane_loop
from .fft import InPlaceFFT
from .observables import measured_entries

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
        self._x_axes = [grid.axis(a).x for a in range(nd)]
        self._k_axes = [grid.axis(a).k for a in range(nd)]
        self._coupled = [(a, w) for a, w in enumerate(system.field_weights) if w != 0.0]
        v = system.potential
        # the phases as stacks (one array each, so the compiled loop takes them as they are)
        self._kick_phase = kicks = np.empty((len(p._kick_parts),) + grid.shape, complex)
        for i, parts in enumerate(p._kick_parts):
            np.exp(-1j * sum(c for c, _ in parts) * h * v, out=kicks[i])
        kicks[-1] *= system.absorber_factor  # the absorber after the last sub-step
        t = grid.kinetic_energy()
        self._kinetic_phase = np.empty((len(p._kinetic_weights),) + grid.shape, complex)
        for i, wi in enumerate(p._kinetic_weights):
            np.exp(-1j * wi * h * t, out=self._kinetic_phase[i])
            self._kinetic_phase[i] /= grid.size
        fused = getattr(system, "fused_readings", None)
        self.readings, self._reading_names = fused() if fused is not None else (None, ())
        own = set(self._reading_names)
        self._compiled = (p.compiled and nd == 2 and plane_loop.AVAILABLE and not measured_entries()
                          and all(e.name in own for e in system.per_step_observables()))
        self.plans = plane_loop.GridPlans(self.psi, fft_effort, threads) if self._compiled else None
        self._compiled_args = None
        # flat views for the compiled sums (no BLAS: its threads stall on a shared machine);
        # X and K enter through one table per axis (no arrays of the grid's size)
        self._force = np.ascontiguousarray(system.force).ravel()
        self._flat = self.psi.reshape(-1).view(np.float64)

    # ------------------------------------------------------------ pieces
    def _linear(self, theta, coordinates, offset=0.0):
        """psi *= exp(-i (theta sum_a w_a u_a + offset)), one short factor per coupled axis."""
        psi = self.psi
        for n, (a, w) in enumerate(self._coupled):
            f = np.exp(-1j * (theta * w * coordinates[a] + (offset if n == 0 else 0.0)))
            np.multiply(psi, f.reshape(self._bshape[a]), out=psi)

    def position_moments(self, a):
        """Sums (no volume element) of |psi|^2, X |psi|^2, F |psi|^2 and <ref|psi_L>.

        ``a`` is A(t) of the current state, used to compare a velocity-gauge state with
        the length-gauge reference: <ref|psi_L> = sum conj(ref) exp(i A X) psi_V.
        """
        psi = self.psi
        s0, s2 = kernels.density_moments(self._flat, self._force)
        s1 = self._moment(psi, self._x_axes)
        if self.prop.gauge == "velocity" and a != 0.0:
            psi = psi.copy()
            for a_, w in self._coupled:
                psi *= np.exp(1j * a * w * self._x_axes[a_]).reshape(self._bshape[a_])
        return s0, s1, s2, complex(np.sum(self.prop.system.reference.conj() * psi))

    def _moment(self, psi, tables):
        """sum_a w_a sum u_a |psi|^2 with u_a = ``tables[a]`` along axis a."""
        d = psi.real**2 + psi.imag**2
        nd = d.ndim
        return float(sum(w * (d.sum(axis=tuple(b for b in range(nd) if b != a)) @ tables[a])
                         for a, w in self._coupled))

    def mean_momentum(self) -> float:
        """<K> of the current state (the state is left unchanged)."""
        saved = self.psi.copy()
        self._fft.forward()
        s0, s1 = float(np.sum(self.psi.real**2 + self.psi.imag**2)), self._moment(self.psi, self._k_axes)
        self.psi[:] = saved
        return s1 / s0 if s0 > 0 else 0.0

    # -------------------------------------------------------------- loop
    def advance(self, count: int) -> int:
        """Take ``count`` steps (the caller has bounded it); returns ``count``."""
        if self.plans is not None:
            return self._advance_compiled(count)
        return self._advance_array(count)

    def _advance_array(self, count: int) -> int:
        p = self.prop
        psi, fft = self.psi, self._fft
        h = p.time_step
        length = p.gauge == "length"
        kick_parts = p._kick_parts
        last = len(kick_parts) - 1
        charge_sum = p._charge_sum
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
                    s0, s1 = float(np.sum(psi.real**2 + psi.imag**2)), self._moment(psi, self._k_axes)
                    p._pending_momentum = s1 / s0 if s0 > 0 else 0.0
                np.multiply(psi, self._kinetic_phase[i], out=psi)
                if not length:
                    # exp(-i w h sum_a (k_a + w_a A)^2 / 2) = static table * exp(-i w h (A K + W A^2 / 2))
                    wh = p._kinetic_weights[i] * h
                    self._linear(wh * a_mid[i], self._k_axes, 0.5 * wh * charge_sum * a_mid[i] * a_mid[i])
                fft.backward()
            if self.readings is not None:
                self.readings.absorb(psi)
            if (n + 1) % p.record_every == 0:
                s0, s1, s2, overlap = self.position_moments(p._a_t[n + 1])
            else:
                s0 = s1 = s2 = 0.0
                overlap = 0j
            p._end_step(n, s0, s1, s2, overlap)
        return count

    # ---------------------------------------------------------- compiled
    def _plane_arguments(self):
        """The compiled loop's arguments after ``count, n0`` (made once; views, no copies)."""
        p = self.prop
        system = self.prop.system
        grid = system.grid
        (n1, n2), (w1, w2) = grid.shape, system.field_weights
        f = lambda a: a.view(np.float64)  # noqa: E731
        table = lambda m: np.ones(m, complex).view(np.float64)  # noqa: E731
        kc = np.zeros((len(p._kick_parts), 2))
        kj = np.zeros((len(p._kick_parts), 2), np.int64)
        for i, parts in enumerate(p._kick_parts):
            for q, (c, j) in enumerate(parts):
                kc[i, q], kj[i, q] = c, j
        rec = self.readings
        if rec is None:  # no region readings: a recorder of no radius and no absorber
            from .pair_regions import RegionRecorder
            rec = RegionRecorder(grid.axis(0).x, 1.0, None, radii=())
        pointer, first, end, piece = rec.segments
        loss = rec.loss if rec.loss is not None else np.zeros((1, 1))
        pieces = len(rec.bounds) - 1
        self._absorbed_rows = np.zeros((n1, pieces))
        self._regions = np.zeros((len(p.observables.time), len(rec.radii), 3))
        self._recorder = rec
        obs = p.observables
        # the last kick of a step and the first of the next as one pass (run_plane), and the
        # reference seen through that first kick
        self._join = self._kick_phase[-1] * self._kick_phase[0]
        self._ref_join = system.reference * self._kick_phase[0]
        return (self.plans.forward, self.plans.backward, f(self.psi), f(self._kick_phase), f(self._join),
                f(self._kinetic_phase),
                kc, kj, np.asarray(p._kinetic_weights, float), p.time_step, grid.volume_element,
                p.gauge == "length", p._charge_sum, p.record_every,
                w1 * grid.axis(0).x, w2 * grid.axis(1).x, w1 * grid.axis(0).k, w2 * grid.axis(1).k,
                np.ascontiguousarray(p._e_mid), np.ascontiguousarray(p._a_mid), obs.electric, p._a_t,
                obs.norm, obs.dipole, obs.momentum, obs.acceleration, obs.initial_population, self._carry,
                *self._force_tables(), f(system.reference), f(self._ref_join), table(n1), table(n2), table(n1), table(n2), table(n1),
                table(n2), table(n1), table(n2), np.zeros((n1, 2)), np.zeros((n1, 4)),
                rec.bounds, rec.inside, rec.starts, rec.stops, rec.weight, np.zeros((n1, pieces)), loss,
                pointer, first, end, piece, self._absorbed_rows)

    def _force_tables(self):
        """(fx1, fx2, force, separable): F as fx1[i] + fx2[j] when it is a sum of one
        function per axis to round-off (the two-electron atom's: the repulsion cancels
        along x1 + x2), which spares the last pass reading a grid-sized array."""
        force = self.prop.system.force
        fx1 = force[:, 0] - force[0, 0]
        fx2 = force[0, :].copy()
        scale = np.max(np.abs(force))
        if np.max(np.abs(force - (fx1[:, None] + fx2[None, :]))) <= 1e-13 * scale:
            return fx1, fx2, fx2[None, :], True
        return np.zeros(force.shape[0]), np.zeros(force.shape[1]), force, False

    def _advance_compiled(self, count: int) -> int:
        """``count`` steps in :func:`tdse1d.physics.plane_loop.run_plane`."""
        p = self.prop
        if self._compiled_args is None:
            self._carry = np.zeros(2)
            self._compiled_args = self._plane_arguments()
        rec = self._recorder
        self._carry[:] = p._pending_momentum, p._force
        n0 = p.step_index
        taken = plane_loop.run_plane(count, n0, *self._compiled_args, rec.absorbed.copy(), self._regions)
        failed = taken < count
        done = taken + 1 if failed else taken
        p.step_index = n0 + done
        p._pending_momentum, p._force = float(self._carry[0]), float(self._carry[1])
        # what the absorbers took in this chunk joins the recorder's count
        rows = self._absorbed_rows
        rec.absorbed += rec._regions(rows)
        rows[:] = 0.0
        every = p.record_every
        j0, j1 = n0 // every + 1, (n0 + done) // every + 1
        obs = p.observables
        for k in range(len(rec.radii)):
            for q in range(3):
                getattr(obs, self._reading_names[3 * k + q])[j0:j1] = self._regions[j0:j1, k, q]
        if failed:
            p._norm_failure(n0 + taken)
        return count
