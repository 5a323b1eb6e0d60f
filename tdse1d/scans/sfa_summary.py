"""The SFA rung in ``summary.h5`` (group ``/sfa``): per point of the plan, the harmonic
cutoff read off the SFA spectrum, the quantum-orbit cutoff, the law ``Ip F(Ip/Up) +
3.17 Up`` (Lewenstein et al., Phys. Rev. A 49, 2117 (1994)) at the point's Up, and the
point's Up, Ip, intensity and wavelength, all from the point's SFA file
(:func:`tdse1d.io.sfa_file.write_sfa_point`), so that the SFA of a plan stands beside
its runs without any run. Points without a finished SFA file are rows of NaN with
``/sfa/complete`` False.
"""

from __future__ import annotations

import json
import math

import h5py
import numpy as np

from .. import units
from ..io.layout import SUMMARY_LAYOUT
from ..io.result_file import write_dataset
from ..io.sfa_file import read_sfa
from ..semiclassical.sfa_orbits import cutoff_law

__all__ = ["read_sfa_point", "write_sfa_group", "SFA_COLUMNS"]

#: the /sfa datasets of one point: name -> (key of read_sfa_point, factor to the dataset's unit)
SFA_COLUMNS = {
    "cutoff_energy_eV": ("cutoff", units.HARTREE_EV),
    "cutoff_uncertainty_eV": ("cutoff_uncertainty", units.HARTREE_EV),
    "orbit_cutoff_eV": ("orbit_cutoff", units.HARTREE_EV),
    "law_eV": ("law", units.HARTREE_EV),
    "ponderomotive_energy_eV": ("ponderomotive_energy", units.HARTREE_EV),
    "local_ponderomotive_energy_eV": ("local_ponderomotive_energy", units.HARTREE_EV),
    "ionization_potential_eV": ("ionization_potential", units.HARTREE_EV),
    "photon_energy_eV": ("photon_energy", units.HARTREE_EV),
    "wavelength_nm": ("wavelength_nm", 1.0),
    "peak_intensity_W_cm2": ("peak_intensity_W_cm2", 1.0),
    "seconds": ("seconds", 1.0),
}


def read_sfa_point(path, record_path=None) -> dict:
    """The numbers of one point's SFA file (hartree; see :data:`SFA_COLUMNS`), with its
    wall time from the record beside it (NaN without one)."""
    with h5py.File(path, "r") as f:
        sfa = read_sfa(f)
        intensity = float(f["estimates"].attrs.get("peak_intensity_W_cm2", math.nan))
    h, o = sfa.get("harmonic", {}), sfa.get("orbits")
    ip, up, w = sfa["ionization_potential"], sfa["ponderomotive_energy"], sfa["photon_energy"]
    orbit_cutoff = local_up = math.nan
    if o is not None and np.size(o["crest_time"]):
        k = int(np.argmax(o["ponderomotive_energy"]))  # the strongest half cycle, as the readings take it
        orbit_cutoff, local_up = float(o["cutoff"][k]), float(o["ponderomotive_energy"][k])
    seconds = math.nan
    if record_path is not None:
        try:
            seconds = float(json.loads(open(record_path, encoding="utf-8").read()).get("seconds", math.nan))
        except (OSError, ValueError):
            pass
    return {"cutoff": float(h.get("cutoff_energy", math.nan)),
            "cutoff_uncertainty": float(h.get("cutoff_uncertainty", math.nan)),
            "resolved": bool(h.get("resolved", False)),
            "orbit_cutoff": orbit_cutoff, "law": cutoff_law(ip, up) if ip > 0 and up > 0 else math.nan,
            "ponderomotive_energy": up, "local_ponderomotive_energy": local_up, "ionization_potential": ip,
            "photon_energy": w, "wavelength_nm": float(units.omega_to_nm(w)), "peak_intensity_W_cm2": intensity,
            "seconds": seconds}


def write_sfa_group(f, plan, directory) -> int:
    """Write ``/sfa`` into an open summary from the points' SFA files.

    Parameters
    ----------
    f : h5py.File
        The summary being written.
    plan : tdse1d.scans.plan.ScanPlan
    directory : tdse1d.scans.directory.ScanDirectory

    Returns
    -------
    int
        Points with a finished SFA file.
    """
    rows = [read_sfa_point(directory.result(p, "sfa"), directory.record(p, "sfa"))
            if directory.state(p, "sfa") == "done" else None for p in plan.points]
    g = f.create_group("sfa")
    g.attrs["description"] = ("the strong-field approximation of each point's input (harmonic spectrum and "
                              "quantum orbits, no run; docs/sfa.md), cutoffs against its Up")
    write_dataset(g, "complete", np.array([r is not None for r in rows]), layout=SUMMARY_LAYOUT)
    write_dataset(g, "resolved", np.array([bool(r and r["resolved"]) for r in rows]), layout=SUMMARY_LAYOUT)
    for name, (key, factor) in SFA_COLUMNS.items():
        write_dataset(g, name, np.array([r[key] * factor if r is not None else math.nan for r in rows], float),
                      layout=SUMMARY_LAYOUT)
    return sum(r is not None for r in rows)
