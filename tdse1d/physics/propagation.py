"""Split-operator propagation of the time-dependent Schrodinger equation on a Fourier grid.

The split-operator Fourier method (Feit, Fleck and Steiger, J. Comput. Phys. 47, 412
(1982)) alternates exact propagation under the potential (point-wise in x) and under
the kinetic energy (point-wise in k, reached by FFT). The basic step is the symmetric
(Strang) splitting with the time-dependent parts taken at the sub-step's midpoint,

    S2(h; t) = exp(-i h/2 V(t + h/2)) exp(-i h T(t + h/2)) exp(-i h/2 V(t + h/2)),

which is time-symmetric and second order. Higher orders are symmetric compositions
S2(w_1 h) ... S2(w_m h) (Yoshida, Phys. Lett. A 150, 262 (1990); Suzuki, Phys. Lett. A
146, 319 (1990)), each sub-step at its own midpoint time. Adjacent potential halves
within a step are merged.

What is propagated is a :class:`~tdse1d.physics.systems.System`: a grid of any number
of axes, its potential, and the coupling coordinate X = sum_a w_a x_a (x for one
electron, x1 + x2 for two) with its momentum counterpart K. Below, for one electron,
X = x and K = k; the general forms are in :mod:`tdse1d.physics.systems`.

Gauges (electron charge -1, E = -dA/dt):

* length gauge: V(x, t) = V(x) + x E(t); the grid momentum is the kinetic momentum;
* velocity gauge: T(t) = (p + A(t))^2 / 2, the A^2/2 term included (a phase common to
  all of space, folded into the linear-phase table at no cost), so that
  psi_L = exp(i A x) psi_V holds exactly, global phase included, and a wave propagated
  here keeps the phase of the Volkov waves of :mod:`tdse1d.spectra.surface_flux`; the kinetic
  momentum is p + A(t).

Absorption (:mod:`tdse1d.physics.absorbers`) is applied at every step, after its last sub-step.
Observables are recorded at every step t_n: norm, dipole <x>, kinetic momentum <p>,
the Ehrenfest dipole acceleration -<dV/dx> - E(t) N(t) (a more accurate source of
harmonic spectra than differentiating the dipole; Burnett et al., Phys. Rev. A 45, 3347
(1992), from memory), and the population of the initial state; the bound-state
populations at a coarser cadence. Given a :class:`tdse1d.spectra.surface_flux.SurfaceFlux`,
the propagator adds the flux through its surfaces at every step.

For one electron on a line the time loop allocates no arrays: every work array is made
in the constructor, and the point-wise work is done by the fused kernels of
:mod:`tdse1d.physics.kernels`. Other systems run the array loop of
:mod:`tdse1d.physics.grid_step`, which takes the same sub-steps. The surface flux is
computed for one electron on a line only, and refused for other systems.
"""

from __future__ import annotations

import numpy as np

from ..errors import NumericalError
from .grid import Grid
from .grid_step import GridStepper
from .line_step import LineStepper
from .observables import Observables, measured_entries
from .systems import OneElectron, System
from .schemes import DEFAULT_SCHEME_FOR_ORDER, SCHEMES, Strang, Suzuki4, SplittingScheme, Yoshida4, register_scheme

__all__ = [
    "SplittingScheme",
    "Strang",
    "Yoshida4",
    "Suzuki4",
    "SCHEMES",
    "register_scheme",
    "DEFAULT_SCHEME_FOR_ORDER",
    "Propagator",
    "System",
    "Observables",
    "NumericalError",
]


class Propagator:
    """Split-operator propagator of one wavefunction of a :class:`System` on a Fourier grid.

    Parameters
    ----------
    system : System
        What is propagated (:mod:`tdse1d.physics.systems`): grid of any number of axes,
        potential, field coupling, absorber factor, reference state. The 1-D call form
        ``Propagator(grid, potential, field, times, ..., absorber_factor=,
        reference=)`` makes a :class:`~tdse1d.physics.systems.OneElectron`.
    field : Field
        Provides ``electric(t)`` and ``vector_potential(t)`` (a.u.).
    times : ndarray
        Uniform times t_0 ... t_N of the steps (a.u.).
    gauge : {"length", "velocity"}
    scheme : type of SplittingScheme
    fft_effort : str
        FFTW planner flag.
    surface_flux : tdse1d.spectra.surface_flux.SurfaceFlux, optional
        Accumulates the flux through its surfaces: the propagator adds the state of
        every step to it (the first with :meth:`start`, the last half-weight
        correction with :meth:`finish`). One electron on a line only.
    threads : int
        FFTW threads for a grid of several axes (a 1-D grid always uses one: its
        transforms are too short to gain).
    compiled : bool
        One electron on a line: run chunks of steps in the compiled loop of
        :mod:`tdse1d.physics.time_loop` (default; bitwise the same steps as the
        Python-driven loop, which runs when False, when a per-step observable is
        measured by a Python callable, or when FFTW cannot be called directly).
    record_every : int
        Record the per-step observables at every k-th step only (default 1: every
        step); ``observables.time`` then holds those steps' times. Choose k with
        :func:`tdse1d.physics.observables.record_stride`. A run starts, resumes and
        (for the last momentum record) ends on a multiple of k.

    Notes
    -----
    Use :meth:`start` with the initial wavefunction, then :meth:`advance` as many steps
    as wanted (callers interleave snapshots, checkpoints and progress between calls),
    and :meth:`finish` to record the last momentum. ``psi`` is the current state, of
    shape ``grid.shape``. One electron on a line runs the fused kernels of
    :mod:`tdse1d.physics.kernels`; every other system the array loop of
    :mod:`tdse1d.physics.grid_step`, which takes the same steps.
    """

    def __init__(self, system, *args, **kwargs):
        if isinstance(system, Grid):  # the 1-D call form: Propagator(grid, potential, field, times, ...)
            if not args:
                raise TypeError("Propagator(grid, potential, field, times, ...) needs the potential")
            potential, *args = args
            system = OneElectron(system, potential, kwargs.pop("absorber_factor", None),
                                 kwargs.pop("reference", None))
        if not isinstance(system, System):
            raise TypeError(f"Propagator needs a System (tdse1d.physics.systems), got {type(system).__name__}")
        self._setup(system, *args, **kwargs)

    def _setup(self, system, field, times, gauge="length", scheme=None, fft_effort="FFTW_MEASURE",
               surface_flux=None, threads=1, compiled=True, record_every=1):
        if gauge not in ("length", "velocity"):
            raise ValueError(f"gauge must be 'length' or 'velocity', got {gauge!r}")
        times = np.asarray(times, dtype=float)
        if times.ndim != 1 or len(times) < 2:
            raise ValueError("times must be a 1-D array of at least two times")
        steps = np.diff(times)
        h = float(steps.mean())
        if not (h > 0 and np.allclose(steps, h, rtol=1e-9, atol=1e-12 * abs(h))):
            raise ValueError("times must be uniform and increasing")
        self.system = system
        self.grid = grid = system.grid
        self.field = field
        self.times = times
        self.time_step = h
        self.gauge = gauge
        self.scheme = scheme or Strang
        self.compiled = bool(compiled)
        if int(record_every) != record_every or record_every < 1:
            raise ValueError(f"record_every must be a positive integer, got {record_every}")
        self.record_every = every = int(record_every)
        self._line = system.is_line
        if surface_flux is not None and not self._line:
            raise ValueError(f"the surface flux is computed for one electron on a line only, not for {system!r}")
        self.surface_flux = surface_flux
        self._charge_sum = system.charge_sum
        # the sub-step plan: potential kicks with coefficients c (times h), kinetic
        # steps with weights w, and the midpoint times (fractions of h) of each
        w = np.asarray(self.scheme.weights)
        offsets = np.concatenate([[0.0], np.cumsum(w)[:-1]])
        self._kinetic_weights = w
        self._kinetic_mid = offsets + w / 2
        # potential kick i (0..m) combines the half kicks adjacent to it
        # as (coefficient, index of the kinetic sub-step whose midpoint field it uses)
        self._kick_parts = []
        for i in range(len(w) + 1):
            parts = []
            if i > 0:
                parts.append((w[i - 1] / 2, i - 1))
            if i < len(w):
                parts.append((w[i] / 2, i))
            self._kick_parts.append(tuple(parts))

        # field at every midpoint, precomputed so the loop does no field evaluation
        mids = times[:-1, None] + h * self._kinetic_mid[None, :]
        self._e_mid = np.asarray(field.electric(mids.ravel())).reshape(mids.shape) if field.pulses else np.zeros(mids.shape)
        self._a_mid = np.asarray(field.vector_potential(mids.ravel())).reshape(mids.shape) if field.pulses else np.zeros(mids.shape)
        e_t = field.electric(times) if field.pulses else np.zeros(len(times))
        a_t = field.vector_potential(times) if field.pulses else np.zeros(len(times))
        # per-step observables measured by a callable rather than by the kernels
        extra = system.per_step_observables()
        self._measured = measured_entries() + tuple(extra)
        # the field at every step (the loop's phases) and the records at every every-th
        self._e_t, self._a_t = np.asarray(e_t, float), np.ascontiguousarray(a_t, dtype=float)
        self.observables = Observables.empty(times[::every].copy(), self._e_t[::every].copy(),
                                             self._a_t[::every].copy(), extra=tuple(e.name for e in extra))
        self.step_index = 0
        self._pending_momentum = 0.0  # <K> of the first kinetic sub-step, for <P>(t_n)
        self._force = 0.0  # <F> at the last record
        if self._line:
            self._stepper = LineStepper(self, fft_effort, self.compiled)
        else:
            self._stepper = GridStepper(self, fft_effort, threads)
        self.psi = self._stepper.psi

    # ------------------------------------------------------------------ state
    @property
    def steps(self) -> int:
        return len(self.times) - 1

    @property
    def time(self) -> float:
        return float(self.times[self.step_index])

    @property
    def recorded_force(self) -> float:
        """Mean force <F> (a.u.) of the last record, which the next record's momentum
        uses; a checkpoint keeps it so a resumed run continues bitwise."""
        return self._force

    @recorded_force.setter
    def recorded_force(self, value: float) -> None:
        self._force = float(value)

    def start(self, psi0, step_index: int = 0):
        """Set the state at ``times[step_index]`` and record its observables.

        At step 0 the state's flux enters the surface-flux integral with weight h/2; a
        resumed run (step > 0) restores the accumulator from its checkpoint instead.
        """
        psi0 = np.asarray(psi0, dtype=complex)
        if psi0.shape != self.grid.shape:
            raise ValueError(f"psi0 must have the grid's shape {self.grid.shape}, got {psi0.shape}")
        if not np.all(np.isfinite(psi0)):
            raise ValueError("psi0 holds non-finite values")
        if step_index % self.record_every:
            raise ValueError(f"a run starts or resumes at a record step (a multiple of {self.record_every}), "
                             f"not at step {step_index}")
        self.psi[:] = psi0
        self.step_index = step_index
        self._record_position(step_index, *self._position_moments(step_index))
        self._record_measured(step_index)
        if self.surface_flux is not None and step_index == 0:
            self.surface_flux.add(self._stepper.psi_view, 0, float(self._a_t[0]), 0.5 * self.time_step,
                                  advance=False)

    @property
    def step_vector_potential(self) -> np.ndarray:
        """A(t_n) at every step n = 0..steps (a.u.; read-only view), whatever ``record_every``."""
        view = self._a_t.view()
        view.flags.writeable = False
        return view

    def vector_potential_steps(self):
        """int A dt and int A^2 dt over each step, by the propagator's midpoint rule.

        Returns
        -------
        dG, dH : ndarray, shape (steps,)
            (a.u.) The Volkov phase of a velocity-gauge free wave advances by
            p^2 h / 2 + p dG + dH / 2 per step, exactly as this propagator moves it.
        """
        w = self._kinetic_weights * self.time_step
        return self._a_mid @ w, self._a_mid**2 @ w

    def _position_moments(self, n):
        return self._stepper.position_moments(self._a_t[n])

    def _record_position(self, n, s0, s1, s2, ov):
        dx = self.grid.volume_element
        obs = self.observables
        n //= self.record_every
        obs.norm[n] = s0 * dx
        obs.dipole[n] = s1 * dx
        obs.acceleration[n] = -s2 * dx - self._charge_sum * obs.electric[n] * s0 * dx
        obs.initial_population[n] = abs(ov * dx) ** 2
        self._force = s2 * dx  # <V'>_n, for the momentum of step n

    def _record_measured(self, n):
        for entry in self._measured:
            getattr(self.observables, entry.name)[n // self.record_every] = entry.measure(self)

    # ------------------------------------------------------------------- loop
    def advance(self, count: int) -> int:
        """Take up to ``count`` steps; returns the number taken."""
        count = min(count, self.steps - self.step_index)
        return self._stepper.advance(count)

    def _end_step(self, n, s0, s1, s2, overlap):
        """After step n: record <P>(t_n) and, at a record step, the position records of
        t_{n+1} (sums without the volume element), and check the norm."""
        every = self.record_every
        if n % every == 0:
            self._record_momentum(n)
        self.step_index = n + 1
        if (n + 1) % every:
            return
        self._record_position(n + 1, s0, s1, s2, overlap)
        if self._measured:
            self._record_measured(n + 1)
        j = (n + 1) // every
        if not (self.observables.norm[j] <= self.observables.norm[j - 1] * (1 + 1e-9) + 1e-12):
            self._norm_failure(n)

    def _norm_failure(self, n):
        """Raise for the norm record after step n (a record step)."""
        norm, j = self.observables.norm, (n + 1) // self.record_every
        what = "non-finite values in the wavefunction" if not np.isfinite(norm[j]) else (
            f"the norm grew from {norm[j - 1]:.12g} to {norm[j]:.12g}")
        raise NumericalError(what, n + 1, float(self.times[n + 1]))

    def _record_momentum(self, n):
        """<P>(t_n) from <K> after the first potential kick of step n: that kick changes
        <P> by exactly -c h <F + W E> (length) or -c h <F> (velocity) and not |psi|,
        with W = sum_a w_a^2 (1 for one electron)."""
        obs = self.observables
        j = n // self.record_every
        c, _ = self._kick_parts[0][0]
        h = self.time_step
        norm = obs.norm[j]
        kick = self._force
        if self.gauge == "length":
            kick += self._charge_sum * self._e_mid[n][0] * norm
        p = self._pending_momentum * norm + c * h * kick
        if self.gauge == "velocity":
            p += self._charge_sum * self._a_t[n] * norm
        obs.momentum[j] = p

    def finish(self):
        """Record the momentum at the last step reached (needs one extra FFT), and
        complete the trapezoidal rule of the surface flux (call once)."""
        n = self.step_index
        if self.surface_flux is not None:
            self.surface_flux.add(self._stepper.psi_view, n, float(self._a_t[n]), -0.5 * self.time_step,
                                  advance=False)
        if n % self.record_every:
            return  # the last step is not a record step
        mean_k = self._stepper.mean_momentum()
        j = n // self.record_every
        norm = self.observables.norm[j]
        p = mean_k * norm
        if self.gauge == "velocity":
            p += self._charge_sum * self._a_t[n] * norm
        self.observables.momentum[j] = p

    def length_gauge_state(self) -> np.ndarray:
        """The current state in the length gauge (a copy)."""
        a = float(self._a_t[self.step_index])
        if self.gauge == "velocity" and a != 0.0:
            x = self.grid.x if self._line else self.system.coupling()
            return self.psi * np.exp(1j * a * x)
        return self.psi.copy()

