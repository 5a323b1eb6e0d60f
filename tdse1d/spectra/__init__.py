"""Spectra computed from a simulation's time series and wavefunctions.

Pure numerics on arrays, Hartree atomic units throughout; nothing here reads files or
prints. The package has these parts; the names below are re-exported here, so
``from tdse1d import spectra; spectra.harmonic_spectrum(...)`` works.

:mod:`~tdse1d.spectra.windows`
    Time windows, small classes registered in :data:`WINDOWS`.
:mod:`~tdse1d.spectra.harmonic`
    :func:`harmonic_spectrum` Fourier-transforms a windowed dipole signal (acceleration,
    velocity or dipole form) and returns a :class:`HarmonicSpectrum`;
    :func:`dipole_forms` converts all three forms to the acceleration form.
:mod:`~tdse1d.spectra.cutoff`
    :func:`read_cutoff` reads the plateau cutoff off a spectrum above its
    :func:`noise_floor`.
:mod:`~tdse1d.spectra.time_frequency`
    :func:`gabor_transform`.
:mod:`~tdse1d.spectra.photoelectron`
    :func:`project_out_bound` removes bound-state components; :func:`plane_wave_spectrum`
    projects a continuum wavefunction on plane waves. Both it and the surface flux method
    (:mod:`tdse1d.spectra.surface_flux`, imported on its own: it needs the compiled
    kernels) give a :class:`PhotoelectronSpectrum` with left- and right-going electrons
    apart, under one of the rules registered in :data:`SPLITS`.
:mod:`~tdse1d.spectra.sampling`
    The boundary checks of sampled series that the parts share.

Sign conventions
----------------
Fourier integrals in time are ``F(w) = int f(t) exp(-i w t) dt`` and in space
``phi(p) = (2 pi)^(-1/2) int psi(x) exp(-i p x) dx``. The velocity-gauge Hamiltonian of a
free electron is ``(p + A(t))^2 / 2`` with ``E = -dA/dt``, so that the canonical
momentum p is conserved and equals the final kinetic momentum once A = 0.
"""

from .cutoff import NOISE_MARGIN, CutoffEstimate, noise_floor, read_cutoff, running_mean, unresolved_reason
from .harmonic import DIPOLE_FORMS, HarmonicSpectrum, dipole_forms, harmonic_spectrum
from .photoelectron import SPLITS, PhotoelectronSpectrum, plane_wave_spectrum, project_out_bound
from .time_frequency import default_gabor_width, gabor_transform
from .windows import WINDOWS, Blackman, Hann, Rectangular, Tukey, Window, register_window

__all__ = [
    "Window",
    "Hann",
    "Blackman",
    "Tukey",
    "Rectangular",
    "WINDOWS",
    "register_window",
    "DIPOLE_FORMS",
    "HarmonicSpectrum",
    "harmonic_spectrum",
    "dipole_forms",
    "CutoffEstimate",
    "read_cutoff",
    "noise_floor",
    "running_mean",
    "unresolved_reason",
    "NOISE_MARGIN",
    "default_gabor_width",
    "gabor_transform",
    "project_out_bound",
    "PhotoelectronSpectrum",
    "SPLITS",
    "plane_wave_spectrum",
]
