"""Semiclassical numbers for a pulse, and the grid and time step they call for.

These are the quantities a strong-field physicist checks before spending CPU time:

* ponderomotive energy Up = E0^2 / (4 w^2) (cycle-averaged quiver energy);
* Keldysh parameter gamma = sqrt(Ip / (2 Up)) (Keldysh, Sov. Phys. JETP 20, 1307
  (1965)): gamma < 1 is the tunnelling regime, gamma > 1 the multiphoton regime;
* quiver amplitude alpha = E0 / w^2;
* harmonic cutoff Ip + 3.17 Up (Krause, Schafer and Kulander, Phys. Rev. Lett. 68,
  3535 (1992); Corkum, Phys. Rev. Lett. 71, 1994 (1993)) and the quantum-corrected
  1.32 Ip + 3.17 Up (Lewenstein et al., Phys. Rev. A 49, 2117 (1994));
* the largest drift energies of direct (2 Up) and backscattered (10 Up; Paulus et al.,
  J. Phys. B 27, L703 (1994)) photoelectrons;
* the barrier-suppression intensity of the model potential itself (field at which the
  top of the field-lowered barrier reaches the bound level).

All numbers are in atomic units; :func:`estimates_json` adds eV and W/cm^2.
The recommended grid follows from three requirements, each stated in ``reasons``:
the box holds the quiver excursion, the grid resolves the largest momentum the pulse
gives an electron, and the time step resolves the largest energy on the grid.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

from .. import units
from ..physics.grid import fast_fft_size

__all__ = ["PulseEstimate", "GridAdvice", "pulse_estimate", "recommend_grid", "estimates_json", "CUTOFF_UP"]

#: coefficient of Up in the classical cutoff law (Corkum 1993: 3.17)
CUTOFF_UP = 3.17
#: coefficient of Ip in the quantum-corrected cutoff (Lewenstein et al. 1994)
LEWENSTEIN_IP = 1.32

# Grid rules (common practice, no source): box half-width at least this many quiver
# amplitudes plus a margin; momenta up to 6 sqrt(Up) (three times the peak A0 = 2 sqrt(Up),
# the largest kinetic momentum of a backscattered electron during the pulse); a grid
# whose largest momentum is this factor above the needed one; a spacing no coarser than
# needed to resolve a soft-core ground state to 1e-6 Hartree.
EXCURSION_FACTOR = 2.5
MIN_INNER_HALF_WIDTH = 60.0
MOMENTUM_MARGIN = 1.5
MAX_SPACING = 0.2
MIN_ABSORBER_WIDTH = 40.0
# time step: from the splitting error (semiclassical/step_error.py), at most this (the
# step the field and the dipole's sampling have always been checked with) and at most
# pi / (NYQUIST_MARGIN x the cutoff energy), so the dipole is sampled well above the
# highest harmonic analysed
MAX_TIME_STEP = 0.05
NYQUIST_MARGIN = 2.0


@dataclass(frozen=True)
class PulseEstimate:
    """Semiclassical numbers for one pulse (atomic units unless stated)."""

    photon_energy: float
    peak_field: float
    peak_intensity_W_cm2: float
    optical_period: float
    ionization_potential: float
    ponderomotive_energy: float
    keldysh_parameter: float
    quiver_amplitude: float
    cutoff_energy: float
    cutoff_energy_lewenstein: float
    cutoff_order: float
    direct_drift_energy: float
    backscattered_drift_energy: float
    barrier_suppression_field: float
    barrier_suppression_intensity_W_cm2: float


def pulse_estimate(omega: float, peak_field: float, ionization_potential: float, bsi_field: float) -> PulseEstimate:
    """Semiclassical numbers of a pulse of carrier ``omega`` and peak field ``peak_field``.

    Parameters
    ----------
    omega : float
        Carrier angular frequency = photon energy (a.u.).
    peak_field : float
        Peak field amplitude E0 (a.u.).
    ionization_potential : float
        Ip of the initial state (Hartree).
    bsi_field : float
        Barrier-suppression field of the model (a.u.).
    """
    up = peak_field**2 / (4 * omega**2)
    cutoff = ionization_potential + CUTOFF_UP * up
    return PulseEstimate(
        photon_energy=omega,
        peak_field=peak_field,
        peak_intensity_W_cm2=units.field_to_intensity(peak_field),
        optical_period=units.optical_period(omega),
        ionization_potential=ionization_potential,
        ponderomotive_energy=up,
        keldysh_parameter=math.sqrt(ionization_potential / (2 * up)) if up > 0 else math.inf,
        quiver_amplitude=peak_field / omega**2,
        cutoff_energy=cutoff,
        cutoff_energy_lewenstein=LEWENSTEIN_IP * ionization_potential + CUTOFF_UP * up,
        cutoff_order=cutoff / omega,
        direct_drift_energy=2 * up,
        backscattered_drift_energy=10 * up,
        barrier_suppression_field=bsi_field,
        barrier_suppression_intensity_W_cm2=units.field_to_intensity(bsi_field),
    )


@dataclass(frozen=True)
class GridAdvice:
    """A grid and time step for a run, with the reason for each."""

    points: int
    spacing: float
    time_step: float
    half_width: float
    absorber_width: float
    max_momentum: float
    reasons: tuple[str, ...]


def recommend_grid(pulses: list[PulseEstimate], ionization_potential: float, potential_depth: float,
                   step_error=None) -> GridAdvice:
    """Grid and time step for a run with these pulses.

    Parameters
    ----------
    pulses : list of PulseEstimate
    ionization_potential : float
        Ip of the initial state (Hartree).
    potential_depth : float
        -min V of the model (Hartree).
    step_error : callable, optional
        ``step_error(momentum, largest) -> StepError``: the largest step up to
        ``largest`` (a.u.) whose splitting error for an electron of that momentum
        crossing the core is within the run's tolerance
        (:func:`tdse1d.semiclassical.step_error.step_for_tolerance`). Without it the
        step is the largest allowed by the sampling alone.

    Returns
    -------
    GridAdvice
    """
    reasons = []
    alpha = max((p.quiver_amplitude for p in pulses), default=0.0)
    inner = max(EXCURSION_FACTOR * alpha, MIN_INNER_HALF_WIDTH)
    reasons.append(
        f"box: inner half-width {inner:.1f} bohr = max({EXCURSION_FACTOR} x quiver amplitude "
        f"{alpha:.1f} bohr, {MIN_INNER_HALF_WIDTH:g} bohr)"
    )
    absorber = max(MIN_ABSORBER_WIDTH, 0.25 * inner)
    reasons.append(f"absorber: {absorber:.1f} bohr on each side = max({MIN_ABSORBER_WIDTH:g}, inner/4)")
    p_needed = math.sqrt(2 * ionization_potential)
    for p in pulses:
        p_quiver = 6 * math.sqrt(p.ponderomotive_energy)
        p_photo = math.sqrt(2 * max(p.photon_energy - ionization_potential, 0.0))
        p_needed = max(p_needed, p_quiver + p_photo)
    p_grid = MOMENTUM_MARGIN * p_needed
    spacing = min(MAX_SPACING, math.pi / p_grid)
    reasons.append(
        f"spacing: {spacing:.4g} bohr = min({MAX_SPACING:g}, pi / ({MOMENTUM_MARGIN:g} x {p_needed:.3g} a.u.)); "
        "the momentum covers 6 sqrt(Up) (backscattered electrons in the pulse) plus photoelectrons of w - Ip"
    )
    half_width = inner + absorber
    points = fast_fft_size(int(math.ceil(2 * half_width / spacing)))
    reasons.append(f"points: {points} (2 x {half_width:.1f} bohr / spacing, rounded up to a fast FFT size)")
    # the dipole sampled NYQUIST_MARGIN times above the highest harmonic of interest
    e_top = max([p.cutoff_energy for p in pulses] + [p.photon_energy for p in pulses] + [ionization_potential])
    sampled = min(MAX_TIME_STEP, math.pi / (NYQUIST_MARGIN * e_top))
    # the fastest electron crossing the core: the highest classical return energy
    p_return = max([math.sqrt(2 * CUTOFF_UP * p.ponderomotive_energy) for p in pulses]
                   + [math.sqrt(2 * max(p.photon_energy - ionization_potential, 0.0)) for p in pulses] + [1.0])
    if step_error is None:
        time_step = sampled
        reasons.append(f"time step: {time_step:.4g} a.u. = min({MAX_TIME_STEP:g}, pi / ({NYQUIST_MARGIN:g} x "
                       f"{e_top:.3g} Hartree)), the sampling of the highest harmonic")
    else:
        est = step_error(p_return, sampled)
        time_step = est.time_step
        reasons.append(
            f"time step: {time_step:.4g} a.u.: splitting error {est.error:.2g} (order {est.order}, estimated by step "
            f"doubling) for an electron of {p_return:.3g} a.u. (3.17 Up) crossing the core; at most "
            f"min({MAX_TIME_STEP:g}, pi / ({NYQUIST_MARGIN:g} x {e_top:.3g} Hartree))")
    return GridAdvice(points, spacing, time_step, half_width, absorber, math.pi / spacing, tuple(reasons))


def estimates_json(pulses: list[PulseEstimate], advice: GridAdvice) -> dict:
    """The estimates as a JSON-ready dict: the first pulse's keys at top level and
    ``pulses``, one such dict per pulse. Keys carry their unit in their name."""

    def one(p: PulseEstimate) -> dict:
        ev = units.HARTREE_EV
        return {
            "photon_energy_eV": p.photon_energy * ev,
            "wavelength_nm": units.omega_to_nm(p.photon_energy),
            "peak_field_au": p.peak_field,
            "peak_intensity_W_cm2": p.peak_intensity_W_cm2,
            "optical_period_fs": units.au_to_fs(p.optical_period),
            "ionization_potential_eV": p.ionization_potential * ev,
            "ponderomotive_energy_eV": p.ponderomotive_energy * ev,
            "keldysh_parameter": p.keldysh_parameter,
            "quiver_amplitude_au": p.quiver_amplitude,
            "cutoff_energy_eV": p.cutoff_energy * ev,
            "cutoff_order": p.cutoff_order,
            "cutoff_energy_lewenstein_eV": p.cutoff_energy_lewenstein * ev,
            "cutoff_order_lewenstein": p.cutoff_energy_lewenstein / p.photon_energy,
            "direct_drift_energy_eV": p.direct_drift_energy * ev,
            "backscattered_drift_energy_eV": p.backscattered_drift_energy * ev,
            "barrier_suppression_field_au": p.barrier_suppression_field,
            "barrier_suppression_intensity_W_cm2": p.barrier_suppression_intensity_W_cm2,
        }

    out = one(pulses[0]) if pulses else {}
    out.update(
        {
            "recommended_points": advice.points,
            "recommended_spacing": advice.spacing,
            "recommended_time_step": advice.time_step,
            "recommended_absorber_width": advice.absorber_width,
            "recommendation_reasons": list(advice.reasons),
            "pulses": [one(p) for p in pulses],
        }
    )
    return out


def as_attributes(pulse: PulseEstimate) -> dict:
    """Flat dict of one pulse's estimates in a.u. (for HDF5 attributes)."""
    return {f"{k}": float(v) for k, v in asdict(pulse).items()}
