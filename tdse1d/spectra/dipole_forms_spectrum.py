"""The harmonic spectrum in its three dipole forms, and how far they agree.

For an exact wavefunction the dipole <x>, its velocity d<x>/dt = <p> (the kinetic
momentum) and its acceleration are one signal and its derivatives, so their spectra,
brought to the acceleration form (times w^4 and w^2), are equal (Ehrenfest theorem;
Burnett, Reed, Cooper and Knight, Phys. Rev. A 45, 3347 (1992), from memory). A run's
three forms differ by its numerical error and by electrons that leave the grid; their
spread over the plateau is a convergence check that needs no second run. Registered as
``harmonic_forms`` (:mod:`tdse1d.spectra.derived`).
"""

from __future__ import annotations

import math

import numpy as np

from .derived import Column, DerivedSpectrum, register_derived_spectrum
from .harmonic import dipole_forms

#: the plateau over which the forms are compared: from this harmonic order up to the
#: highest frequency where the acceleration-form power is within PLATEAU_DECADES of its
#: largest value above that order (common practice for a plateau, no source). The forms
#: are compared on the power summed over each harmonic order (w within +-w0/2 of k w0),
#: so that the valleys between lines, where both forms are at their floor, do not count.
FIRST_ORDER = 3.0
PLATEAU_DECADES = 4.0


@register_derived_spectrum("harmonic_forms")
class HarmonicForms(DerivedSpectrum):
    """Harmonic power from the dipole, velocity and acceleration forms (acceleration form)."""

    title = "harmonic spectrum in its three dipole forms"
    axis = Column("frequency", "hartree", "angular frequency = photon energy")
    columns = (
        Column("power_acceleration", "atomic_units", "|a(w)|^2 of the dipole acceleration"),
        Column("power_velocity", "atomic_units", "w^2 |v(w)|^2 of the dipole velocity <p> (acceleration form)"),
        Column("power_dipole", "atomic_units", "w^4 |d(w)|^2 of the dipole <x> (acceleration form)"),
    )
    readings_declared = (
        Column("velocity_spread", "1", "RMS over the plateau's harmonic orders of log10(velocity / acceleration "
                                       "form), power summed per order (decades)"),
        Column("dipole_spread", "1", "RMS over the plateau's harmonic orders of log10(dipole / acceleration "
                                     "form), power summed per order (decades)"),
        Column("plateau_top", "hartree", "highest frequency of the compared plateau"),
    )

    def compute(self, series, omega0, window):
        forms = dipole_forms(series["time"], omega0, dipole=series["dipole"], velocity=series["momentum"],
                             acceleration=series["acceleration"], window=window)
        w = forms["acceleration"].frequency
        out = {"frequency": w}
        for form in ("acceleration", "velocity", "dipole"):
            out[f"power_{form}"] = forms[form].power
        plateau = _plateau(w, out["power_acceleration"], omega0)
        out["plateau_top"] = float(w[plateau][-1]) if plateau.any() else math.nan
        reference = _per_order(w, out["power_acceleration"], omega0, out["plateau_top"])
        for form in ("velocity", "dipole"):
            out[f"{form}_spread"] = _log_rms(_per_order(w, out[f"power_{form}"], omega0, out["plateau_top"]), reference)
        return out


def _plateau(w, power, omega0):
    """Mask of the compared plateau (see :data:`FIRST_ORDER`, :data:`PLATEAU_DECADES`)."""
    above = w >= FIRST_ORDER * omega0
    if not above.any() or not np.any(power[above] > 0):
        return np.zeros_like(w, dtype=bool)
    level = np.max(power[above]) * 10.0 ** -PLATEAU_DECADES
    top = w[above][power[above] >= level].max()
    return above & (w <= top) & (power > 0)


def _per_order(w, power, omega0, top):
    """Power summed over each harmonic order k (|w - k w0| < w0 / 2) from FIRST_ORDER to ``top``."""
    if not math.isfinite(top):
        return np.zeros(0)
    orders = np.arange(math.ceil(FIRST_ORDER), math.floor(top / omega0) + 1)
    index = np.rint(w / omega0)
    return np.array([power[index == k].sum() for k in orders])


def _log_rms(power, reference) -> float:
    good = (power > 0) & (reference > 0)
    if not good.any():
        return math.nan
    return float(np.sqrt(np.mean(np.log10(power[good] / reference[good]) ** 2)))
