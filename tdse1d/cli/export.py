"""``tdse1d export RESULT.h5 --what SPECTRUM --units eV|au|nm [-o FILE.csv]``: a spectrum as CSV.

The first line names the columns with their units, e.g.
``photon_energy [eV],harmonic_order [1],power [a.u.]``; the data follow, one row per
sample, comma-separated. Each spectrum is a small function in :data:`SPECTRA` that
returns named columns in atomic units; the unit choice converts the energy column
(``au``: hartree, ``eV``, or ``nm``: photon wavelength, for photon spectra only).
"""

from __future__ import annotations

import math
import sys

import numpy as np

from .. import units
from ..input.spec import InputError

HELP = "write a spectrum (harmonic, photoelectron, time-frequency) to CSV"


def _harmonic(f):
    g = f["spectra/harmonic"]
    return "photon", [("photon_energy", g["frequency"][()], "energy"), ("harmonic_order", g["order"][()], "1"),
                      ("power", g["power"][()], "a.u.")]


def _photoelectron(f):
    for method in ("surface_flux", "mask", "plane_wave"):
        key = f"spectra/photoelectron/{method}"
        if key in f:
            g = f[key]
            return "electron", [
                ("kinetic_energy", g["energy"][()], "energy"),
                ("momentum", g["momentum"][()], "a.u."),
                ("dP/dE_left", g["energy_density_left"][()], "1/energy"),
                ("dP/dE_right", g["energy_density_right"][()], "1/energy"),
                ("dP/dp_left", g["density_left"][()], "a.u."),
                ("dP/dp_right", g["density_right"][()], "a.u."),
            ]
    raise InputError("the file holds no photoelectron spectrum", "--what")


def _time_frequency(f):
    if "spectra/time_frequency" not in f:
        raise InputError("the file holds no time-frequency map (written by runs of this version on)", "--what")
    g = f["spectra/time_frequency"]
    t, w, p = g["time"][()], g["frequency"][()], g["power"][()]
    tt, ww = np.meshgrid(t, w, indexing="ij")
    return "photon", [("time", tt.ravel(), "time"), ("photon_energy", ww.ravel(), "energy"),
                      ("power", p.ravel(), "a.u.")]


#: spectrum name -> function(open file) -> (kind of energy, [(column, values in a.u., dimension)])
SPECTRA = {"harmonic": _harmonic, "photoelectron": _photoelectron, "time-frequency": _time_frequency}


def _energy_unit(choice, kind):
    """(label, converter of an energy in hartree, converter of a density per hartree)."""
    if choice == "au":
        return "hartree", (lambda e: e), (lambda d: d)
    if choice == "eV":
        ev = units.HARTREE_EV
        return "eV", (lambda e: e * ev), (lambda d: d / ev)
    if choice == "nm":
        if kind != "photon":
            raise InputError("nm (photon wavelength) applies to photon spectra only", "--units")

        def wavelength(e):
            with np.errstate(divide="ignore"):
                return np.where(e > 0, units.omega_to_nm(np.where(e > 0, e, 1.0)), math.inf)

        return "nm", wavelength, None
    raise InputError(f"unknown units {choice!r}", "--units")


def columns(f, what, unit_choice):
    """Header names and data columns of a spectrum, converted to the chosen units."""
    kind, raw = SPECTRA[what](f)
    label, energy, per_energy = _energy_unit(unit_choice, kind)
    names, data = [], []
    for name, values, dim in raw:
        values = np.asarray(values, dtype=float)
        if dim == "energy":
            values, unit = energy(values), label
            if unit_choice == "nm":
                name = name.replace("photon_energy", "wavelength")
        elif dim == "1/energy":
            if per_energy is None:
                raise InputError("densities per energy cannot be given per nm", "--units")
            values, unit = per_energy(values), f"1/{label}"
        elif dim == "time":
            values, unit = units.au_to_fs(values), "fs"
        else:
            unit = dim
        names.append(f"{name} [{unit}]")
        data.append(values)
    return names, np.column_stack(data)


def add_arguments(parser):
    parser.add_argument("result", metavar="RESULT.h5", help="result file of `tdse1d run`")
    parser.add_argument("--what", choices=sorted(SPECTRA), default="harmonic", help="which spectrum (default harmonic)")
    parser.add_argument("--units", choices=("eV", "au", "nm"), default="eV",
                        help="unit of the energy column (nm: photon wavelength); default eV")
    parser.add_argument("-o", "--output", metavar="FILE.csv", default=None, help="output file (default: stdout)")


def main(args):
    from ..io.checked_open import open_result

    with open_result(args.result, kinds=("run",)) as f:
        names, data = columns(f, args.what, args.units)
    header = ",".join(names)
    if args.output is None:
        np.savetxt(sys.stdout, data, delimiter=",", header=header, comments="", fmt="%.10g")
    else:
        np.savetxt(args.output, data, delimiter=",", header=header, comments="", fmt="%.10g")
        print(f"wrote {args.output} ({data.shape[0]} rows)")
    return 0
