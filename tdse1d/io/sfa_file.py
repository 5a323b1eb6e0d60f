"""The strong-field approximation in a result file: the ``sfa/`` group (declared in
:mod:`tdse1d.io.layout_tables`, ``SFA_LAYOUT``; docs/output.md) written by
:func:`write_sfa` and read back by :func:`read_sfa`; and the file of the SFA rung of a
scan point (:func:`write_sfa_point`, root attribute ``kind = "sfa-point"``): the input,
the estimates of its pulse and that ``sfa/`` group, written under a lock as
``NAME.part`` and renamed when complete, as a run's result file is.
"""

from __future__ import annotations

import math
from dataclasses import asdict
from pathlib import Path

import h5py
import numpy as np

from .. import __version__
from ..analysis.sfa import SfaReadings, SfaSpectra, sfa_cutoff_family
from ..errors import OutputError
from ..semiclassical.estimates import as_attributes
from .guarded_file import COMPLETE_ATTR, PART_SUFFIX, GuardedFile, WriterLock, lock_path
from .result_file import GuardedWriting, refuse_reason, write_dataset

__all__ = ["write_sfa", "read_sfa", "read_sfa_readings", "write_sfa_point", "SFA_POINT_KIND"]

#: root attribute ``kind`` of the file of a scan point's SFA rung
SFA_POINT_KIND = "sfa-point"


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
    family = None
    if "frequency" in h and "power" in h:
        # read off the stored spectrum (milliseconds), as the report reads the run's own
        # cutoff afresh off its stored spectrum: both then follow the same family
        family = sfa_cutoff_family(h["frequency"], h["power"], sfa["photon_energy"], sfa["ionization_potential"],
                                   sfa["ponderomotive_energy"])
    return SfaReadings(float(h.get("cutoff_energy", nan)), float(h.get("cutoff_uncertainty", nan)), orbit_cutoff,
                       float(pe.get("direct_edge", nan)), float(pe.get("backscattered_edge", nan)),
                       energy, short, long_, crest, h.get("cutoff_reason", "no harmonic spectrum"), family)


def write_sfa_point(path, problem, spectra: SfaSpectra, readings: SfaReadings) -> None:
    """Write the file of a scan point's SFA rung: the root attributes ``kind``
    (:data:`SFA_POINT_KIND`), ``input`` (the resolved input), ``input_source``,
    ``tdse1d_version``, ``complete``; the group ``estimates`` (the attributes of the
    first pulse, as in a run's file); ``sfa/`` (:func:`write_sfa`).

    Parameters
    ----------
    path : path
        Final name; the data go to ``path + ".part"``, renamed when complete.
    problem : tdse1d.input.problem.Problem
        The point's problem (its input and pulse estimates).
    spectra, readings
        Its SFA (:func:`tdse1d.analysis.sfa.sfa_spectra`, :func:`~tdse1d.analysis.sfa.sfa_readings`).

    Raises
    ------
    tdse1d.errors.OutputBusy
        Another process writes the same file.
    """
    with _SfaPointWriter(path) as writer:
        f, cfg = writer.file, problem.config
        f.attrs["kind"] = SFA_POINT_KIND
        f.attrs["input"] = cfg.resolved_toml
        f.attrs["input_source"] = str(cfg.source)
        f.attrs["tdse1d_version"] = __version__
        est = f.create_group("estimates")
        if problem.pulse_estimates:
            for k, v in as_attributes(problem.pulse_estimates[0]).items():
                est.attrs[k] = v
        write_sfa(f, spectra, readings)
        writer.check()
        writer._finish()


class _SfaPointWriter(GuardedWriting):
    """The lock, ``.part`` file and rename of :func:`write_sfa_point` (those of a run's file)."""

    def __init__(self, path):
        self.path = Path(path)
        self.part = self.path.with_name(self.path.name + PART_SUFFIX)
        reason = refuse_reason(self.path)
        if reason is not None:
            raise OutputError(reason)
        self.file = self._raw = None
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self.lock = WriterLock(lock_path(self.path), what=str(self.path), purpose="tdse1d scan (SFA)").acquire()
        try:
            self.part.unlink(missing_ok=True)  # we hold the lock: a .part here was left by a writer that died
            self._raw = GuardedFile.create(self.part, exclusive=True)
            self.file = h5py.File(self._raw, "w")
            self.file.attrs[COMPLETE_ATTR] = False
        except BaseException:
            self.abort()
            raise
