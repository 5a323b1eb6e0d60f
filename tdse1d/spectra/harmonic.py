"""Harmonic spectra: :func:`harmonic_spectrum` Fourier-transforms a windowed dipole signal
(acceleration, velocity or dipole form) and returns a :class:`HarmonicSpectrum`;
:func:`dipole_forms` converts all three forms to the acceleration form so they can be
compared.

Fourier integrals in time are ``F(w) = int f(t) exp(-i w t) dt``. Pure numerics on
arrays, Hartree atomic units.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..units import HARTREE_EV
from .sampling import _positive, _series
from .windows import _window


# --------------------------------------------------------------------------- harmonics

#: Signal forms: how many time derivatives separate each from the dipole acceleration.
#: Fourier transforms of the forms are related by F[d'] = i w F[d] (Burnett, Reed,
#: Cooper and Knight, Phys. Rev. A 45, 3347 (1992), from memory), so a dipole spectrum
#: times w^4, or a velocity spectrum times w^2, is comparable with the acceleration one.
DIPOLE_FORMS: dict[str, int] = {"acceleration": 0, "velocity": 1, "dipole": 2}


@dataclass(frozen=True, eq=False)
class HarmonicSpectrum:
    """Emission spectrum of a dipole signal, non-negative frequencies only.

    Attributes
    ----------
    frequency : ndarray
        Angular frequency w (a.u.); equal to the photon energy in Hartree.
    order : ndarray
        Harmonic order ``frequency / omega0``.
    power : ndarray
        ``|amplitude|^2`` (a.u.).
    amplitude : ndarray of complex
        Fourier integral ``int w(t) s(t) exp(-i w t) dt`` of the windowed signal, in
        the acceleration form (see :func:`harmonic_spectrum`); independent of the
        sampling step.
    omega0 : float
        Fundamental (carrier) angular frequency used for ``order`` (a.u.).
    """

    frequency: np.ndarray
    order: np.ndarray
    power: np.ndarray
    amplitude: np.ndarray
    omega0: float

    @property
    def photon_energy_ev(self) -> np.ndarray:
        """Photon energy in eV (CODATA Hartree energy via :mod:`tdse1d.units`)."""
        return self.frequency * HARTREE_EV


def harmonic_spectrum(
    time, acceleration, omega0, window="hann", *, form="acceleration", pad_factor=1
) -> HarmonicSpectrum:
    """Harmonic spectrum of a dipole signal.

    The amplitude is the Fourier integral of the windowed signal, evaluated as a
    rectangle-rule sum so that it does not depend on the sampling step:

    ``a(w) = dt * sum_j w_j s(t_j) exp(-i w t_j)``,

    with phases referred to t = 0 (not to the first sample). ``power = |a(w)|^2``.
    For ``form="velocity"`` or ``"dipole"`` the amplitude is multiplied by ``i w`` or
    ``(i w)^2`` so that the result is in the acceleration form, i.e. the power carries
    the factor w^2 or w^4 (Burnett et al., Phys. Rev. A 45, 3347 (1992), from memory).
    The window W is applied to the signal as given, before that factor; the forms then
    agree exactly only without a window (and signals that vanish at both ends of the
    record): with one, F[(W v)'] = F[W a] + F[W' v] leaves a floor of relative size
    ~ |W'/W| / w (tests/test_dipole_forms_spectrum.py).

    Parameters
    ----------
    time : array_like, shape (n,)
        Uniformly spaced sample times (a.u.).
    acceleration : array_like, shape (n,)
        Real signal at those times: dipole acceleration (default), velocity or
        dipole, as given by ``form`` (a.u.).
    omega0 : float
        Fundamental angular frequency (a.u.), used for the harmonic-order axis.
    window : str or Window
        A key of :data:`WINDOWS` (``"hann"``, ``"blackman"``, ``"tukey"``, ``"none"``)
        or a :class:`Window` instance, e.g. ``Tukey(0.2)``.
    form : str
        A key of :data:`DIPOLE_FORMS`: which quantity ``acceleration`` holds.
    pad_factor : int
        Zero-pad the record to ``pad_factor * n`` samples before the FFT. This
        interpolates the frequency axis (step ``2 pi / (pad_factor * n * dt)``); it
        adds no resolution.

    Returns
    -------
    HarmonicSpectrum
        On the frequencies ``2 pi k / (pad_factor n dt)``, k = 0 .. up to the Nyquist
        frequency ``pi / dt``.
    """
    t, dt, signal = _series(time, acceleration, "acceleration")
    omega0 = _positive(omega0, "omega0")
    if form not in DIPOLE_FORMS:
        raise ValueError(f"unknown form {form!r}; choose one of {sorted(DIPOLE_FORMS)}")
    if int(pad_factor) != pad_factor or pad_factor < 1:
        raise ValueError(f"pad_factor must be an integer >= 1, got {pad_factor}")
    weights = _window(window).weights(t.size)
    n_fft = int(pad_factor) * t.size
    frequency = 2 * np.pi * np.fft.rfftfreq(n_fft, dt)
    amplitude = np.fft.rfft(weights * signal, n=n_fft) * dt
    # the FFT counts time from the first sample; refer the phase to t = 0
    amplitude *= np.exp(-1j * frequency * t[0])
    amplitude *= (1j * frequency) ** DIPOLE_FORMS[form]
    return HarmonicSpectrum(
        frequency=frequency,
        order=frequency / omega0,
        power=np.abs(amplitude) ** 2,
        amplitude=amplitude,
        omega0=omega0,
    )


def dipole_forms(
    time,
    omega0,
    *,
    dipole=None,
    velocity=None,
    acceleration=None,
    window="hann",
    pad_factor=1,
) -> dict[str, HarmonicSpectrum]:
    """Spectra of the dipole, velocity and acceleration forms, all in acceleration form.

    The three are equal for an exact wavefunction and exact signals (Ehrenfest
    theorem); their differences measure the numerical error and the effect of
    electrons leaving the grid (Burnett et al., Phys. Rev. A 45, 3347 (1992), from
    memory). The dipole form is the most sensitive to slow drifts of <x>, which the
    factor w^4 cannot remove at low orders but which the window suppresses.

    Parameters
    ----------
    time : array_like, shape (n,)
        Uniform sample times (a.u.).
    omega0 : float
        Fundamental angular frequency (a.u.).
    dipole, velocity, acceleration : array_like, shape (n,), optional
        <x>(t), d<x>/dt and d^2<x>/dt^2 (a.u.); give at least one.
    window : str or Window
        As in :func:`harmonic_spectrum`.
    pad_factor : int
        As in :func:`harmonic_spectrum`.

    Returns
    -------
    dict of str to HarmonicSpectrum
        Keyed by ``"dipole"``, ``"velocity"``, ``"acceleration"`` for the signals given.
    """
    given = {"dipole": dipole, "velocity": velocity, "acceleration": acceleration}
    given = {k: v for k, v in given.items() if v is not None}
    if not given:
        raise ValueError("give at least one of dipole, velocity, acceleration")
    return {
        form: harmonic_spectrum(time, s, omega0, window, form=form, pad_factor=pad_factor)
        for form, s in given.items()
    }
