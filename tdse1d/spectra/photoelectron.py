"""Photoelectron spectra: :func:`project_out_bound` removes bound-state components;
:func:`plane_wave_spectrum` projects a continuum wavefunction on plane waves; the
surface flux method (:mod:`tdse1d.spectra.surface_flux`) counts the electrons crossing
surfaces at the absorbers. Both give a :class:`PhotoelectronSpectrum` with left- and
right-going electrons apart, under one of the rules registered in :data:`SPLITS`.

The Fourier integral in space is ``phi(p) = (2 pi)^(-1/2) int psi(x) exp(-i p x) dx``.
The velocity-gauge Hamiltonian of a free electron is ``(p + A(t))^2 / 2`` with
``E = -dA/dt``, so that the canonical momentum p is conserved and equals the final
kinetic momentum once A = 0. Pure numerics on arrays, Hartree atomic units.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..units import HARTREE_EV
from .sampling import _positive, _uniform_axis


# --------------------------------------------------------------------------- photoelectrons


def project_out_bound(psi, states, dx):
    """Remove the components of a wavefunction along bound states.

    ``psi_c = psi - sum_n <phi_n|psi> phi_n`` with ``<phi|psi> = sum conj(phi) psi dx``.

    Parameters
    ----------
    psi : array_like, shape (n,)
        Wavefunction on the grid.
    states : array_like, shape (m, n) or (n,)
        Bound-state wavefunctions, one per row, orthonormal on the grid
        (``sum conj(phi_a) phi_b dx = delta_ab`` to 1e-6).
    dx : float
        Grid spacing (bohr).

    Returns
    -------
    ndarray of complex, shape (n,)
        The part of ``psi`` orthogonal to all the states.
    """
    psi = np.asarray(psi, dtype=complex)
    phi = np.atleast_2d(np.asarray(states, dtype=complex))
    dx = _positive(dx, "dx")
    if psi.ndim != 1:
        raise ValueError(f"psi must be 1-D, got shape {psi.shape}")
    if phi.ndim != 2 or phi.shape[1] != psi.size:
        raise ValueError(
            f"states must have shape (m, {psi.size}) to match psi, got {np.shape(states)}"
        )
    gram = (phi.conj() @ phi.T) * dx
    deviation = np.max(np.abs(gram - np.eye(phi.shape[0])))
    if deviation > 1e-6:
        raise ValueError(
            f"states must be orthonormal with sum conj(phi_a) phi_b dx = delta_ab; the "
            f"overlap matrix differs from the identity by {deviation:.2e}"
        )
    coefficients = (phi.conj() @ psi) * dx
    return psi - coefficients @ phi


@dataclass(frozen=True, eq=False)
class PhotoelectronSpectrum:
    """Photoelectron momentum and energy distributions, left and right electrons apart.

    Attributes
    ----------
    momentum : ndarray, shape (k,)
        Final kinetic momentum magnitude |p| (a.u.), uniform: from 0 with step
        ``2 pi / (n dx)`` for the plane-wave projection, at (m + 1/2) dp for the
        surface flux method (which never samples p = 0).
    density_left, density_right : ndarray, shape (k,)
        dP/d|p| of electrons going to the left (negative x) and right (a.u.), with
        ``sum(density_left + density_right) * dp`` equal to the norm analysed.
    energy : ndarray, shape (k,)
        Kinetic energy ``p^2 / 2`` (Hartree).
    energy_density_left, energy_density_right : ndarray, shape (k,)
        dP/dE = (dP/dp) / p (1/Hartree); NaN at p = 0 (plane-wave projection only),
        where it is undefined.
    split : str
        The key of :data:`SPLITS` that decided left from right.
    """

    momentum: np.ndarray
    density_left: np.ndarray
    density_right: np.ndarray
    energy: np.ndarray
    energy_density_left: np.ndarray
    energy_density_right: np.ndarray
    split: str

    @property
    def momentum_step(self) -> float:
        """Step dp of the momentum axis (a.u.)."""
        return float(self.momentum[1] - self.momentum[0])

    @property
    def density(self) -> np.ndarray:
        """dP/d|p| of both sides together."""
        return self.density_left + self.density_right

    @property
    def energy_density(self) -> np.ndarray:
        """dP/dE of both sides together (NaN at E = 0)."""
        return self.energy_density_left + self.energy_density_right

    @property
    def norm(self) -> float:
        """Total probability ``sum(density) * dp``."""
        return float(np.sum(self.density) * self.momentum_step)

    @property
    def energy_ev(self) -> np.ndarray:
        """Kinetic energy in eV (CODATA Hartree energy via :mod:`tdse1d.units`)."""
        return self.energy * HARTREE_EV


def _fold(density):
    """Split a density in FFT order into its p < 0 and p > 0 halves on the |p| axis.

    p = 0 and, for even n, the Nyquist momentum (which is both +pi/dx and -pi/dx) are
    shared half and half, so the two halves add up to the whole.
    """
    n = density.size
    m = n // 2 + 1
    kmax = (n - 1) // 2
    negative = np.zeros(m)
    positive = np.zeros(m)
    negative[0] = positive[0] = 0.5 * density[0]
    positive[1 : kmax + 1] = density[1 : kmax + 1]
    negative[1 : kmax + 1] = density[n - 1 : n - kmax - 1 : -1]
    if n % 2 == 0:
        negative[m - 1] = positive[m - 1] = 0.5 * density[n // 2]
    return negative, positive


def _split_momentum(total, left, right):
    """Left = p < 0, right = p > 0 of the total amplitude (exact for the whole)."""
    negative, positive = _fold(np.abs(total) ** 2)
    return negative, positive


def _split_position(total, left, right):
    """Left = the part from x < 0, right = from x > 0, each over all momenta."""
    return sum(_fold(np.abs(left) ** 2)), sum(_fold(np.abs(right) ** 2))


#: Rules that tell left-going from right-going electrons, given the momentum
#: amplitudes (FFT order) of the whole, of its x < 0 part and of its x > 0 part
#: (each reads only what it needs: "momentum" the whole, "position" the two parts;
#: :func:`plane_wave_spectrum` transforms only those and passes None for the rest).
#: ``"momentum"``: by the sign of p; exact and the default.
#: ``"position"``: by the side of the grid the electron is on (or was absorbed on),
#: meaningful after a field-free time long enough for the sides to separate; the two
#: sides are then added incoherently, dropping their (small) interference.
SPLITS = {"momentum": _split_momentum, "position": _split_position}


def _momentum_axis(n, dx):
    return 2 * np.pi / (n * dx) * np.arange(n // 2 + 1)


def _spectrum_from_amplitudes(total, left, right, dx, split) -> PhotoelectronSpectrum:
    if split not in SPLITS:
        raise ValueError(f"unknown split {split!r}; choose one of {sorted(SPLITS)}")
    density_left, density_right = SPLITS[split](total, left, right)
    momentum = _momentum_axis((total if total is not None else left).size, dx)
    energy = 0.5 * momentum**2
    with np.errstate(divide="ignore", invalid="ignore"):
        inverse_p = np.where(momentum > 0, 1.0 / momentum, np.nan)
    return PhotoelectronSpectrum(
        momentum=momentum,
        density_left=density_left,
        density_right=density_right,
        energy=energy,
        energy_density_left=density_left * inverse_p,
        energy_density_right=density_right * inverse_p,
        split=split,
    )


def _plane_wave_factor(x, dx):
    """``dx / sqrt(2 pi) exp(-i p x_0)`` in FFT order: turns an FFT into phi(p)."""
    p = 2 * np.pi * np.fft.fftfreq(x.size, dx)
    return p, dx / np.sqrt(2 * np.pi) * np.exp(-1j * p * x[0])


def _sides(x, psi):
    """psi restricted to x < 0 and x > 0; a sample at x = 0 goes half (in norm) to each."""
    left = np.where(x < 0, psi, 0)
    right = np.where(x > 0, psi, 0)
    centre = x == 0
    if np.any(centre):
        left[centre] = right[centre] = psi[centre] / np.sqrt(2)
    return left, right


def plane_wave_spectrum(x, psi_continuum, *, split="momentum") -> PhotoelectronSpectrum:
    """Photoelectron spectrum by projecting a continuum wavefunction on plane waves.

    ``phi(p) = (2 pi)^(-1/2) sum_j psi(x_j) exp(-i p x_j) dx`` on the FFT momenta
    ``p = 2 pi k / (n dx)``, and ``dP/dp = |phi(p)|^2``. By Parseval's theorem
    ``sum |phi|^2 dp = sum |psi|^2 dx``: the spectrum holds exactly the norm of the
    continuum part. Plane waves are the continuum states of the free electron; for
    an electron still near the ion they are not orthogonal to the bound states, so
    project those out first (:func:`project_out_bound`) and analyse the wavefunction
    after a field-free time long enough for the continuum to leave the ion's
    neighbourhood. Call it when the vector potential is zero, so that canonical and
    kinetic momentum agree.

    Parameters
    ----------
    x : array_like, shape (n,)
        Uniform grid positions (bohr).
    psi_continuum : array_like, shape (n,)
        Continuum part of the wavefunction.
    split : str
        A key of :data:`SPLITS`: ``"momentum"`` (default, left = p < 0) or
        ``"position"`` (left = x < 0).

    Returns
    -------
    PhotoelectronSpectrum
    """
    x, dx = _uniform_axis(x, "x")
    psi = np.asarray(psi_continuum, dtype=complex)
    if psi.shape != x.shape:
        raise ValueError(f"psi_continuum has shape {psi.shape} but x has shape {x.shape}")
    if split not in SPLITS:
        raise ValueError(f"unknown split {split!r}; choose one of {sorted(SPLITS)}")
    _, factor = _plane_wave_factor(x, dx)
    # each split reads either the whole's amplitude or the two sides': transform only those
    if split == "momentum":
        return _spectrum_from_amplitudes(np.fft.fft(psi) * factor, None, None, dx, split)
    left, right = _sides(x, psi)
    return _spectrum_from_amplitudes(None, np.fft.fft(left) * factor, np.fft.fft(right) * factor, dx, split)
