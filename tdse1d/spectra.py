"""Spectra computed from a simulation's time series and wavefunctions.

Pure numerics on arrays, Hartree atomic units throughout; nothing here reads files or
prints. The module has four parts.

Harmonic spectra
    :func:`harmonic_spectrum` Fourier-transforms a windowed dipole signal (acceleration,
    velocity or dipole form) and returns a :class:`HarmonicSpectrum`;
    :func:`dipole_forms` converts all three forms to the acceleration form so they can
    be compared; :func:`read_cutoff` reads the plateau cutoff off a spectrum with the
    rule given in its docstring. Windows are small classes registered in
    :data:`WINDOWS`.
Time-frequency analysis
    :func:`gabor_transform`.
Photoelectron spectra
    :func:`project_out_bound` removes bound-state components; :func:`plane_wave_spectrum`
    projects a continuum wavefunction on plane waves; the surface flux method
    (:mod:`tdse1d.physics.surface_flux`) counts the electrons crossing surfaces at the absorbers.
    Both give a :class:`PhotoelectronSpectrum` with left- and right-going electrons
    apart, under one of the rules registered in :data:`SPLITS`.

Sign conventions
----------------
Fourier integrals in time are ``F(w) = int f(t) exp(-i w t) dt`` and in space
``phi(p) = (2 pi)^(-1/2) int psi(x) exp(-i p x) dx``. The velocity-gauge Hamiltonian of a
free electron is ``(p + A(t))^2 / 2`` with ``E = -dA/dt``, so that the canonical
momentum p is conserved and equals the final kinetic momentum once A = 0.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.signal import windows as _scipy_windows

from .registry import registrar
from .units import HARTREE_EV

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
    "unresolved_reason",
    "NOISE_MARGIN",
    "default_gabor_width",
    "gabor_transform",
    "project_out_bound",
    "PhotoelectronSpectrum",
    "SPLITS",
    "plane_wave_spectrum",
]

#: relative tolerance on the spacing of a "uniform" time or space grid
_UNIFORM_RTOL = 1e-6


# --------------------------------------------------------------------------- helpers


def _uniform_axis(axis, name: str) -> tuple[np.ndarray, float]:
    """Check that ``axis`` is a 1-D, finite, increasing, uniform grid; return it and its step."""
    axis = np.asarray(axis, dtype=float)
    if axis.ndim != 1 or axis.size < 4:
        raise ValueError(f"{name} must be a 1-D array of at least 4 points, got shape {axis.shape}")
    if not np.all(np.isfinite(axis)):
        raise ValueError(f"{name} contains non-finite values")
    steps = np.diff(axis)
    step = (axis[-1] - axis[0]) / (axis.size - 1)
    if step <= 0:
        raise ValueError(f"{name} must be increasing")
    if np.max(np.abs(steps - step)) > _UNIFORM_RTOL * step:
        raise ValueError(
            f"{name} must be uniformly spaced (steps vary by up to "
            f"{np.max(np.abs(steps - step)) / step:.2e} of the mean step {step:.6g}); "
            "resample it onto a uniform grid first"
        )
    return axis, float(step)


def _series(time, signal, name: str = "signal", real: bool = True):
    """Check a uniformly sampled time series at the boundary."""
    t, dt = _uniform_axis(time, "time")
    y = np.asarray(signal)
    if y.shape != t.shape:
        raise ValueError(f"{name} has shape {y.shape} but time has shape {t.shape}")
    if real:
        if np.iscomplexobj(y):
            if np.any(y.imag != 0):
                raise ValueError(f"{name} must be real (a dipole signal), got complex values")
            y = y.real
        y = y.astype(float)
    else:
        y = y.astype(complex)
    if not np.all(np.isfinite(y)):
        raise ValueError(f"{name} contains non-finite values")
    return t, dt, y


def _positive(value, name: str) -> float:
    value = float(value)
    if not (math.isfinite(value) and value > 0):
        raise ValueError(f"{name} must be finite and positive, got {value}")
    return value


# --------------------------------------------------------------------------- windows

WINDOWS: dict[str, type["Window"]] = {}


register_window = registrar(WINDOWS)


class Window:
    """Base class of time windows applied before a Fourier transform.

    Contract for an implementer: the constructor takes no required argument (the
    registry builds the default by calling the class), and ``weights(n)`` returns the
    ``n`` samples ``w(j / n)``, j = 0 .. n-1, of a shape w(u) on [0, 1] with
    ``0 <= w <= 1``, ``w(u) = w(1 - u)`` and ``w(1/2) = 1`` (a signal at the centre of
    the record keeps its height). The record of n samples is taken to span ``n dt``, as
    the discrete Fourier transform does ("DFT-even" windows; F. J. Harris, Proc. IEEE 66,
    51 (1978), from memory), so the window is the same function of time whatever the
    sampling step.
    """

    name = "?"

    def weights(self, n: int) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError


@register_window("hann")
class Hann(Window):
    """Hann window ``w(u) = sin^2(pi u)``, the default.

    Its side lobes fall as 1/w^3, which keeps the leakage of the strong low harmonics
    from burying the plateau; common practice for harmonic spectra.
    """

    def weights(self, n):
        return _scipy_windows.hann(n, sym=False)


@register_window("blackman")
class Blackman(Window):
    """Blackman window: lower side lobes (-58 dB) than Hann at the price of wider lines."""

    def weights(self, n):
        # the three-term sum rounds to -1e-17 at the ends
        return np.clip(_scipy_windows.blackman(n, sym=False), 0.0, 1.0)


@register_window("tukey")
class Tukey(Window):
    """Tukey (tapered cosine) window: flat in the middle, cosine tapers at the ends.

    Parameters
    ----------
    taper : float
        Fraction of the record inside the two tapers together (0 is rectangular, 1 is
        Hann). Default 0.1: 5 % of the record is tapered at each end, so the whole pulse
        keeps its weight when it fills the record.
    """

    def __init__(self, taper: float = 0.1):
        taper = float(taper)
        if not 0.0 <= taper <= 1.0:
            raise ValueError(f"Tukey taper must lie in [0, 1], got {taper}")
        self.taper = taper

    def weights(self, n):
        return _scipy_windows.tukey(n, alpha=self.taper, sym=False)


@register_window("none")
class Rectangular(Window):
    """No window (all weights 1); use when the signal already vanishes at both ends."""

    def weights(self, n):
        return np.ones(n)


def _window(window) -> Window:
    if isinstance(window, Window):
        return window
    if isinstance(window, str) and window in WINDOWS:
        return WINDOWS[window]()
    raise ValueError(f"unknown window {window!r}; choose one of {sorted(WINDOWS)} or pass a Window")


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
    The window is applied to the signal as given, before that factor; the forms then
    agree exactly only if the signals vanish at both ends of the record.

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


# --------------------------------------------------------------------------- cutoff


@dataclass(frozen=True, eq=False)
class CutoffEstimate:
    """Plateau cutoff read off a harmonic spectrum by :func:`read_cutoff`.

    Attributes
    ----------
    frequency : float
        Cutoff photon energy (a.u.).
    order : float
        ``frequency / omega0``.
    plateau_log10 : float
        Plateau level: median of the smoothed log10(power) over the plateau.
    plateau_start : float
        Lowest photon energy of the plateau region used (a.u.).
    smoothed_log10 : ndarray
        The smoothed log10(power) on the input frequency axis (for plotting).
    resolved : bool
        False when the spectrum has not fallen by ``drop`` decades before the end of
        the searched range (the cutoff lies at or beyond the end of the data), or when
        the reading level stands less than the noise margin above the noise floor.
    noise_floor_log10 : float
        log10 of the noise floor at the reading (NaN if no floor was estimated).
    headroom : float
        Decades by which the reading level ``plateau_log10 - drop`` stands above the
        noise floor at the reading.
    reason : str
        Empty for a resolved cutoff; otherwise why it is not, e.g.
        ``"unresolved (within 0.3 decades of the noise floor)"``. ``frequency`` and
        ``order`` are NaN when the reading is within the noise margin.
    """

    frequency: float
    order: float
    plateau_log10: float
    plateau_start: float
    smoothed_log10: np.ndarray
    resolved: bool
    noise_floor_log10: float = math.nan
    headroom: float = math.nan
    reason: str = ""


#: decades above the noise floor a reading level must stand for the reading to count.
#: The smoothed log-spectrum of pure noise scatters by about 0.56 / sqrt(n) decades
#: (std of log10 of an exponentially distributed power, pi / (sqrt(6) ln 10), over n
#: independent samples in the smoothing window, n >= 8 for the windows used here), so
#: one decade is more than five standard deviations of the noise.
NOISE_MARGIN = 1.0
#: the flat part of the floor is the median over the axis above this fraction of its end
NOISE_FROM = 0.5


def noise_floor(axis, values, *, companion=None, half_width=None) -> np.ndarray:
    """Numerical noise floor of a spectrum, log10, on its own axis.

    Two parts, the larger one counts at each point:

    * flat: the median of log10(values) over the top half of the axis. Far beyond
      any physical feature a computed spectrum holds only numerical noise (round-off
      of the dipole acceleration, the split-operator and projection error of a
      photoelectron spectrum); a run's harmonic spectrum reaches the Nyquist frequency
      pi / dt (60 hartree at dt = 0.05 a.u.) and its photoelectron spectrum
      (pi / dx)^2 / 2, both far above any cutoff. The median ignores a few lines that
      reach into the top half.
    * companion: a spectrum of the same signal path with no emission in it, given by
      the caller on the same axis, smoothed like the spectrum (running mean of its
      log10 over ``half_width``). For a harmonic spectrum this is the spectrum of the
      driving field E(t) through the same window: the Ehrenfest acceleration holds
      the term -E(t) N(t), and far above the bound-state resonances the linear
      response of any bound electron tends to the free one, -E(t) (Thomas-Reiche-Kuhn
      sum rule), so a run at vanishing intensity gives exactly this spectrum there
      (checked in the tests). It is the leakage of the fundamental line through the
      pulse envelope and the window, which falls as a power of the frequency and is
      far above round-off.

    Parameters
    ----------
    axis : array_like, shape (n,)
        Increasing abscissae (photon or kinetic energy).
    values : array_like, shape (n,)
        Spectral density (any unit); non-positive or non-finite values are skipped.
    companion : array_like, shape (n,), optional
        Floor spectrum on the same axis, same unit as ``values``.
    half_width : float, optional
        Half width of the running mean of log10(companion) (unit of ``axis``); none
        if not given.

    Returns
    -------
    ndarray, shape (n,)
        log10 of the floor.
    """
    x = np.asarray(axis, dtype=float)
    y = np.asarray(values, dtype=float)
    if x.ndim != 1 or x.shape != y.shape:
        raise ValueError(f"axis and values must be 1-D of equal length, got {x.shape} and {y.shape}")
    keep = (x >= NOISE_FROM * x[-1]) & np.isfinite(y) & (y > 0)
    if keep.sum() < 4:
        raise ValueError("fewer than 4 positive samples in the top half of the axis: no noise floor can be estimated")
    floor = np.full(x.shape, float(np.median(np.log10(y[keep]))))
    if companion is not None:
        c = np.asarray(companion, dtype=float)
        if c.shape != x.shape:
            raise ValueError(f"companion must have the shape of the axis {x.shape}, got {c.shape}")
        log_c = np.log10(np.maximum(np.nan_to_num(c), 1e-300))
        if half_width:
            log_c = running_mean(x, log_c, float(half_width))
        floor = np.maximum(floor, log_c)
    return floor


def unresolved_reason(headroom: float) -> str:
    """The words a reading within the noise margin is reported with.

    Parameters
    ----------
    headroom : float
        Decades by which the reading level stands above the noise floor (may be < 0).
    """
    return f"unresolved (within {max(headroom, 0.0):.1f} decades of the noise floor)"


def running_mean(axis, values, half_width):
    """Mean of ``values`` over ``|axis' - axis| <= half_width`` (window shrinks at the edges)."""
    csum = np.concatenate(([0.0], np.cumsum(values)))
    lo = np.searchsorted(axis, axis - half_width, side="left")
    hi = np.searchsorted(axis, axis + half_width, side="right")
    return (csum[hi] - csum[lo]) / (hi - lo)


def read_cutoff(
    frequency,
    power,
    omega0,
    ionization_potential,
    *,
    drop=1.5,
    smooth_orders=1.0,
    start_orders=2.0,
    max_frequency=None,
    floor_decades=30.0,
    max_iterations=20,
    noise=None,
    noise_margin=NOISE_MARGIN,
) -> CutoffEstimate:
    """Read the plateau cutoff off a harmonic spectrum.

    The rule (all energies are photon energies w, a.u.):

    1. ``L(w) = log10(max(power, floor))`` with ``floor = max(power) * 10**-floor_decades``;
       then ``S(w)`` = running mean of L over ``|w' - w| <= smooth_orders * omega0``
       (the window shrinks at the ends of the axis). Averaging in log space over one
       harmonic spacing (2 omega0 for the default) levels the comb of odd harmonics
       and its deep minima into one smooth curve.
    2. The plateau region starts at ``w_start = Ip + start_orders * omega0``, above
       the bound-bound and near-threshold structure; the search ends at
       ``max_frequency`` (default: the end of the axis).
    3. Start with the level ``P = max S`` over ``[w_start, w_end]``. Repeat: the
       cutoff ``w_c`` is the highest w in ``[w_start, w_end]`` with
       ``S(w) >= P - drop``, so S stays below ``P - drop`` everywhere above it; then
       ``P`` = median of S over ``[w_start, w_c]``. Stop when ``w_c`` repeats a
       previous value (at most ``max_iterations`` times).

    4. Noise: the reading level ``P - drop`` must stand at least ``noise_margin``
       decades above the noise floor at ``w_c`` (:func:`noise_floor` of the input and
       of the companion ``noise`` if given); otherwise the cutoff is
       unresolved, ``frequency`` is NaN and ``reason`` says so. A plateau must thus
       stand ``drop + noise_margin`` decades (2.5 by default) above the floor.

    Because only the *last* crossing counts, dips of the plateau deeper than ``drop``
    (interference minima) do not end it. For a plateau that ends at order ``q_k`` in
    an exponential fall of ``s`` decades per order, the rule returns about
    ``q_k + drop / s``: the estimate lies slightly beyond the knee, by less than two
    orders for falls steeper than about one decade per order.

    Parameters
    ----------
    frequency : array_like, shape (n,)
        Increasing photon energies (a.u.), e.g. ``HarmonicSpectrum.frequency``.
    power : array_like, shape (n,)
        Non-negative spectral power at those energies.
    omega0 : float
        Fundamental angular frequency (a.u.).
    ionization_potential : float
        Ip of the target (a.u., positive).
    drop : float
        Decades below the plateau level that define its end. Default 1.5.
    smooth_orders : float
        Half width of the log-space running mean in harmonic orders. Default 1.
    start_orders : float
        Plateau region starts this many orders above Ip. Default 2.
    max_frequency : float, optional
        Ignore the spectrum above this energy (a.u.), e.g. a numerical noise floor.
    floor_decades : float
        Powers more than this many decades below the maximum are raised to that floor
        before the logarithm (zeros would give -inf).
    max_iterations : int
        Cap on the fixed-point iteration of step 3.
    noise : array_like or False, optional
        A floor spectrum on the same axis (same unit as ``power``), e.g. the spectrum
        of the driving field through the same window; it is combined with the flat
        floor of the input by :func:`noise_floor`. Default: the flat floor alone;
        ``False`` skips step 4.
    noise_margin : float
        Decades (step 4). Default :data:`NOISE_MARGIN`.

    Returns
    -------
    CutoffEstimate
    """
    w = np.asarray(frequency, dtype=float)
    pw = np.asarray(power, dtype=float)
    if w.ndim != 1 or w.shape != pw.shape or w.size < 4:
        raise ValueError(
            f"frequency and power must be 1-D of equal length >= 4, got {w.shape} and {pw.shape}"
        )
    if not (np.all(np.isfinite(w)) and np.all(np.isfinite(pw))):
        raise ValueError("frequency and power must be finite")
    if np.any(np.diff(w) <= 0):
        raise ValueError("frequency must be strictly increasing")
    if np.any(pw < 0) or not np.any(pw > 0):
        raise ValueError("power must be non-negative and not all zero")
    omega0 = _positive(omega0, "omega0")
    ip = _positive(ionization_potential, "ionization_potential")
    drop = _positive(drop, "drop")
    smooth_orders = _positive(smooth_orders, "smooth_orders")
    floor_decades = _positive(floor_decades, "floor_decades")
    if float(start_orders) < 0:
        raise ValueError(f"start_orders must be >= 0, got {start_orders}")

    log_power = np.log10(np.maximum(pw, pw.max() * 10.0**-floor_decades))
    smoothed = running_mean(w, log_power, smooth_orders * omega0)

    w_start = ip + float(start_orders) * omega0
    w_end = w[-1] if max_frequency is None else float(max_frequency)
    region = np.flatnonzero((w >= w_start) & (w <= w_end))
    if region.size < 2:
        raise ValueError(
            f"no spectrum between the plateau start Ip + {start_orders} omega0 = {w_start:.4g} "
            f"a.u. and {w_end:.4g} a.u.; extend the frequency axis or lower start_orders"
        )
    s_region = smoothed[region]
    level = float(np.max(s_region))
    seen = set()
    for _ in range(int(max_iterations)):
        last = int(np.flatnonzero(s_region >= level - drop)[-1])
        if last in seen:
            break
        seen.add(last)
        level = float(np.median(s_region[: last + 1]))
    cutoff = float(w[region[last]])
    resolved = bool(w[region[-1]] - cutoff > smooth_orders * omega0)
    reason = "" if resolved else "at or beyond the end of the data"
    floor_at = headroom = math.nan
    if noise is not False:
        try:
            floor = noise_floor(w, pw, companion=noise, half_width=smooth_orders * omega0)
        except ValueError as exc:
            # e.g. a short measured spectrum: with no floor, no reading can be certified
            resolved, reason, cutoff = False, f"unresolved: {exc}", math.nan
        else:
            floor_at = float(floor[region[last]])
            headroom = level - drop - floor_at
            if not headroom >= noise_margin:
                resolved, reason, cutoff = False, unresolved_reason(headroom), math.nan
    return CutoffEstimate(
        frequency=cutoff,
        order=cutoff / omega0,
        plateau_log10=level,
        plateau_start=float(w[region[0]]),
        smoothed_log10=smoothed,
        resolved=resolved,
        noise_floor_log10=floor_at,
        headroom=headroom,
        reason=reason,
    )


# --------------------------------------------------------------------------- Gabor

#: the Gaussian window is cut at this many widths (relative weight exp(-24.5) ~ 2e-11)
_GABOR_TRUNCATION = 7.0


def default_gabor_width(omega0: float) -> float:
    """Default Gabor window width: one tenth of the optical cycle, ``2 pi / (10 omega0)``.

    Harmonics are emitted in bursts, one per half cycle, and within a burst the photon
    energy changes with the return time of the electron (short and long trajectories).
    A width sigma = T/10 makes the window (full width at 1/e of |G|^2 about 2 sigma =
    T/5) shorter than the half cycle T/2 between bursts, so the bursts stay apart,
    while the frequency resolution 1/sigma = 1.6 omega0 is finer than the harmonic
    spacing 2 omega0, so the energy of the emission can be read to about one order.
    (Choices near 1/(3 omega0) ~ T/19 are also common practice.)

    Parameters
    ----------
    omega0 : float
        Fundamental angular frequency (a.u.).

    Returns
    -------
    float
        sigma (a.u. of time).
    """
    return 2 * np.pi / (10 * _positive(omega0, "omega0"))


def gabor_transform(
    time,
    signal,
    frequencies,
    width=None,
    times=None,
    *,
    omega0=None,
    max_bytes=64 * 2**20,
):
    """Gabor transform (short-time Fourier transform with a Gaussian window).

    D. Gabor, J. Inst. Electr. Eng. 93, 429 (1946), from memory.

    ``G(t', w) = int s(t) exp(-(t - t')^2 / (2 sigma^2)) exp(-i w t) dt``, evaluated as a
    rectangle-rule sum over the samples (the signal is taken as zero outside the
    record; the Gaussian is cut at 7 sigma). For ``s = cos(W t)`` and ``W sigma >> 1``
    the peak is ``|G(t', W)|^2 = pi sigma^2 / 2``. The window centres t' are moved to
    the nearest sample time, which lets one precomputed kernel serve all of them; the
    returned times are those sample times.

    Parameters
    ----------
    time : array_like, shape (n,)
        Uniform sample times (a.u.).
    signal : array_like, shape (n,)
        Real or complex signal, e.g. the dipole acceleration.
    frequencies : array_like, shape (m,)
        Angular frequencies at which to evaluate G (a.u.).
    width : float, optional
        Gaussian width sigma (a.u. of time). Default :func:`default_gabor_width`
        of ``omega0``, one tenth of the optical cycle.
    times : array_like, optional
        Window centres t' (a.u.), inside the record. Default: spaced by sigma / 4
        over the record (|G|^2 changes on the scale sigma).
    omega0 : float, optional
        Fundamental angular frequency (a.u.), needed only for the default width.
    max_bytes : int
        Bound on the memory of the work arrays; the computation is chunked over
        window centres and frequencies to stay below it.

    Returns
    -------
    times : ndarray, shape (k,)
        Window centres used (sample times nearest to those requested).
    frequencies : ndarray, shape (m,)
        The frequencies (a.u.).
    power : ndarray, shape (k, m)
        ``|G(t', w)|^2``.
    """
    t, dt, y = _series(time, signal, real=False)
    freqs = np.asarray(frequencies, dtype=float)
    if freqs.ndim != 1 or freqs.size == 0 or not np.all(np.isfinite(freqs)):
        raise ValueError("frequencies must be a non-empty 1-D array of finite values")
    if width is None:
        if omega0 is None:
            raise ValueError("give the Gabor width, or omega0 for the default width")
        sigma = default_gabor_width(omega0)
    else:
        sigma = _positive(width, "width")
    if times is None:
        centres = np.arange(t[0], t[-1] + 0.5 * dt, sigma / 4)
    else:
        centres = np.atleast_1d(np.asarray(times, dtype=float))
        if centres.ndim != 1 or not np.all(np.isfinite(centres)):
            raise ValueError("times must be a 1-D array of finite values")
        if np.any(centres < t[0] - 0.5 * dt) or np.any(centres > t[-1] + 0.5 * dt):
            raise ValueError(f"times must lie inside the record [{t[0]:.6g}, {t[-1]:.6g}] a.u.")
    index = np.clip(np.rint((centres - t[0]) / dt).astype(np.int64), 0, t.size - 1)

    half = max(1, int(math.ceil(_GABOR_TRUNCATION * sigma / dt)))
    lags = np.arange(-half, half + 1) * dt
    gauss = np.exp(-0.5 * (lags / sigma) ** 2) * dt
    # zero padding so that every window fits; the sliding view does not copy
    padded = np.concatenate((np.zeros(half, complex), y, np.zeros(half, complex)))
    segments = np.lib.stride_tricks.sliding_window_view(padded, 2 * half + 1)

    itemsize = np.dtype(complex).itemsize
    n_lag = lags.size
    freq_chunk = max(1, min(freqs.size, max_bytes // (2 * itemsize * n_lag)))
    time_chunk = max(1, max_bytes // (2 * itemsize * (n_lag + freq_chunk)))
    power = np.empty((index.size, freqs.size))
    for f0 in range(0, freqs.size, freq_chunk):
        fw = freqs[f0 : f0 + freq_chunk]
        # G(t_k, w) = exp(-i w t_k) sum_j s(t_k + lag_j) g(lag_j) exp(-i w lag_j) dt;
        # the leading phase drops out of |G|^2
        kernel = gauss[:, None] * np.exp(-1j * lags[:, None] * fw[None, :])
        for k0 in range(0, index.size, time_chunk):
            rows = segments[index[k0 : k0 + time_chunk]]
            power[k0 : k0 + time_chunk, f0 : f0 + fw.size] = np.abs(rows @ kernel) ** 2
    return t[index], freqs, power


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
#: amplitudes (FFT order) of the whole, of its x < 0 part and of its x > 0 part.
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
    momentum = _momentum_axis(total.size, dx)
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
    left, right = _sides(x, psi)
    phi_left = np.fft.fft(left) * factor
    phi_right = np.fft.fft(right) * factor
    return _spectrum_from_amplitudes(np.fft.fft(psi) * factor, phi_left, phi_right, dx, split)
