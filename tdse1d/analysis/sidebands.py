"""The photoelectron line of an XUV pulse inside a longer infrared pulse: its shift and
its sidebands one infrared photon apart (:func:`dressed_line`). Pure numerics, atomic
units.

Laser-assisted photoionization: an electron freed by one XUV photon inside an infrared
field of ponderomotive energy Up ends, once that field is over, in a comb of lines at

    E_n = hbar w_X - Ip - Up + n hbar w_IR

(energy conservation with the quasi-energy of an electron in the field, E + Up: the
electron leaves the pulse without regaining its quiver energy. For a flat-top pulse the
mean quiver energy over the pulse is Up and fixes the line positions: Della Picca et
al., "Non-constant ponderomotive energy in above threshold ionization by intense short
laser pulses", arXiv:1512.05715; ATI peaks shifted by the ponderomotive potential:
Freeman et al., Phys. Rev. Lett. 59, 1092 (1987), from memory; sidebands of an XUV line
from the interference of electrons freed in successive infrared cycles: "Retrieving
intracycle interference in angular-resolved laser-assisted photoemission from argon",
arXiv:1808.04639). The
shift of the comb is read modulo hbar w_IR; the representative reported lies in
``[-(1 - WRAP_ABOVE) hbar w_IR, WRAP_ABOVE hbar w_IR)`` (see :func:`wrap_shift`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..spectra.cutoff import NOISE_MARGIN, noise_floor, unresolved_reason
from ..spectra.reading import Reading, combine_rules, unresolved

#: a shift read modulo hbar w_IR is given in [-(1 - WRAP_ABOVE), WRAP_ABOVE) hbar w_IR.
#: A line shift grows continuously from zero with the infrared intensity, downward for
#: the zero-order line (quasi-energy E + Up above); the interval keeps a small upward
#: shift visible as one. It is valid for Up < (1 - WRAP_ABOVE) hbar w_IR.
WRAP_ABOVE = 0.125
#: a sideband counts as a peak only if it stands this factor above the lowest point
#: between it and the main line (two resolved peaks; common practice, no source)
PEAK_CONTRAST = 3.0
#: the comb's first Fourier coefficient, relative to the mean, must reach this for the
#: comb phase to count; a spectrum of noise scores about 2 / sqrt(samples)
COMB_CONTRAST = 0.3


@dataclass(frozen=True)
class DressedLine:
    """The XUV photoelectron line in an infrared field, read off dP/dE.

    Attributes
    ----------
    expected : float
        ``hbar w_X - Ip``, the line without the infrared field (hartree).
    shift : Reading
        Shift of the comb of lines from ``expected`` (hartree), modulo ``hbar w_IR``
        (:func:`wrap_shift`); rules ``comb phase``, ``strongest peak``, ``peak centroids``.
    below, above : Reading
        Distance from the main line to the sideband below and above it (hartree,
        positive); rules ``parabola``, ``centroid``.
    main : float
        Position of the main line (the comb line nearest ``expected + shift``, hartree).
    headroom : float
        Decades by which the lowest of the three peaks stands above the noise floor.
    """

    expected: float
    shift: Reading
    below: Reading
    above: Reading
    main: float
    headroom: float


def wrap_shift(shift, photon_energy):
    """``shift`` modulo ``photon_energy``, in ``[-(1 - WRAP_ABOVE), WRAP_ABOVE) * photon_energy``."""
    w = float(photon_energy)
    return float((shift + (1 - WRAP_ABOVE) * w) % w - (1 - WRAP_ABOVE) * w)


def _parabola(e, d, i):
    """Vertex of the parabola through samples i-1, i, i+1 of a non-uniform axis."""
    if not 0 < i < e.size - 1:
        return float(e[i])
    x, y = e[i - 1 : i + 2], d[i - 1 : i + 2]
    a, b, _ = np.polyfit(x - x[1], y, 2)
    return float(x[1] - b / (2 * a)) if a < 0 and abs(b / (2 * a)) <= x[2] - x[0] else float(e[i])


def _centroid(e, d, i, level=0.5):
    """Centroid of the contiguous peak around sample i above ``level`` of its height."""
    lo = hi = i
    while lo > 0 and d[lo - 1] >= level * d[i]:
        lo -= 1
    while hi < d.size - 1 and d[hi + 1] >= level * d[i]:
        hi += 1
    s = slice(lo, hi + 1)
    return float(np.sum(e[s] * d[s]) / np.sum(d[s]))


def _peaks(e, d, spacing):
    """Local maxima at least ``spacing / 2`` apart (the highest kept), above 1 % of the largest."""
    interior = np.flatnonzero((d[1:-1] >= d[:-2]) & (d[1:-1] > d[2:])) + 1
    interior = interior[d[interior] >= 0.01 * d.max()]
    kept = []
    for i in interior[np.argsort(d[interior])[::-1]]:
        if all(abs(e[i] - e[j]) >= 0.5 * spacing for j in kept):
            kept.append(int(i))
    return sorted(kept)


def dressed_line(energy, energy_density, xuv_photon_energy, ionization_potential, ir_photon_energy,
                 quiver_width, *, noise=None, noise_margin=NOISE_MARGIN):
    """Shift and sidebands of an XUV photoelectron line dressed by an infrared field.

    Parameters
    ----------
    energy, energy_density : array_like, shape (n,)
        Increasing kinetic energies (hartree) and dP/dE (1/hartree), both sides together.
    xuv_photon_energy, ionization_potential, ir_photon_energy : float
        ``hbar w_X``, Ip and ``hbar w_IR`` (hartree).
    quiver_width : float
        Half width of the energy range searched around ``hbar w_X - Ip`` (hartree);
        the analysis passes the classical streaking range ``2 p0 A0 + Up + 2 hbar w_IR``.
    noise : array_like, optional
        Companion floor dP/dE on the same axis (1/hartree).
    noise_margin : float
        Decades the three peaks must stand above the noise floor.

    Returns
    -------
    DressedLine
        Unresolved readings (NaN, with the reason) when the comb is not resolved.
    """
    e = np.asarray(energy, dtype=float)
    d = np.nan_to_num(np.asarray(energy_density, dtype=float))
    w = float(ir_photon_energy)
    if not (w > 0 and quiver_width > 0):
        raise ValueError(f"ir_photon_energy and quiver_width must be positive, got {w}, {quiver_width}")
    expected = float(xuv_photon_energy - ionization_potential)

    def failed(why, headroom=math.nan):
        return DressedLine(expected, unresolved(why, headroom=headroom), unresolved(why, headroom=headroom),
                           unresolved(why, headroom=headroom), math.nan, headroom)

    region = np.flatnonzero((e >= max(0.5 * w, expected - quiver_width)) & (e <= expected + quiver_width) & (d > 0))
    if region.size < 16:
        return failed("unresolved (too few spectrum samples around the line)")
    ee, dd = e[region], d[region]
    positive = (d > 0) & (e > 0)
    companion = None if noise is None else np.asarray(noise, float)[positive]
    floor = np.interp(ee, e[positive], noise_floor(e[positive], d[positive], companion=companion))
    weights = np.gradient(ee)
    coefficient = np.sum(dd * weights * np.exp(-2j * np.pi * ee / w))
    contrast = 2 * abs(coefficient) / np.sum(dd * weights)
    if contrast < COMB_CONTRAST:
        return failed(f"unresolved (no comb of lines one infrared photon apart: contrast {contrast:.2g} "
                      f"< {COMB_CONTRAST})")
    peaks = _peaks(ee, dd, w)
    if not peaks:
        return failed("unresolved (no peak around the line)")
    comb = wrap_shift((-np.angle(coefficient) / (2 * np.pi)) * w - expected, w)
    strongest = max(peaks, key=lambda i: dd[i])
    centres = np.array([_centroid(ee, dd, i) for i in peaks])
    heights = dd[peaks]
    phase = np.sum(heights * np.exp(2j * np.pi * (centres - expected) / w))
    shifts = {"comb phase": comb, "strongest peak": wrap_shift(_parabola(ee, dd, strongest) - expected, w),
              "peak centroids": wrap_shift(float(np.angle(phase)) / (2 * np.pi) * w, w)}
    step = float(np.interp(expected, ee[1:], np.diff(ee)))
    # the rules read the shift modulo the photon energy: each is taken on the branch
    # nearest the comb phase's, so that a shift near the end of the interval is not
    # split between its two representatives
    shifts = {k: comb + ((v - comb + 0.5 * w) % w - 0.5 * w) for k, v in shifts.items()}
    main = min(peaks, key=lambda i: abs(ee[i] - (expected + comb)))
    sides, used = {}, [main]
    for name, sign in (("below", -1), ("above", 1)):
        target = ee[main] + sign * w
        near = [i for i in peaks if abs(ee[i] - target) < 0.5 * w]
        if not near:
            sides[name] = unresolved(f"unresolved (no resolved peak one infrared photon {name} the main line)")
            continue
        i = near[0]
        between = dd[min(i, main) : max(i, main) + 1]
        if dd[i] < PEAK_CONTRAST * between.min():
            sides[name] = unresolved(f"unresolved (the sideband {name} is not separated from the main line)")
            continue
        used.append(i)
        values = {"parabola": sign * (_parabola(ee, dd, i) - _parabola(ee, dd, main)),
                  "centroid": sign * (_centroid(ee, dd, i) - _centroid(ee, dd, main))}
        sides[name] = combine_rules(values, step)
    headroom = float(min(math.log10(dd[i]) - floor[i] for i in used))
    if headroom < noise_margin:
        return failed(unresolved_reason(headroom), headroom)
    shift = combine_rules(shifts, step, headroom=headroom)
    below = sides["below"] if not sides["below"].resolved else _with_headroom(sides["below"], headroom)
    above = sides["above"] if not sides["above"].resolved else _with_headroom(sides["above"], headroom)
    return DressedLine(expected, shift, below, above, float(ee[main]), headroom)


def _with_headroom(reading: Reading, headroom: float) -> Reading:
    from dataclasses import replace

    return replace(reading, headroom=headroom)
