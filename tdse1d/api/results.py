"""The library functions on a run file: :func:`report` (the semiclassical prediction
beside the quantum result) and :func:`export` (a spectrum as a table with units); the
figures are in :mod:`tdse1d.api.figures`. The commands ``tdse1d report`` and ``tdse1d
export`` parse their arguments, call one of these, and render what it returns.

Tables: each spectrum is a small function in :data:`SPECTRA` that returns named columns
in atomic units; the unit choice converts the energy column (``au``: hartree, ``eV``,
or ``nm``: photon wavelength, for photon spectra only).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .. import units
from ..input.spec import InputError

__all__ = ["report", "export", "Report", "Table", "SPECTRA", "columns"]


# ------------------------------------------------------------------------ report


@dataclass(frozen=True)
class Report:
    """Each semiclassical prediction beside the quantum result of one run file, with the
    quantum value's uncertainty and a verdict.

    ``rows`` are :class:`tdse1d.analysis.report.Row` (quantity, key, prediction, source,
    quantum, uncertainty, unit, verdict, note; values in atomic units); ``str(report)``
    is the table ``tdse1d report`` prints, :meth:`to_json` what ``tdse1d report --json``
    prints.
    """

    path: Path
    analysis: object = field(repr=False)
    target_ionization_potential: float = math.nan
    """The ionization potential the input asked for (hartree); NaN if none."""
    ionization_note: str = ""
    ionization_band: tuple | None = None
    """The band of the bound-state count of P_ion, ``/ionization/probability_band``."""
    numerical: dict = field(default_factory=dict, repr=False)
    """Quantity key -> numerical uncertainty (atomic units) from companion runs."""
    not_converged: dict = field(default_factory=dict, repr=False)
    """Quantity key -> "not converged: enlarge <parameter>"."""
    sfa: object = field(default=None, repr=False)
    """The SFA readings stored in the file (:class:`tdse1d.analysis.sfa.SfaReadings`), or
    None for a run without ``spectra.sfa``: then the report has no SFA column."""
    orbits: dict | None = field(default=None, repr=False)
    """The stored quantum orbits (``sfa/orbits``, a.u.), or None."""
    derived: dict = field(default_factory=dict, repr=False)
    """Derived spectrum name -> its stored readings (:mod:`tdse1d.spectra.derived`)."""

    @property
    def rows(self) -> list:
        from ..analysis.report import rows

        return rows(self.analysis, self.target_ionization_potential, self.ionization_note, self.ionization_band,
                    self.numerical, self.not_converged, self.sfa, self.orbits, self.derived)

    def to_json(self) -> dict:
        """The rows for machines: atomic units, energies also in eV, times also in fs and cycles."""
        from ..analysis.report import to_json

        return to_json(self.rows, self.analysis, sfa_column=self.sfa is not None)

    def table(self) -> str:
        """The rows as plain text for people."""
        from ..analysis.report import format_table

        return format_table(self.rows, self.analysis, sfa_column=self.sfa is not None)

    __str__ = table

    def __repr__(self) -> str:
        table = self.rows
        words = [r.verdict for r in table if r.verdict]
        counts = ", ".join(f"{words.count(w)} {w}" for w in ("agrees", "deviates", "unresolved") if w in words)
        return f"<Report {Path(self.path).name}: {len(table)} rows ({counts or 'no verdicts'})>"


def _numerical_uncertainties(path) -> tuple[dict, dict]:
    """Numerical uncertainties of a run file's quantities, and the ones not converged.

    Returns
    -------
    (dict, dict)
        Quantity key -> absolute spread (atomic units), and quantity key -> "not
        converged: enlarge <parameter>" (:func:`tdse1d.io.certification_file.read_numerical_uncertainties`);
        both empty for a file that was not certified (``tdse1d run --certify``).
    """
    from ..io.certification_file import read_numerical_uncertainties

    return read_numerical_uncertainties(path)


def _derived_readings(f) -> dict:
    """Derived spectrum name -> its readings as the file stores them (group attributes)."""
    from ..spectra.derived import DERIVED_SPECTRA

    return {name: {c.name: float(f[f"spectra/{name}"].attrs[c.name]) for c in spectrum.readings_declared
                   if c.name in f[f"spectra/{name}"].attrs}
            for name, spectrum in DERIVED_SPECTRA.items() if f"spectra/{name}" in f}


def report(path):
    """Each semiclassical prediction beside the quantum result of a run (``tdse1d report``).

    Parameters
    ----------
    path : path
        Result file of a run.

    Returns
    -------
    Report or tdse1d.analysis.pair_report.PairReport
        Rows of quantity, key, prediction and its source, quantum value, combined
        uncertainty, unit (atomic units), verdict (agrees, deviates, unresolved) and
        note; the table and JSON show eV, fs, cycles and harmonic orders too. A file
        with SFA spectra (``spectra.sfa = true``) adds the SFA column: each row's SFA
        value and uncertainty and which rung (classical, SFA, run) deviates. A run of the
        two-electron atom gives a ``PairReport``: the double-to-single ratio and the
        yields against the sequential estimate, 3.17 Up against the ion's Ip.
    """
    from ..io.analysis_file import (analyse_file, ionization_band, ionization_note,
                                    target_ionization_potential)
    from ..io.checked_open import open_result
    from ..io.pair_result_file import is_pair_result, read_pair_record
    from ..io.sfa_file import read_sfa, read_sfa_readings

    with open_result(path, kinds=("run",)) as f:
        if is_pair_result(f):  # a run of the two-electron atom: its own rows (analysis/pair_report.py)
            from ..analysis.pair_report import PairReport

            return PairReport(Path(path), read_pair_record(f))
        analysis = analyse_file(f)
        target = target_ionization_potential(f.attrs.get("input", ""))
        note = ionization_note(f["ionization"]) if "ionization" in f else ""
        band = ionization_band(f["ionization"]) if "ionization" in f else None
        converged = bool(f["ionization"].attrs.get("converged", True)) if "ionization" in f else True
        sfa = read_sfa_readings(f)
        orbits = (read_sfa(f) or {}).get("orbits")
        derived = _derived_readings(f)
    numerical, not_converged = _numerical_uncertainties(path)
    if not converged:  # the run's own check of the bound-state count (docs/analysis.md)
        not_converged.setdefault("ionization_probability", "not converged: enlarge the box (grid.points with "
                                                           "absorber.width)")
    return Report(Path(path), analysis, target, note, band, numerical, not_converged, sfa, orbits, derived)


# ------------------------------------------------------------------------ tables


def _harmonic_columns(f):
    g = f["spectra/harmonic"]
    return "photon", [("photon_energy", g["frequency"][()], "energy"), ("harmonic_order", g["order"][()], "1"),
                      ("power", g["power"][()], "a.u.")]


def _photoelectron_columns(f):
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


def _time_frequency_columns(f):
    if "spectra/time_frequency" not in f:
        raise InputError("the file holds no time-frequency map (written by runs of this version on)", "--what")
    g = f["spectra/time_frequency"]
    t, w, p = g["time"][()], g["frequency"][()], g["power"][()]
    tt, ww = np.meshgrid(t, w, indexing="ij")
    return "photon", [("time", tt.ravel(), "time"), ("photon_energy", ww.ravel(), "energy"),
                      ("power", p.ravel(), "a.u.")]


def _derived_columns(name):
    """The columns of the registered derived spectrum ``name`` (:mod:`tdse1d.spectra.derived`)."""
    from ..spectra.derived import DERIVED_SPECTRA

    def columns_of(f):
        spectrum = DERIVED_SPECTRA[name]
        if f"spectra/{name}" not in f:
            raise InputError(f"the file holds no {name} spectrum (written by runs since it was registered)", "--what")
        g = f[f"spectra/{name}"]
        dimension = {"hartree": "energy", "atomic_unit_of_time": "time"}
        return "photon", [(c.name, g[c.name][()], dimension.get(c.unit, "a.u."))
                          for c in (spectrum.axis, *spectrum.columns)]

    return columns_of


def _yield_columns(f):
    from ..analysis.pair_report import yield_columns
    from ..io.pair_result_file import is_pair_result, read_pair_record

    if not is_pair_result(f):
        raise InputError("yields are the two-electron atom's (neutral, single, double); this is a run of one "
                         "electron", "--what")
    return "yield", yield_columns(read_pair_record(f))


#: what a run of the two-electron atom offers to export
PAIR_SPECTRA = ("yields", "harmonic")


def _spectra():
    from ..spectra.derived import DERIVED_SPECTRA

    return {"harmonic": _harmonic_columns, "photoelectron": _photoelectron_columns, "yields": _yield_columns,
            "time-frequency": _time_frequency_columns,
            **{name.replace("_", "-"): _derived_columns(name) for name in DERIVED_SPECTRA}}


#: spectrum name -> function(open file) -> (kind of energy, [(column, values in a.u., dimension)]);
#: the registered derived spectra (tdse1d.spectra.derived) are named with hyphens
SPECTRA = _spectra()


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
    """Header names (``"column [unit]"``) and data columns of a spectrum of the open run
    file ``f``, converted to the chosen units (``eV``, ``au`` or ``nm``)."""
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


@dataclass(frozen=True)
class Table:
    """A spectrum as columns with units: ``names`` are ``"column [unit]"``, ``data`` has
    one row per sample. :meth:`write` writes the CSV ``tdse1d export`` writes."""

    what: str
    names: list
    data: np.ndarray = field(repr=False)
    path: Path | None = None
    """The CSV file written, if any."""

    @property
    def header(self) -> str:
        return ",".join(self.names)

    def column(self, name: str) -> np.ndarray:
        """The column whose name (without its unit) is ``name``."""
        bare = [n.split(" [")[0] for n in self.names]
        return self.data[:, bare.index(name)]

    def write(self, file) -> None:
        """Write the CSV (header line, then comma-separated rows) to a path or an open text file."""
        np.savetxt(file, self.data, delimiter=",", header=self.header, comments="", fmt="%.10g")

    def __repr__(self) -> str:
        where = f" -> {self.path}" if self.path is not None else ""
        return f"<Table {self.what}: {self.data.shape[0]} rows, {self.header}{where}>"[:300]


def export(path, what: str = "harmonic", units: str = "eV", output=None) -> Table:
    """A spectrum of a run file as a table with units, written as CSV if asked (``tdse1d export``).

    Parameters
    ----------
    path : path
        Result file of a run.
    what : str
        A spectrum of :data:`SPECTRA`: harmonic, photoelectron or time-frequency; for a
        run of the two-electron atom ``yields`` (the neutral, single and double
        yields through the run at each region radius, and the sequential estimate) or
        harmonic.
    units : str
        Unit of the energy column: ``eV``, ``au`` (hartree) or ``nm`` (photon wavelength;
        photon spectra only). Times are in fs, other columns in atomic units.
    output : path, optional
        CSV file to write.

    Returns
    -------
    Table
        Column names with units and the data; ``path`` is the written file or None.
    """
    from ..io.checked_open import open_result

    if what not in SPECTRA:
        raise InputError(f"unknown spectrum {what!r}; choose from {', '.join(sorted(SPECTRA))}", "--what")
    with open_result(path, kinds=("run",)) as f:
        from ..io.pair_result_file import is_pair_result

        if is_pair_result(f) and what not in PAIR_SPECTRA:
            raise InputError(f"a run of the two-electron atom offers {' and '.join(PAIR_SPECTRA)}, not {what!r}",
                             "--what")
        names, data = columns(f, what, units)
    table = Table(what, names, data)
    if output is None:
        return table
    from ..io.guarded_file import replaced_when_written

    with replaced_when_written(output) as tmp:  # an interrupted table leaves the earlier one
        table.write(tmp)
    return Table(what, names, data, Path(output))
