"""The strong-field approximation in a result file: the ``sfa/`` group (declared in
:mod:`tdse1d.io.layout_tables`, ``SFA_LAYOUT``; docs/output.md) written by
:func:`write_sfa` and read back by :func:`read_sfa`.
"""

from __future__ import annotations

import math
from dataclasses import asdict

import numpy as np

from ..analysis.sfa import SfaReadings, SfaSpectra
from .result_file import write_dataset

__all__ = ["write_sfa", "read_sfa", "read_sfa_readings"]


def write_sfa(h5file, spectra: SfaSpectra, readings: SfaReadings) -> None:
    """Store :class:`SfaSpectra` and their :class:`SfaReadings` under ``sfa/`` of an open result file."""
    g = h5file.create_group("sfa")
    g.attrs["ionization_potential"] = spectra.ionization_potential
    g.attrs["ponderomotive_energy"] = spectra.ponderomotive_energy
    g.attrs["photon_energy"] = spectra.omega0
    if spectra.dipole is not None:
        g.attrs["time_step"] = float(spectra.dipole.time[1] - spectra.dipole.time[0])
        g.attrs["excursion_window"] = repr(asdict(spectra.dipole.window))
        h = g.create_group("harmonic")
        h.attrs["window"] = spectra.window
        write_dataset(h, "frequency", spectra.harmonic.frequency)
        write_dataset(h, "order", spectra.harmonic.order)
        write_dataset(h, "power", spectra.harmonic.power)
        write_dataset(h, "power_short", spectra.harmonic_short.power)
        write_dataset(h, "power_long", spectra.harmonic_long.power)
        write_dataset(h, "cutoff_energy", readings.cutoff, reason=readings.cutoff_reason)
        write_dataset(h, "cutoff_uncertainty", readings.cutoff_uncertainty)
    if spectra.orbits:
        o = g.create_group("orbits")
        write_dataset(o, "crest_time", np.array([h.crest_time for h in spectra.orbits]))
        write_dataset(o, "ponderomotive_energy", np.array([h.ponderomotive_energy for h in spectra.orbits]))
        write_dataset(o, "cutoff", np.array([h.cutoff for h in spectra.orbits]))
        write_dataset(o, "energy", spectra.orbits[0].energy)
        for name in ("emission_short", "emission_long", "ionization_short", "ionization_long"):
            write_dataset(o, name, np.array([getattr(h, name) for h in spectra.orbits]))
    pe = spectra.photoelectrons
    if pe is not None:
        p = g.create_group("photoelectron")
        for name in ("energy", "direct_left", "direct_right", "rescattered_left", "rescattered_right",
                     "total_left", "total_right"):
            write_dataset(p, name, getattr(pe, name))
        write_dataset(p, "direct_edge", readings.direct_edge)
        write_dataset(p, "backscattered_edge", readings.backscattered_edge)


def read_sfa(h5file) -> dict | None:
    """The ``sfa/`` group of an open result file as a dict of arrays (a.u.), or None.

    Keys: ``ionization_potential``, ``ponderomotive_energy``, ``photon_energy``, and
    where present ``harmonic`` (frequency, order, power, power_short, power_long,
    cutoff_energy, cutoff_uncertainty), ``orbits`` (the datasets of ``sfa/orbits``)
    and ``photoelectron`` (those of ``sfa/photoelectron``).
    """
    if "sfa" not in h5file:
        return None
    g = h5file["sfa"]
    out = {name: float(g.attrs[name]) for name in ("ionization_potential", "ponderomotive_energy",
                                                   "photon_energy")}
    for group in ("harmonic", "orbits", "photoelectron"):
        if group in g:
            out[group] = {name: (np.asarray(d[()]) if d.shape else float(d[()])) for name, d in g[group].items()}
    h = out.get("harmonic")
    if h is not None:
        h["cutoff_reason"] = str(g["harmonic/cutoff_energy"].attrs.get("reason", ""))
        h["resolved"] = math.isfinite(h["cutoff_energy"])
    return out


def read_sfa_readings(h5file) -> SfaReadings | None:
    """The :class:`SfaReadings` stored in an open result file, or None without ``sfa/``.

    The emission times are those of the half cycle with the largest local Up, as
    :func:`tdse1d.analysis.sfa.sfa_readings` chooses them.
    """
    sfa = read_sfa(h5file)
    if sfa is None:
        return None
    nan = math.nan
    h = sfa.get("harmonic", {})
    pe = sfa.get("photoelectron", {})
    o = sfa.get("orbits")
    energy = short = long_ = np.zeros(0)
    crest = orbit_cutoff = nan
    if o is not None and np.size(o["crest_time"]):
        k = int(np.argmax(o["ponderomotive_energy"]))
        crest, orbit_cutoff = float(o["crest_time"][k]), float(o["cutoff"][k])
        energy, short, long_ = o["energy"], o["emission_short"][k], o["emission_long"][k]
    return SfaReadings(float(h.get("cutoff_energy", nan)), float(h.get("cutoff_uncertainty", nan)), orbit_cutoff,
                       float(pe.get("direct_edge", nan)), float(pe.get("backscattered_edge", nan)),
                       energy, short, long_, crest, h.get("cutoff_reason", "no harmonic spectrum"))
