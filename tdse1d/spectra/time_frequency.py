"""Time-frequency analysis of a dipole signal: the Gabor transform
(:func:`gabor_transform`). Pure numerics on arrays, Hartree atomic units.
"""

from __future__ import annotations

import math

import numpy as np

from .sampling import _positive, _series


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
