"""The summary rows of a scan's SFA rung, group ``/sfa`` of ``summary.h5`` (a part of
:mod:`tdse1d.io.layout_tables`, which imports it; kept apart so that each module stays
short). Written by :mod:`tdse1d.scans.sfa_summary`."""

from __future__ import annotations

from .layout_tables import Entry, _entries

SFA_SCAN = "a scan whose plan asks for the SFA rung (rungs), or whose directory holds SFA point files"
_SFA_SCAN_ROWS = (
    Entry("sfa@description", "text", "what the group holds", when=SFA_SCAN),
    *_entries("sfa", SFA_SCAN, (
        ("complete", "1", "the point has a finished SFA file (points/<hash>.sfa.h5)", "(points,)"),
        ("resolved", "1", "the SFA cutoff reading is resolved", "(points,)"),
        ("cutoff_energy_eV", "eV", "harmonic cutoff read off the SFA spectrum by the run's rule "
                                   "(sfa/harmonic/cutoff_energy of the point's SFA file; NaN: unresolved)", "(points,)"),
        ("cutoff_uncertainty_eV", "eV", "half width of that reading: one harmonic order", "(points,)"),
        ("orbit_cutoff_eV", "eV", "quantum-orbit cutoff of the strongest half cycle", "(points,)"),
        ("law_eV", "eV", "Ip F(Ip/Up) + 3.17 Up at the point's Up: the quantum-orbit cutoff of a "
                         "monochromatic field (Lewenstein 1994; tdse1d.semiclassical.sfa_orbits.cutoff_law)",
         "(points,)"),
        ("ponderomotive_energy_eV", "eV", "Up of the first pulse of each point", "(points,)"),
        ("local_ponderomotive_energy_eV", "eV", "Up of the strongest half cycle (its fitted A0^2 / 4)",
         "(points,)"),
        ("ionization_potential_eV", "eV", "Ip of the SFA's ground state (on the point's grid)", "(points,)"),
        ("photon_energy_eV", "eV", "carrier photon energy of each point", "(points,)"),
        ("wavelength_nm", "nm", "carrier wavelength of each point", "(points,)"),
        ("peak_intensity_W_cm2", "W/cm^2", "cycle-averaged peak intensity of each point", "(points,)"),
        ("seconds", "s", "wall time of the point's SFA", "(points,)"),
    )),
)
