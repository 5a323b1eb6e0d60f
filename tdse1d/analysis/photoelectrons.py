"""Photoelectron spectra read off: the edges (:func:`photoelectron_edges`: a plateau-level
fixed point on the smoothed log-spectrum; the direct edge is where the spectrum first
comes down to half a decade above the rescattering plateau, the backscattered edge where
it last stays within ``drop`` decades of it), the ponderomotive shift of the ATI comb
(:func:`ponderomotive_shift`), the field-free floor (:func:`field_free_floor`) and the
streaking shift (:func:`streaking_shift`: the centroids of the left and right
photoelectron peaks, ``p_right = p0 - A_IR(t_x)`` and ``|p_left| = p0 + A_IR(t_x)``, so
the measured shift is ``(|p_left| - p_right) / 2``, which cancels any common shift of
both). Pure numerics, atomic units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..spectra.cutoff import NOISE_MARGIN, noise_floor, running_mean, unresolved_reason


#: decades by which the smoothed spectrum falls below the direct level at the direct
#: edge (and may stay above the plateau where the plateau starts), and falls below
#: the plateau level at the backscattered edge (see photoelectron_edges)
DIRECT_RISE = 0.5
BACKSCATTER_DROP = 1.5

#: minimum contrast of the ATI comb (first Fourier coefficient of dP/dE at period
#: hbar*w over the direct region, relative to the mean) for its offset to count
ATI_CONTRAST = 0.1


@dataclass(frozen=True)
class PhotoelectronEdges:
    """Edges read off a photoelectron energy spectrum by :func:`photoelectron_edges`.

    Attributes
    ----------
    direct, backscattered : float
        Kinetic energies of the direct and backscattered edges (hartree); NaN when
        the spectrum has no plateau to read them from.
    plateau_log10 : float
        Level of the rescattering plateau, median of the smoothed log10 dP/dE.
    peak_log10 : float
        Largest smoothed log10 dP/dE (the direct peak).
    smoothed_log10 : ndarray
        The smoothed log10 dP/dE on the input energy axis (for plotting).
    noise_floor_log10 : ndarray
        Noise floor of the spectrum on the input energy axis, log10 dP/dE
        (:func:`tdse1d.spectra.noise_floor`; NaN where the spectrum is not used).
    direct_reason, backscattered_reason : str
        Empty for an edge read; otherwise why the edge is NaN, e.g.
        ``"unresolved (within 0.4 decades of the noise floor)"``.
    """

    direct: float
    backscattered: float
    plateau_log10: float
    peak_log10: float
    smoothed_log10: np.ndarray
    noise_floor_log10: np.ndarray | None = None
    direct_reason: str = ""
    backscattered_reason: str = ""


@dataclass(frozen=True)
class PonderomotiveShift:
    """Offset of the ATI comb and the ponderomotive shift it implies.

    Attributes
    ----------
    measurable : bool
    reason : str
        Why the shift is or is not measurable.
    measured : float
        ``(n hbar w - Ip - E_n) mod hbar w`` from the comb offset (hartree), NaN if not
        measurable (also when the comb lies within the noise margin of the floor).
    predicted : float
        Up of the peak field (hartree).
    """

    measurable: bool
    reason: str
    measured: float
    predicted: float


@dataclass(frozen=True)
class StreakingShift:
    """Photoelectron peak of an XUV pulse streaked by an IR field (a.u.).

    Attributes
    ----------
    xuv_time : float
        Centre of the XUV pulse.
    xuv_photon_energy : float
    initial_momentum : float
        ``p0 = sqrt(2 (hbar w_X - Ip))``.
    vector_potential : float
        ``A_IR(t_X)``, the vector potential of the other pulses at the XUV centre.
    peak_right, peak_left : float
        Centroids of the photoelectron peak on each side (momentum magnitudes).
    measured : float
        ``(peak_left - peak_right) / 2``; the classical prediction is ``A_IR(t_X)``.
    photoelectric_energy : float
        ``(peak_left + peak_right)^2 / 8``, the peak energy without the streaking
        shift; Einstein's relation predicts ``hbar w_X - Ip``.
    reason : str
        Empty when the peaks stand clear of the noise floor; otherwise why
        ``measured`` and ``photoelectric_energy`` are NaN.
    """

    xuv_time: float
    xuv_photon_energy: float
    initial_momentum: float
    vector_potential: float
    peak_right: float
    peak_left: float
    measured: float
    photoelectric_energy: float
    reason: str = ""

    @property
    def predicted(self):
        return self.vector_potential


def _parabolic_peak(x, y):
    """Abscissa of the maximum of sampled ``y(x)``, refined by a parabola through three points."""
    i = int(np.argmax(y))
    if 0 < i < y.size - 1:
        denom = y[i - 1] - 2 * y[i] + y[i + 1]
        if denom < 0:
            return float(x[i] + 0.5 * (y[i - 1] - y[i + 1]) / denom * (x[1] - x[0]))
    return float(x[i])


def photoelectron_edges(energy, energy_density, photon_energy, *, rise=DIRECT_RISE,
                        drop=BACKSCATTER_DROP, noise_margin=NOISE_MARGIN, max_energy=None,
                        floor_decades=30.0, max_iterations=30, noise=None):
    """Direct and backscattered edges of a photoelectron energy spectrum.

    The rule (energies in hartree):

    1. ``S(E)`` = running mean of ``log10(dP/dE)`` over ``|E' - E| <= hbar w / 2``
       (one ATI spacing, which levels the comb of ATI peaks), values more than
       ``floor_decades`` below the maximum raised to that floor. Only ``E >= hbar w /
       2`` is used (dP/dE diverges as 1/p at p = 0). The largest S is the direct peak.
    2. Noise floor ``N(E)`` (:func:`tdse1d.spectra.noise_floor`): the larger of the
       median of log10 dP/dE over the upper half of the energy axis and, if given,
       the companion ``noise`` smoothed like S (the analysis of a run passes the
       spectrum of the same numerics with no field, :func:`field_free_floor`); the
       search region runs from the peak to the last energy with ``S >= N +
       noise_margin``, and at most to ``max_energy``. The analysis of a run passes
       twice the classical backscattered cutoff: beyond it a 1-D spectrum holds only
       a slowly falling quantum tail, which would otherwise pass for a plateau.
    3. Plateau level ``P``: fixed point, starting from the median of S over the
       region, of: ``E_1`` = first energy with ``S <= P + rise`` (the direct electrons
       have come down to the plateau), ``E_b`` = last energy with ``S >= P - drop``,
       ``P`` = median of S over ``[E_1, E_b]``. ``E_b`` is the backscattered edge:
       beyond it S stays more than ``drop`` decades below the plateau. Only the last
       crossing counts, so dips inside the plateau do not end it.
    4. The direct edge ``E_d`` is the first energy above the peak where S has fallen
       ``rise`` decades below the direct level (median of S between the peak and
       ``E_1``): the knee where the direct electrons' distribution starts its steep
       fall to the plateau.
    5. Noise: an edge counts only if its reading level (``P - drop`` for the
       backscattered edge, the direct level minus ``rise`` for the direct one)
       stands at least ``noise_margin`` decades above ``N``; otherwise it is NaN and
       its reason says "unresolved (within X decades of the noise floor)".

    Classically direct electrons end below ``2 Up`` and backscattered ones below
    ``10 Up`` (Paulus et al., J. Phys. B 27, L703 (1994), from memory). The rule does
    not use Up, so the comparison is not built into it.

    Parameters
    ----------
    energy : array_like, shape (n,)
        Increasing kinetic energies (hartree), e.g. ``p**2 / 2`` on a uniform |p| axis.
    energy_density : array_like, shape (n,)
        dP/dE (1/hartree), both sides together; NaN or non-positive values are ignored.
    photon_energy : float
        ``hbar w`` of the driving field (hartree).
    rise, drop, noise_margin : float
        Decades (see above); ``noise_margin`` defaults to
        :data:`tdse1d.spectra.NOISE_MARGIN`.
    max_energy : float, optional
        End of the search region (hartree); default the end of the axis.
    noise : array_like, optional
        Companion floor dP/dE on the same energy axis (1/hartree).

    Returns
    -------
    PhotoelectronEdges
        NaN edges when the spectrum has no plateau above its noise floor.
    """
    e = np.asarray(energy, dtype=float)
    d = np.asarray(energy_density, dtype=float)
    if e.ndim != 1 or e.shape != d.shape or e.size < 8:
        raise ValueError(f"energy and energy_density must be 1-D of equal length >= 8, got {e.shape}, {d.shape}")
    if not photon_energy > 0:
        raise ValueError(f"photon_energy must be positive, got {photon_energy}")
    usable = np.isfinite(d) & (d > 0) & (e >= 0.5 * photon_energy)
    smoothed = np.full(e.shape, np.nan)
    if usable.sum() < 8:
        return PhotoelectronEdges(math.nan, math.nan, math.nan, math.nan, smoothed)
    ee, dd = e[usable], d[usable]
    log_d = np.log10(np.maximum(dd, dd.max() * 10.0**-floor_decades))
    s = running_mean(ee, log_d, 0.5 * photon_energy)
    smoothed[usable] = s
    start = int(np.argmax(s))
    peak = float(s[start])
    companion = None if noise is None else np.asarray(noise, dtype=float)[usable]
    floor = noise_floor(ee, dd, companion=companion, half_width=0.5 * photon_energy)
    floor_all = np.full(e.shape, np.nan)
    floor_all[usable] = floor
    inside = ee <= (np.inf if max_energy is None else float(max_energy))
    signal = np.flatnonzero((s >= floor + noise_margin) & inside)
    if peak - floor[start] < noise_margin:
        why = unresolved_reason(peak - floor[start])
        return PhotoelectronEdges(math.nan, math.nan, math.nan, peak, smoothed, floor_all, why, why)
    no_plateau = f"unresolved (no plateau {noise_margin:g} decade above the noise floor)"
    failed = PhotoelectronEdges(math.nan, math.nan, math.nan, peak, smoothed, floor_all, no_plateau, no_plateau)
    if signal.size == 0 or signal[-1] <= start + 2:
        return failed
    tail = s[start : signal[-1] + 1]
    level = float(np.median(tail))
    seen = set()
    for _ in range(int(max_iterations)):
        below = np.flatnonzero(tail <= level + rise)
        above = np.flatnonzero(tail >= level - drop)
        if below.size == 0 or above.size == 0:
            return failed
        i_1, i_b = int(below[0]), int(above[-1])
        if i_b <= i_1:
            return failed
        if (i_1, i_b) in seen:
            break
        seen.add((i_1, i_b))
        level = float(np.median(tail[i_1 : i_b + 1]))
    direct_level = float(np.median(tail[: i_1 + 1]))
    fallen = np.flatnonzero(tail[: i_1 + 1] <= direct_level - rise)
    # a direct part that never stands out from the plateau ends where the plateau starts
    i_d = int(fallen[0]) if fallen.size else i_1
    direct, back = float(ee[start + i_d]), float(ee[start + i_b])
    direct_why = back_why = ""
    if direct_level - rise - floor[start + i_d] < noise_margin:
        direct, direct_why = math.nan, unresolved_reason(direct_level - rise - floor[start + i_d])
    if level - drop - floor[start + i_b] < noise_margin:
        back, back_why = math.nan, unresolved_reason(level - drop - floor[start + i_b])
    return PhotoelectronEdges(direct, back, level, peak, smoothed, floor_all, direct_why, back_why)


def field_free_floor(problem, *, duration=None):
    """Photoelectron spectrum of the same numerics with no field: the method's floor.

    The initial state is propagated with the run's grid, potential, time step, scheme
    and absorber but no field, its bound components are projected out
    (:func:`tdse1d.spectra.project_out_bound`) and the rest is projected on plane waves
    (:func:`tdse1d.spectra.plane_wave_spectrum`). What remains is what the numerics
    alone put into the continuum: the split-operator propagator's eigenvectors differ
    from the grid Hamiltonian's by O(dt^2), so part of the initial state is continuum
    for the projection. That part is stationary once its components have dephased,
    after a time 2 pi / E for energy E: one optical period of the first pulse covers
    E >= hbar w, where edges are read (docs/analysis.md shows it unchanged between 1
    and 8 cycles). A run at vanishing intensity gives the same spectrum.

    Parameters
    ----------
    problem : tdse1d.input.problem.Problem
    duration : float, optional
        Propagation time (a.u.); default one period of the first pulse, at most the run.

    Returns
    -------
    tdse1d.spectra.PhotoelectronSpectrum
    """
    from ..physics.absorbers import ABSORBERS
    from ..physics.propagation import SCHEMES, Propagator
    from ..physics.pulses import Field
    from ..spectra.photoelectron import plane_wave_spectrum, project_out_bound
    from ..physics.states import initial_wavefunction

    cfg, grid = problem.config, problem.grid
    times = problem.time.times
    period = 2 * math.pi / problem.field.omega if problem.field.pulses else times[-1] - times[0]
    span = period if duration is None else float(duration)
    steps = int(min(times.size - 1, max(1, math.ceil(span / problem.time.step))))
    atom = cfg.atom
    psi0 = initial_wavefunction(problem.states, atom.initial_state, atom.initial_amplitudes, atom.initial_phases)
    absorber = ABSORBERS[cfg.absorber.type](cfg.absorber.exponent, cfg.absorber.strength)
    mask = absorber.step_factor(grid, problem.absorber_width, problem.time.step)
    prop = Propagator(grid, problem.potential, Field([]), times[: steps + 1],
                      scheme=SCHEMES[cfg.propagation.scheme_name], absorber_factor=mask, reference=psi0,
                      fft_effort="FFTW_ESTIMATE")
    prop.start(psi0)
    prop.advance(steps)
    prop.finish()
    continuum = project_out_bound(prop.length_gauge_state(), problem.states.wavefunctions, grid.spacing)
    return plane_wave_spectrum(grid.x, continuum, split="momentum")


def _companion_on(energy, floor_energy, floor_density):
    """A floor spectrum interpolated (in log) onto another energy axis."""
    if floor_energy is None:
        return None
    log_f = np.log10(np.maximum(np.nan_to_num(np.asarray(floor_density, float)), 1e-300))
    return 10.0 ** np.interp(energy, floor_energy, log_f)


def ponderomotive_shift(energy, energy_density, photon_energy, ionization_potential, up, *,
                        upper=None, noise_margin=NOISE_MARGIN, noise=None):
    """Ponderomotive shift from the offset of the ATI comb, where it is measurable.

    ATI peaks lie at ``E_n = n hbar w - Ip - Up`` (common practice; the shift of the
    ionization threshold by Up), so the offset of the comb gives Up modulo ``hbar w``.
    The offset is the phase of the first Fourier coefficient of dP/dE at period
    ``hbar w`` over ``[hbar w / 2, upper]`` (default ``2 Up``, at least ``4 hbar w``).
    The shift counts as measurable only if ``Up < hbar w`` (otherwise the comb fixes it
    only modulo hbar w), the comb contrast exceeds :data:`ATI_CONTRAST`, and the
    median of log10 dP/dE over the range stands ``noise_margin`` decades above the
    spectrum's noise floor (:func:`tdse1d.spectra.noise_floor`).

    Parameters
    ----------
    energy, energy_density : array_like
        Energy axis (hartree) and dP/dE (1/hartree).
    photon_energy, ionization_potential, up : float
        ``hbar w``, Ip and Up of the driving field (hartree).
    upper : float, optional
        Top of the energy range used (hartree).
    noise_margin : float
        Decades (see above).
    noise : array_like, optional
        Companion floor dP/dE on the same axis (see :func:`photoelectron_edges`).

    Returns
    -------
    PonderomotiveShift
    """
    if not up < photon_energy:
        return PonderomotiveShift(
            False, f"Up = {up:.3g} Eh exceeds the photon energy {photon_energy:.3g} Eh: the ATI comb fixes "
            "the shift only modulo hbar*w", math.nan, up)
    e = np.asarray(energy, dtype=float)
    d = np.asarray(energy_density, dtype=float)
    top = max(2 * up, 4 * photon_energy) if upper is None else upper
    chosen = np.isfinite(d) & (e >= 0.5 * photon_energy) & (e <= top)
    if chosen.sum() < 16:
        return PonderomotiveShift(False, "too few spectrum samples below the direct edge", math.nan, up)
    ee, dd = e[chosen], d[chosen]
    positive = np.isfinite(d) & (d > 0) & (e > 0)
    if positive.sum() >= 8 and np.any(dd > 0):
        companion = None if noise is None else np.asarray(noise, float)[positive]
        floor = noise_floor(e[positive], d[positive], companion=companion)
        floor_here = np.interp(ee, e[positive], floor)
        headroom = float(np.median(np.log10(np.maximum(dd, 1e-300)) - floor_here))
        if headroom < noise_margin:
            return PonderomotiveShift(False, f"ATI comb {unresolved_reason(headroom)}", math.nan, up)
    weights = np.gradient(ee)
    mean = np.sum(dd * weights)
    coefficient = np.sum(dd * weights * np.exp(-2j * np.pi * ee / photon_energy))
    contrast = 2 * abs(coefficient) / mean if mean > 0 else 0.0
    if contrast < ATI_CONTRAST:
        return PonderomotiveShift(
            False, f"no resolved ATI comb (contrast {contrast:.2g} < {ATI_CONTRAST})", math.nan, up)
    offset = (-np.angle(coefficient) / (2 * np.pi) * photon_energy) % photon_energy
    measured = float((-ionization_potential - offset) % photon_energy)
    return PonderomotiveShift(True, f"ATI comb contrast {contrast:.2g}", measured, up)


def peak_centroid(momentum, density, *, level=0.5):
    """Centroid of the peak of ``density`` around its maximum, above ``level`` of it.

    The contiguous region around the maximum where ``density >= level * max`` is the
    peak; its first moment in momentum is returned (sub-grid precision).

    Parameters
    ----------
    momentum, density : array_like, shape (n,)
    level : float
        Fraction of the maximum that bounds the peak.

    Returns
    -------
    float
    """
    p = np.asarray(momentum, dtype=float)
    d = np.nan_to_num(np.asarray(density, dtype=float))
    i = int(np.argmax(d))
    threshold = level * d[i]
    lo = i
    while lo > 0 and d[lo - 1] >= threshold:
        lo -= 1
    hi = i
    while hi < d.size - 1 and d[hi + 1] >= threshold:
        hi += 1
    window = slice(lo, hi + 1)
    return float(np.sum(p[window] * d[window]) / np.sum(d[window]))


def streaking_shift(momentum, density_left, density_right, xuv_time, xuv_photon_energy,
                    ionization_potential, ir_vector_potential, *, noise_margin=NOISE_MARGIN):
    """Streaking shift of the XUV photoelectron peak and its classical prediction.

    An electron released at ``t_X`` with momentum ``+-p0``, ``p0 = sqrt(2 (hbar w_X -
    Ip))`` (Einstein's photoelectric relation), ends with ``+-p0 - A_IR(t_X)``
    (charge -1, E = -dA/dt; Itatani et al., Phys. Rev. Lett. 88, 173903 (2002), from
    memory). So ``p_right = p0 - A`` and ``|p_left| = p0 + A``, and
    ``A = (|p_left| - p_right) / 2``.

    Parameters
    ----------
    momentum : array_like
        |p| axis (a.u.).
    density_left, density_right : array_like
        dP/d|p| of electrons with p < 0 and p > 0.
    xuv_time, xuv_photon_energy, ionization_potential : float
        Centre of the XUV pulse (a.u.), its photon energy and Ip (hartree).
    ir_vector_potential : float
        ``A_IR(t_X)`` of the other pulses (a.u.).
    noise_margin : float
        Decades by which the lower of the two peaks must stand above the noise floor
        of the momentum density (:func:`tdse1d.spectra.noise_floor`); otherwise the
        shift is NaN and ``reason`` says why.

    Returns
    -------
    StreakingShift
    """
    excess = xuv_photon_energy - ionization_potential
    if not excess > 0:
        raise ValueError(f"the XUV photon energy {xuv_photon_energy} does not exceed Ip {ionization_potential}")
    p0 = math.sqrt(2 * excess)
    right = peak_centroid(momentum, density_right)
    left = peak_centroid(momentum, density_left)
    p = np.asarray(momentum, dtype=float)
    both = np.nan_to_num(np.asarray(density_left, float)) + np.nan_to_num(np.asarray(density_right, float))
    positive = (p > 0) & (both > 0)
    reason = ""
    if positive.sum() >= 8:
        # the floor on the energy axis (dP/dE = dP/dp / p): the top half of the
        # energy axis lies beyond the line, the top half of the momentum axis need not
        energy = 0.5 * p[positive] ** 2
        floor = float(noise_floor(energy, both[positive] / p[positive])[0])
        lower = min(np.nanmax(density_left / np.where(p > 0, p, np.inf)),
                    np.nanmax(density_right / np.where(p > 0, p, np.inf)))
        headroom = math.log10(lower) - floor if lower > 0 else -math.inf
        if headroom < noise_margin:
            reason = unresolved_reason(headroom)
            right = left = math.nan
    return StreakingShift(
        xuv_time=float(xuv_time), xuv_photon_energy=float(xuv_photon_energy), initial_momentum=p0,
        vector_potential=float(ir_vector_potential), peak_right=right, peak_left=left,
        measured=0.5 * (left - right), photoelectric_energy=0.125 * (left + right) ** 2, reason=reason,
    )
