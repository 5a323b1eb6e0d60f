"""Checks and properties of a sampled field for the three-step model
(:mod:`tdse1d.semiclassical.three_step`): a uniform grid, E = -dA/dt, a complete pulse,
its carrier period, and where the field ends. Pure numerics on arrays.
"""

from __future__ import annotations

import numpy as np

# Tolerated mismatch between the supplied field and -dA/dt, and between A at
# the pulse edges and zero, relative to the field's own scale.  Loose on
# purpose: it is meant to catch a flipped sign convention or a truncated
# pulse, not discretisation error.
_FIELD_CONSISTENCY = 5e-2
_EDGE_TOLERANCE = 1e-3

def check_sampled_field(time, electric, vector_potential):
    time = np.asarray(time, dtype=float)
    electric = np.asarray(electric, dtype=float)
    vector_potential = np.asarray(vector_potential, dtype=float)
    if time.ndim != 1 or time.size < 4:
        raise ValueError(f"time must be 1-D with at least 4 samples, got shape {time.shape}")
    for name, array in (("electric", electric), ("vector_potential", vector_potential)):
        if array.shape != time.shape:
            raise ValueError(f"{name} has shape {array.shape}, time has shape {time.shape}")
    for name, array in (("time", time), ("electric", electric),
                        ("vector_potential", vector_potential)):
        if not np.all(np.isfinite(array)):
            raise ValueError(f"{name} contains non-finite values")
    step = np.diff(time)
    if not (step[0] > 0.0 and np.allclose(step, step[0], rtol=1e-6, atol=0.0)):
        raise ValueError("time must be uniform and increasing")
    scale = np.max(np.abs(vector_potential))
    if scale == 0.0:
        raise ValueError("vector_potential is identically zero")
    if max(abs(vector_potential[0]), abs(vector_potential[-1])) > _EDGE_TOLERANCE * scale:
        raise ValueError(
            "vector_potential must vanish at both ends of the grid (the pulse "
            f"must be complete); got A = {vector_potential[0]:.3g}, "
            f"{vector_potential[-1]:.3g} against max |A| = {scale:.3g}"
        )
    return time, electric, vector_potential


def check_field_consistency(time, electric, vector_potential, a_spline):
    mismatch = np.max(np.abs(electric + a_spline(time, 1)))
    scale = np.max(np.abs(electric))
    if not mismatch <= _FIELD_CONSISTENCY * scale:
        raise ValueError(
            "electric is not -d(vector_potential)/dt (max mismatch "
            f"{mismatch:.3g} against max |E| = {scale:.3g}); check the sign convention"
        )


#: grid steps after the last sample of the field over which the spline of A may still
#: ring (its coupling decays by 2 - sqrt(3) per step: below 1e-30 after 50 steps)
RINGING_STEPS = 64
#: a field below this fraction of its peak counts as zero for births and returns (a
#: classical electron is not born in it, and it moves one by 1e-12 of a quiver radius)
FIELD_FREE = 1e-12


def field_end(time, electric, vector_potential):
    """Index of the last sample where the field or the vector potential is non-zero."""
    e = np.abs(electric) > FIELD_FREE * np.max(np.abs(electric))
    a = np.abs(vector_potential) > FIELD_FREE * np.max(np.abs(vector_potential))
    live = np.flatnonzero(e | a)
    return int(min(time.size - 1, live[-1] + 1)) if live.size else time.size - 1


def carrier_period(time, electric):
    """Period of the strongest non-zero frequency of the sampled field."""
    n = 1 << int(np.ceil(np.log2(4 * time.size)))
    spectrum = np.abs(np.fft.rfft(electric, n))
    spectrum[0] = 0.0
    k = int(np.argmax(spectrum))
    if k == 0:
        raise ValueError("electric is identically zero; pass birth_times explicitly")
    return n * (time[1] - time[0]) / k
