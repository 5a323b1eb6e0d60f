"""Boundary checks of the sampled series the spectra are computed from: uniform axes,
real dipole signals, positive parameters. Hartree atomic units.
"""

from __future__ import annotations

import math

import numpy as np


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
