"""Spectra derived from a run's recorded series, each a small registered class.

A derived spectrum is computed after the run from the series the result file holds
(``time``, ``dipole``, ``momentum``, ``acceleration``, ``norm`` of ``/observables`` and
``electric``, ``vector_potential`` of ``/field``), written under ``/spectra/{name}/``,
drawn by ``tdse1d plot --what {name}``, tabulated by ``tdse1d export --what {name}``, and
its readings are rows of ``tdse1d report``. The result-file table
(:mod:`tdse1d.io.layout_tables`), the writer, the figures, the export and the report all
read :data:`DERIVED_SPECTRA`; adding a spectrum is one class in one module of this
package plus its name in :data:`BUILT_IN` (DEVELOPERS.md, "A new spectrum shown by
report, plot and export").

Contract for an implementer of :class:`DerivedSpectrum`:

* ``title`` (one line, for the figure and the docs), ``axis`` (the x column) and
  ``columns`` (the y columns), each a :class:`Column` with name, unit and description
  as the result file states them (units as in :mod:`tdse1d.io.layout_tables`);
* ``readings_declared``: the numbers read off the spectrum (:class:`Column`s), written as
  attributes of the group and shown by the report (NaN: not read);
* ``compute(series, omega0, window)`` returns a dict with the axis and every column
  (1-D arrays of one length) and every reading (floats). Pure numerics: no file, no print.
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ..registry import registrar

__all__ = ["Column", "DerivedSpectrum", "DERIVED_SPECTRA", "register_derived_spectrum", "BUILT_IN", "SERIES"]

#: the series a derived spectrum may use (names as in the result file)
SERIES = ("time", "dipole", "momentum", "acceleration", "norm", "electric", "vector_potential")


@dataclass(frozen=True)
class Column:
    """One named quantity of a derived spectrum (unit as the result file writes it)."""

    name: str
    unit: str
    description: str


class DerivedSpectrum:
    """Base class of derived spectra (contract in the module docstring)."""

    name = "?"
    title = "?"
    axis: Column
    columns: tuple[Column, ...] = ()
    readings_declared: tuple[Column, ...] = ()

    def compute(self, series: Mapping[str, np.ndarray], omega0: float, window: str) -> dict:  # pragma: no cover
        """Axis, columns and readings from the run's ``series`` (atomic units).

        Parameters
        ----------
        series : mapping of str to ndarray
            The recorded series named in :data:`SERIES`, on the recorded time axis.
        omega0 : float
            Carrier frequency of the first pulse (hartree).
        window : str
            The run's spectral window (``spectra.window`` of the input).

        Returns
        -------
        dict
            ``axis.name`` and each column name -> 1-D array; each reading name -> float.
        """
        raise NotImplementedError


DERIVED_SPECTRA: dict[str, type[DerivedSpectrum]] = {}
register_derived_spectrum = registrar(DERIVED_SPECTRA)

#: the modules of this package that register the shipped derived spectra
BUILT_IN = ("dipole_forms_spectrum",)

for _module in BUILT_IN:
    importlib.import_module(f"{__package__}.{_module}")
