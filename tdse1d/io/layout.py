"""The layout of the files tdse1d writes, declared once, as data.

Every dataset and attribute of a run's result file (:data:`RESULT_LAYOUT`) and of a
scan's ``summary.h5`` (:data:`SUMMARY_LAYOUT`; both in :mod:`tdse1d.io.layout_tables`) is one :class:`Entry`: its path, its
unit, a one-line description, its shape in words and when it is present. The writers
take the unit and the description from here (:func:`tdse1d.io.result_file.write_dataset`
refuses a dataset that is not declared), the readers take their paths from here, and
the tables of ``docs/output.md`` and ``docs/scans.md`` are generated from here
(:mod:`tdse1d.io.layout_check`, which also checks a file against its layout).

Paths are written without the leading slash: ``group/name`` is a dataset,
``group@name`` an attribute of a group or dataset, ``@name`` a root attribute.
``{method}`` and ``{i}`` stand for a photoelectron method and an index.

Units are stated here, never implied by the kind of file: a quantity in eV carries
``_eV`` in its name (as ``peak_intensity_W_cm2`` carries its unit), so one path means
one unit in every file. Files written before a rename are still read: :data:`RENAMED`
maps each old path to its new one, and :func:`find` looks for either.
"""

from __future__ import annotations

import re

from .layout_tables import (ALWAYS, DESCRIPTION_ATTR, RESULT_LAYOUT, SUMMARY_LAYOUT, UNITS_ATTR, VARIABLE_UNIT,
                            Entry)

__all__ = ["Entry", "RESULT_LAYOUT", "SUMMARY_LAYOUT", "RENAMED", "ALWAYS", "entry", "find", "declared",
           "path", "group_of", "UNITS_ATTR", "DESCRIPTION_ATTR", "VARIABLE_UNIT"]

#: old path -> new path, for files written before a rename (readers use :func:`find`)
RENAMED: dict[str, str] = {
    "@order": "@splitting_order",
    "spectra/harmonic@cutoff_frequency": "spectra/harmonic@cutoff_energy",
    # summary.h5: quantities in eV carry _eV; the tunnelling yield has the run file's name
    "spectra/photon_energy": "spectra/photon_energy_eV",
    "cutoff/spectrum": "cutoff/cutoff_energy_eV",
    "cutoff/semiclassical": "cutoff/semiclassical_eV",
    "cutoff/lewenstein": "cutoff/lewenstein_eV",
    "estimates/ponderomotive_energy": "estimates/ponderomotive_energy_eV",
    "estimates/ionization_potential": "estimates/ionization_potential_eV",
    "estimates/photon_energy": "estimates/photon_energy_eV",
    "estimates/peak_intensity": "estimates/peak_intensity_W_cm2",
    "ionization/tunnelling_estimate": "ionization/tunnelling_yield",
    "photoelectron/cutoff": "photoelectron/cutoff_energy_eV",
    "photoelectron/direct_edge": "photoelectron/direct_edge_eV",
    "photoelectron/backscattered_edge": "photoelectron/backscattered_edge_eV",
    "photoelectron/direct_drift": "photoelectron/direct_drift_eV",
    "photoelectron/backscattered_drift": "photoelectron/backscattered_drift_eV",
}


def _pattern(path: str) -> re.Pattern:
    return re.compile("^" + re.sub(r"\\\{[a-z]+\\\}", "[^/@]+", re.escape(path)) + "$")


_COMPILED: dict[int, list] = {}


def entry(path: str, layout: tuple[Entry, ...] = RESULT_LAYOUT) -> Entry:
    """The entry declaring ``path`` (placeholders matched).

    Parameters
    ----------
    path : str
        ``group/name``, ``group@name`` or ``@name``; a leading slash is ignored.
    layout : tuple of Entry

    Returns
    -------
    Entry

    Raises
    ------
    KeyError
        ``path`` is not declared.
    """
    table = _COMPILED.get(id(layout))
    if table is None:  # (setdefault would compile every pattern on every call)
        table = _COMPILED[id(layout)] = [(_pattern(e.path), e) for e in layout]
    key = path.lstrip("/")
    for pattern, e in table:
        if pattern.match(key):
            return e
    raise KeyError(f"{path!r} is not declared in tdse1d.io.layout; declare it there (path, unit, description)")


def declared(path: str, layout: tuple[Entry, ...] = RESULT_LAYOUT) -> bool:
    """True if ``path`` is declared in ``layout``."""
    try:
        entry(path, layout)
    except KeyError:
        return False
    return True


_TEMPLATES = frozenset(e.path for e in RESULT_LAYOUT + SUMMARY_LAYOUT)


def path(template: str, **fields) -> str:
    """A declared path for a reader, its placeholders filled.

    Parameters
    ----------
    template : str
        A path as declared in :data:`RESULT_LAYOUT` or :data:`SUMMARY_LAYOUT`,
        e.g. ``"spectra/photoelectron/{method}/energy"``.
    **fields
        Values of the placeholders, e.g. ``method="surface_flux"``.

    Returns
    -------
    str

    Raises
    ------
    KeyError
        ``template`` is not declared (a reader asking for a path no writer writes).
    """
    if template not in _TEMPLATES:
        raise KeyError(f"{template!r} is not declared in tdse1d.io.layout")
    return template.format(**fields) if fields else template


def group_of(template: str, **fields) -> str:
    """The group holding the declared dataset or attribute ``template`` (see :func:`path`)."""
    p = path(template, **fields)
    return p.split("@")[0] if "@" in p else p.rpartition("/")[0]


def find(f, path: str):
    """The dataset (or attribute value) at ``path`` in an open file, or at its old name.

    Parameters
    ----------
    f : h5py.File
    path : str
        A path of the current layout.

    Returns
    -------
    h5py.Dataset, h5py.Group, attribute value, or None when neither name is there.
    """
    olds = [old for old, new in RENAMED.items() if new == path]
    for key in (path, *olds):
        if "@" in key:
            where, name = key.split("@")
            obj = f[where] if where else f
            if where and where not in f:
                continue
            if name in obj.attrs:
                return obj.attrs[name]
        elif key in f:
            return f[key]
    return None
