"""Photoelectron spectra by the time-dependent surface flux method.

The method (Tao and Scrinzi, New J. Phys. 14, 013021 (2012)) counts the electrons as
they cross two surfaces x = +-R placed at the inner edges of the absorbing layers.
Beyond R the electron is taken to be free in the laser field, so it evolves as a
superposition of Volkov waves; in the velocity gauge (H = (p + A)^2 / 2 + V, electron
charge -1, E = -dA/dt) these are

    chi_p(x, t) = (2 pi)^(-1/2) exp(i p x - i Phi(p, t)),  Phi(p, t) = int_0^t (p + A)^2 / 2 dt',

with p the canonical momentum, conserved in the field. The amplitude of momentum p on
the right of the surface, b_R(p, t) = <chi_p(t)| theta(x - R) psi(t)>, changes as

    d b_R / dt = i <chi_p| [H_0, theta(x - R)] |psi> = chi_p^*(R, t) [ (p/2 + A) psi(R) - (i/2) psi'(R) ]

(H_0 the free Hamiltonian; the potential beyond R is neglected, which for a soft-core
Coulomb tail is the method's one approximation), and the left side the same with the
opposite sign at x = -R. The time integral over the run is what crossed each surface,
whether or not the absorber beyond it removed it afterwards. What is still inside
|x| < R at the end is added by projecting its continuum part (bound states removed) on
the same Volkov waves, and the flux of the bound states' tails is cancelled
(:meth:`SurfaceFlux.closing_amplitude`); the amplitudes add coherently.

Numerics. psi'(R) is a central finite difference of :data:`STENCIL_RADIUS` points on
each side (order 2 r); for a plane wave exp(i q x) its relative error is below
:data:`DERIVATIVE_ERROR` for q dx <= 1 (:func:`stencil_error`). The time integral is the
trapezoidal rule on the propagator's step times. The Volkov phase is advanced by the
same midpoint quadrature of A and A^2 that the velocity-gauge propagator uses, so a
free wave propagated by the solver and the Volkov wave keep their phases in step. The
momentum grid is independent of the box (:func:`momentum_grid`); the per-step work is
O(P) for P momenta (:func:`tdse1d.physics.kernels.flux_accumulate`), without FFTs or
allocation.
"""

from __future__ import annotations

import math

import numpy as np

from ..physics import kernels
from .photoelectron import SPLITS, PhotoelectronSpectrum

__all__ = [
    "STENCIL_RADIUS",
    "DERIVATIVE_ERROR",
    "SAMPLES_PER_PHOTON",
    "MAX_MOMENTA",
    "derivative_stencil",
    "stencil_error",
    "spectrum_top_energy",
    "momentum_grid",
    "SurfaceFlux",
]

#: points on each side of the surface in the finite-difference derivative
STENCIL_RADIUS = 8
#: bound on the relative error of the derivative of exp(i q x) for q dx <= 1
#: (checked by :func:`stencil_error` in the tests)
DERIVATIVE_ERROR = 1e-5
#: momentum samples per photon energy at the top of the shown energy range (dE = p dp)
SAMPLES_PER_PHOTON = 4
#: most momenta on each side of p = 0 (the per-step cost grows with it)
MAX_MOMENTA = 1 << 16


def derivative_stencil(radius: int = STENCIL_RADIUS) -> np.ndarray:
    """Weights c_m, m = -r..r, of the central first derivative of order 2 r.

    ``f'(x_0) dx ~ sum_m c_m f(x_m)``, exact for polynomials of degree <= 2 r
    (Fornberg, Math. Comp. 51, 699 (1988), here by solving the moment equations).

    Parameters
    ----------
    radius : int
        r >= 1.

    Returns
    -------
    ndarray, shape (2 r + 1,)
    """
    r = int(radius)
    if r < 1:
        raise ValueError(f"radius must be >= 1, got {radius}")
    # antisymmetric weights: sum_{m=1}^r c_m 2 m^(2k-1) = delta_{k,1} for k = 1..r
    m = np.arange(1, r + 1, dtype=float)
    system = np.array([2 * m ** (2 * k - 1) for k in range(1, r + 1)])
    rhs = np.zeros(r)
    rhs[0] = 1.0
    c = np.linalg.solve(system, rhs)
    return np.concatenate([-c[::-1], [0.0], c])


def fornberg_weights(offsets, order: int) -> np.ndarray:
    """Finite-difference weights of the derivatives 0..order at 0 on the given offsets.

    Fornberg's recursion (Fornberg, Math. Comp. 51, 699 (1988)): row m holds the
    weights w_j with f^(m)(0) ~ sum_j w_j f(offsets[j]) (offsets in grid units).

    Parameters
    ----------
    offsets : sequence of float
        Sample positions in units of the grid spacing.
    order : int
        Highest derivative.

    Returns
    -------
    ndarray, shape (order + 1, len(offsets))
    """
    z = np.asarray(offsets, dtype=float)
    n = z.size
    c = np.zeros((n, order + 1))
    c1 = 1.0
    c4 = z[0]
    c[0, 0] = 1.0
    for i in range(1, n):
        mn = min(i, order)
        c2 = 1.0
        c5 = c4
        c4 = z[i]
        for j in range(i):
            c3 = z[i] - z[j]
            c2 *= c3
            if j == i - 1:
                for k in range(mn, 0, -1):
                    c[i, k] = c1 * (k * c[i - 1, k - 1] - c5 * c[i - 1, k]) / c2
                c[i, 0] = -c1 * c5 * c[i - 1, 0] / c2
            for k in range(mn, 0, -1):
                c[j, k] = (c4 * c[j, k] - k * c[j, k - 1]) / c3
            c[j, 0] = c4 * c[j, 0] / c3
        c1 = c2
    return c.T


def stencil_error(stencil: np.ndarray, q_dx: float) -> float:
    """Relative error |q_eff / q - 1| of the stencil's derivative of exp(i q x).

    Parameters
    ----------
    stencil : ndarray
        From :func:`derivative_stencil`.
    q_dx : float
        Wavenumber times grid spacing (radians).
    """
    r = (len(stencil) - 1) // 2
    m = np.arange(-r, r + 1)
    q_eff = np.sum(stencil * np.sin(m * q_dx))
    return abs(q_eff / q_dx - 1.0)


def spectrum_top_energy(peak_vector_potential: float, ionization_potential: float, photon_energies) -> float:
    """Top of the photoelectron energy range computed (hartree).

    Twice the largest classical kinetic energy: backscattered electrons end at 10 Up
    (Paulus et al., J. Phys. B 27, L703 (1994), from memory), with Up = A0^2 / 4 for the
    peak vector potential A0, one-photon electrons at hbar w - Ip, streaked by up to A0
    in momentum, and at least three photon energies of the softest pulse. The factor 2
    leaves the upper half of the axis above every classical edge, where the analysis
    reads the spectrum's noise floor (docs/analysis.md).

    Parameters
    ----------
    peak_vector_potential : float
        max |A(t)| over the run (a.u.).
    ionization_potential : float
        Ip (hartree).
    photon_energies : sequence of float
        hbar w of each pulse (hartree).

    Returns
    -------
    float
    """
    a0 = abs(float(peak_vector_potential))
    up = a0 * a0 / 4
    top = max(10 * up + ionization_potential, 3 * min(photon_energies))
    for w in photon_energies:
        if w > ionization_potential:
            top = max(top, 0.5 * (math.sqrt(2 * (w - ionization_potential)) + a0) ** 2)
    return 2 * top


def momentum_grid(top_energy: float, photon_energy: float, max_momentum: float | None = None):
    """Signed kinetic momenta for the spectrum: +-(m + 1/2) dp, m = 0 .. M - 1.

    dp gives :data:`SAMPLES_PER_PHOTON` samples per photon energy at the top energy
    (dE = p dp there); p = 0 is never a sample, so dP/dE = (dP/dp)/p is finite.

    Parameters
    ----------
    top_energy : float
        Highest kinetic energy (hartree).
    photon_energy : float
        The energy scale to resolve (hartree): a photon energy, or the bandwidth of a
        one-photon line.
    max_momentum : float, optional
        Cap on the top momentum (a.u.), e.g. the grid's pi / dx.

    Returns
    -------
    momenta : ndarray, shape (2 M,)
        Increasing, symmetric about 0.
    block : int
        Block length of the linear-phase factorisation (divides M).
    capped : bool
        True if :data:`MAX_MOMENTA` limited the resolution.
    """
    if not (top_energy > 0 and photon_energy > 0):
        raise ValueError(f"top_energy and photon_energy must be positive, got {top_energy}, {photon_energy}")
    p_top = math.sqrt(2 * top_energy)
    if max_momentum is not None:
        p_top = min(p_top, float(max_momentum))
    dp = photon_energy / (SAMPLES_PER_PHOTON * p_top)
    count = int(math.ceil(p_top / dp))
    capped = count > MAX_MOMENTA
    count = min(count, MAX_MOMENTA)
    block = max(1, int(math.sqrt(2 * count)))
    count = int(math.ceil(count / block)) * block
    dp = p_top / count  # no coarser than asked: the top sample (count - 1/2) dp < p_top
    m = np.arange(count)
    positive = (m + 0.5) * dp
    return np.concatenate([-positive[::-1], positive]), block, capped


class SurfaceFlux:
    """Accumulates the flux of the wavefunction through x = +-R on a momentum grid.

    Usage: :meth:`add` with the state at the first step (weight h/2, no advance),
    then after every step (weight h, advance), and once more with the last state
    (weight -h/2, no advance) to complete the trapezoidal rule; then :meth:`result`.
    :class:`tdse1d.physics.propagation.Propagator` makes these calls when given an instance.

    Parameters
    ----------
    x : ndarray, shape (n,)
        Uniform grid (bohr).
    right_index, left_index : int
        Grid indices of the surfaces x_R > 0 and x_L < 0; the derivative stencil must
        fit inside the grid.
    kinetic_momenta : ndarray, shape (2 M,)
        Final kinetic momenta (a.u.) from :func:`momentum_grid`.
    block : int
        Block length dividing M (from :func:`momentum_grid`).
    time_step : float
        h (a.u.).
    vector_potential_steps : tuple of ndarray, shape (steps,)
        (dG, dH): int A dt and int A^2 dt over each step, as the propagator takes them.
    final_vector_potential : float
        A at the end of the run (a.u.); canonical momentum p = kinetic - A(T).
    gauge : {"length", "velocity"}
        Gauge of the wavefunctions passed to :meth:`add`.
    """

    def __init__(self, x, right_index, left_index, kinetic_momenta, block, time_step,
                 vector_potential_steps, final_vector_potential, gauge):
        x = np.asarray(x, dtype=float)
        self.dx = float(x[1] - x[0])
        self.x = x
        self.stencil = derivative_stencil(STENCIL_RADIUS)
        r = STENCIL_RADIUS
        n = x.size
        if not (r <= left_index < right_index < n - r and x[left_index] < 0 < x[right_index]):
            raise ValueError(f"surfaces at indices {left_index}, {right_index} do not fit the grid of {n} points")
        if gauge not in ("length", "velocity"):
            raise ValueError(f"gauge must be 'length' or 'velocity', got {gauge!r}")
        k = np.ascontiguousarray(kinetic_momenta, dtype=float)
        if k.ndim != 1 or k.size % 2 or k.size % block:
            raise ValueError("kinetic_momenta must have an even length that block divides")
        self.right_index = int(right_index)
        self.left_index = int(left_index)
        self.radius_right = float(x[right_index])
        self.radius_left = float(x[left_index])
        self.gauge = gauge
        self.kinetic_momenta = k
        self.final_vector_potential = float(final_vector_potential)
        self.momenta = k - self.final_vector_potential  # canonical
        self.block = int(block)
        self.time_step = float(time_step)
        self._dg, self._dh = (np.ascontiguousarray(a, dtype=float) for a in vector_potential_steps)
        p = self.momenta
        norm = 1 / math.sqrt(2 * math.pi)
        self._step_phase = np.exp(0.5j * self.time_step * p**2)
        self._surface_right = norm * np.exp(-1j * p * self.radius_right)
        self._surface_left = norm * np.exp(-1j * p * self.radius_left)
        nb = p.size // self.block
        self._p_first = p[:: self.block].copy()
        self._dp = float(p[1] - p[0])
        self._coarse = np.ones(nb, complex)
        self._fine = np.ones(self.block, complex)
        self.volkov = np.ones(p.size, complex)  # exp(i Phi(p, t_step))
        self.amp_right = np.zeros(p.size, complex)
        self.amp_left = np.zeros(p.size, complex)
        self.step = 0
        self._scalars = np.zeros((4, 2))
        f = lambda a: a.view(np.float64)  # noqa: E731
        self._v = {name: f(getattr(self, name)) for name in (
            "_step_phase", "_surface_right", "_surface_left", "_coarse", "_fine", "volkov",
            "amp_right", "amp_left")}

    def add(self, psi_view, step_index: int, vector_potential: float, weight: float, advance: bool):
        """Add one time sample of the flux through both surfaces.

        Parameters
        ----------
        psi_view : ndarray of float64
            Float64 view of the wavefunction at ``times[step_index]`` (propagation gauge).
        step_index : int
            Its step; with ``advance`` it must be the step after the last one added.
        vector_potential : float
            A(t) at that step (a.u.).
        weight : float
            Quadrature weight (a.u. of time).
        advance : bool
            Move the Volkov phases on from the previous step first.
        """
        if advance:
            if step_index != self.step + 1:
                raise ValueError(f"flux sample of step {step_index} after step {self.step}")
            self.step = step_index
            n = step_index - 1
            # exp(i p dG + i dH / 2) = exp(-i (theta p + offset)) with theta = -dG, offset = -dH / 2
            kernels.linear_phase(-self._dg[n], self._p_first, self._dp, self.block,
                                 self._v["_coarse"], self._v["_fine"], -0.5 * self._dh[n])
        elif step_index != self.step:
            raise ValueError(f"flux sample of step {step_index} at step {self.step}")
        a = float(vector_potential)
        s = self._scalars
        length = self.gauge == "length"
        kernels.surface_terms(psi_view, self.right_index, self.stencil, self.dx, self.radius_right, a, length, s, 0)
        kernels.surface_terms(psi_view, self.left_index, self.stencil, self.dx, self.radius_left, a, length, s, 2)
        v = self._v
        kernels.flux_accumulate(
            v["volkov"], v["_step_phase"], v["_coarse"], v["_fine"], self.block, self.momenta, bool(advance),
            float(weight), s[0], s[1], v["_surface_right"], v["amp_right"],
            -float(weight), s[2], s[3], v["_surface_left"], v["amp_left"],
        )

    # --------------------------------------------------------------- checkpoints
    def state(self) -> dict:
        """Copies of the accumulated amplitudes, Volkov phases and step (for checkpoints)."""
        return {"volkov": self.volkov.copy(), "amp_right": self.amp_right.copy(),
                "amp_left": self.amp_left.copy(), "step": np.int64(self.step)}

    def restore(self, state: dict):
        """Continue from a :meth:`state` of an accumulator with the same momenta."""
        for name in ("volkov", "amp_right", "amp_left"):
            value = np.asarray(state[name])
            target = getattr(self, name)
            if value.shape != target.shape:
                raise ValueError(f"{name} has shape {value.shape}, expected {target.shape}")
            target[...] = value
        self.step = int(state["step"])

    # ------------------------------------------------------------------ result
    def _projection(self, state, volkov):
        """(2 pi)^(-1/2) dx volkov(p) sum_x state(x) exp(-i p x), for x < 0 and x > 0 apart."""
        centre = int(np.searchsorted(self.x, 0.0))
        factor = self.dx / math.sqrt(2 * math.pi) * volkov
        out = []
        for first, last in ((0, centre), (centre, self.x.size)):
            amp = np.empty(self.momenta.size, complex)
            kernels.plane_wave_sum(state, first, last, float(self.x[0]), self.dx, self.momenta, amp)
            out.append(amp * factor)
        return out[0], out[1]

    def _endpoint_corrections(self, psi):
        """Euler-Maclaurin corrections of the sums cut at the surfaces, times the Volkov factor.

        The sums of :meth:`closing_amplitude` are the trapezoidal rule of integrals that
        end at x_R and x_L, where the summand jumps (from Q psi inside to -P psi
        outside; the jump is psi). For f = psi(x) exp(-i p x) the rule's error is
        sum_k B_2k / (2k)! dx^2k [f^(2k-1)]_(x_L)^(x_R) (Euler-Maclaurin), about
        (p dx)^2 / 12 of the surface term: for the electrons still crossing the
        surfaces at the end it would leave a broad background in the spectrum. The
        terms k = 1, 2, 3 are removed, with psi's derivatives from a centred
        finite-difference stencil; the next term is below 1e-6 (p dx)^8 of the
        surface term.
        """
        r = STENCIL_RADIUS
        weights = fornberg_weights(np.arange(-r, r + 1), 5)
        p = self.momenta
        out = []
        for index, sign in ((self.left_index, -1.0), (self.right_index, 1.0)):
            local = psi[index - r : index + r + 1]
            d = [complex(weights[m] @ local) / self.dx**m for m in range(6)]
            x0 = self.x[index]
            correction = np.zeros(p.size, complex)
            for k, coefficient in ((1, 1 / 12), (2, -1 / 720), (3, 1 / 30240)):
                m = 2 * k - 1
                derivative = sum(math.comb(m, l) * d[l] * (-1j * p) ** (m - l) for l in range(m + 1))
                correction -= sign * coefficient * self.dx ** (2 * k) * derivative
            out.append(correction * np.exp(-1j * p * x0) * self.volkov / math.sqrt(2 * math.pi))
        return out[0], out[1]

    def closing_amplitude(self, continuum_velocity, bound_velocity=None, initial_velocity=None):
        """The terms that complete the flux integral at the end of the run.

        Without absorption, <chi_p(T)|psi(T)> = (flux integral) + <chi_p(T)|theta_in psi(T)>
        + <chi_p(0)|theta_out psi(0)> exactly, with theta_in the indicator of
        x_L < x < x_R and theta_out = 1 - theta_in. The continuum amplitude wanted is that
        minus <chi_p(T)|P psi(T)>, P the projector on the bound states, so

            b(p) = flux + <chi_p(T)|theta_in Q psi(T)> - <chi_p(T)|theta_out P psi(T)> + <chi_p(0)|theta_out psi(0)>

        with Q = 1 - P. The third term cancels the flux of the bound states' tails that
        reach the surfaces (Rydberg states), which would otherwise leave a spurious
        1/p^2 background; the last is the flux the initial state's tail already had.
        The part of psi(T) beyond the surfaces is not added: it has been counted as it
        crossed, and the absorber has removed part of it since. Surface points count
        half to each side.

        Parameters
        ----------
        continuum_velocity : ndarray of complex, shape (n,)
            Q psi(T), velocity gauge, at the last step added.
        bound_velocity : ndarray of complex, shape (n,), optional
            P psi(T), velocity gauge.
        initial_velocity : ndarray of complex, shape (n,), optional
            psi(0), velocity gauge.

        Returns
        -------
        left, right : ndarray of complex
            From x < 0 and x > 0.
        """
        inside = ((self.x > self.radius_left) & (self.x < self.radius_right)).astype(float)
        inside[[self.left_index, self.right_index]] = 0.5
        full = np.asarray(continuum_velocity, dtype=complex)
        if bound_velocity is not None:
            full = full + np.asarray(bound_velocity, dtype=complex)
        arrays = [np.asarray(a, dtype=complex) for a in (continuum_velocity, bound_velocity, initial_velocity)
                  if a is not None]
        if any(a.shape != self.x.shape for a in arrays):
            raise ValueError(f"the final states must have the grid's shape {self.x.shape}")
        state = np.asarray(continuum_velocity, dtype=complex) * inside
        if bound_velocity is not None:
            state -= np.asarray(bound_velocity, dtype=complex) * (1.0 - inside)
        left, right = self._projection(state, self.volkov)
        edge_left, edge_right = self._endpoint_corrections(full)
        left += edge_left
        right += edge_right
        if initial_velocity is not None:
            first_left, first_right = self._projection(np.asarray(initial_velocity, complex) * (1.0 - inside),
                                                       np.ones(self.momenta.size, complex))
            left += first_left
            right += first_right
        return left, right

    def result(self, continuum_velocity, bound_velocity=None, initial_velocity=None,
               split="momentum") -> PhotoelectronSpectrum:
        """The photoelectron spectrum on the kinetic momentum grid.

        Parameters
        ----------
        continuum_velocity, bound_velocity, initial_velocity : ndarray of complex
            Continuum and bound parts of the final state, and the initial state,
            velocity gauge (see :meth:`closing_amplitude`).
        split : str
            ``"momentum"`` (left = final kinetic momentum < 0; the coherent total) or
            ``"position"`` (left = through the left surface, plus what is inside at
            x < 0 at the end, over both signs of the momentum).

        Returns
        -------
        PhotoelectronSpectrum
        """
        if split not in SPLITS:
            raise ValueError(f"unknown split {split!r}; choose one of {sorted(SPLITS)}")
        inside_left, inside_right = self.closing_amplitude(continuum_velocity, bound_velocity, initial_velocity)
        left = self.amp_left + inside_left
        right = self.amp_right + inside_right
        m = self.momenta.size // 2
        if split == "momentum":
            total = np.abs(left + right) ** 2
            density_left, density_right = total[m - 1 :: -1].copy(), total[m:].copy()
        else:
            dl, dr = np.abs(left) ** 2, np.abs(right) ** 2
            density_left = dl[m - 1 :: -1] + dl[m:]
            density_right = dr[m - 1 :: -1] + dr[m:]
        momentum = self.kinetic_momenta[m:].copy()
        return PhotoelectronSpectrum(
            momentum=momentum,
            density_left=density_left,
            density_right=density_right,
            energy=0.5 * momentum**2,
            energy_density_left=density_left / momentum,
            energy_density_right=density_right / momentum,
            split=split,
        )
