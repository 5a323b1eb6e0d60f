"""`compare` gives no cutoff read within the noise margin of a spectrum's floor.

Constructed spectra with known answers: odd harmonics of 1.55 eV (Gaussian lines of
0.2 eV rms), flat up to a cutoff, then falling one decade per 2 eV, on a flat
background of known level. With the background far below the plateau the cutoffs
are read and their difference is the known shift; with the background raised to
within a decade and a half of the plateau, the 1.5-decade drop of the rule cannot
be seen, and the cutoff is reported as unresolved (NaN and the reason).
"""

import math

import numpy as np

from tdse1d.scans.compare import MeasuredSpectrum, compare_spectra


def _spectrum(energy_ev, cutoff_ev, background):
    lines = sum(np.exp(-0.5 * ((energy_ev - q * 1.55) / 0.2) ** 2) for q in range(1, 80, 2))
    return lines * np.where(energy_ev < cutoff_ev, 1.0, 10 ** (-(energy_ev - cutoff_ev) / 2.0)) + background


def test_cutoffs_far_above_the_floor_are_read():
    energy = np.arange(0.0, 120.0, 0.02)
    e_meas = np.linspace(18.0, 80.0, 1500)
    measured = MeasuredSpectrum(e_meas, _spectrum(e_meas, 46.0, 1e-9))
    result = compare_spectra(energy, _spectrum(energy, 40.0, 1e-9), measured, 1.55, 15.76)
    assert abs(result.difference_ev - 6.0) < 0.5
    assert result.computed_reason == "" and result.measured_reason == ""


def test_a_measured_background_near_the_plateau_gives_unresolved():
    energy = np.arange(0.0, 120.0, 0.02)
    e_meas = np.linspace(18.0, 80.0, 1500)
    # the smoothed comb stands ~1 decade below the line peaks; a background of 1e-2
    # leaves less than drop + margin = 2.5 decades between plateau and floor
    measured = MeasuredSpectrum(e_meas, _spectrum(e_meas, 46.0, 1e-2))
    result = compare_spectra(energy, _spectrum(energy, 40.0, 1e-9), measured, 1.55, 15.76)
    assert math.isnan(result.cutoff_measured_ev) and math.isnan(result.difference_ev)
    assert result.measured_reason.startswith(("unresolved (within", "unresolved (at or below"))
    assert math.isfinite(result.cutoff_computed_ev)
    assert result.to_json()["cutoff_measured_eV"] is None


def test_a_computed_companion_floor_above_the_plateau_gives_unresolved():
    # the computed spectrum's floor given by a companion (e.g. the field's own spectrum)
    energy = np.arange(0.0, 120.0, 0.02)
    e_meas = np.linspace(18.0, 80.0, 1500)
    measured = MeasuredSpectrum(e_meas, _spectrum(e_meas, 46.0, 1e-9))
    computed = _spectrum(energy, 40.0, 1e-9)
    result = compare_spectra(energy, computed, measured, 1.55, 15.76, floor_power=np.full(energy.size, 0.1))
    assert math.isnan(result.cutoff_computed_ev) and result.computed_reason.startswith("unresolved")
