"""The analysis of a result file (:func:`analyse_file`, recomputed from the stored arrays)
and its storage in one (:func:`write_analysis`).

:func:`analyse_file`
    From an open result file (h5py.File). The tunnelling estimate needs the potential,
    which the file does not hold; it is read from ``/classical/tunnelling`` if the run
    stored it, and left out (NaN) otherwise.
:func:`write_analysis`
    Store a :class:`~tdse1d.analysis.RunAnalysis` in a result file under
    ``/classical``, ``/spectra/time_frequency``, ``/spectra/photoelectron/edges`` and
    ``/streaking`` (every dataset has a ``units`` attribute).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from .. import units
from ..analysis.run_analysis import PHOTOELECTRON_METHOD_ORDER, RunAnalysis, _Inputs, _analyse, _pulse_rows
from .layout import group_of, path
from .result_file import write_dataset, write_fields


def _file_pulses(h5file):
    """Per-pulse rows rebuilt from the stored input (cheap: no bound states)."""
    from pathlib import Path

    from ..input.spec import InputError
    from ..input.schema import parse_input
    from ..input.spec import tomllib
    from ..input.problem import build_field

    source = str(h5file.attrs.get("input_source", "<string>"))
    try:
        config = parse_input(tomllib.loads(h5file.attrs["input"]), source, Path(source).parent)
        return _pulse_rows(build_field(config)), min(config.atom.initial_state)
    except (InputError, KeyError, tomllib.TOMLDecodeError):
        return (), 0


def _stored_floor(f):
    """The field-free companion stored by :func:`write_analysis`, None if absent."""
    if group_of("spectra/photoelectron/field_free/energy") not in f:
        return None
    return f[path("spectra/photoelectron/field_free/energy")][()], \
        f[path("spectra/photoelectron/field_free/energy_density")][()]


def analyse_file(h5file) -> RunAnalysis:
    """Analysis of a result file, from its stored arrays.

    Everything is recomputed except the tunnelling curve, which needs the potential
    and is taken from ``/classical/tunnelling`` (empty when the run did not store it).

    Parameters
    ----------
    h5file : h5py.File
        An open, complete result file.

    Returns
    -------
    RunAnalysis
    """
    f = h5file
    pulses, initial = _file_pulses(f)
    photo = {}
    for name in PHOTOELECTRON_METHOD_ORDER:
        key = group_of("spectra/photoelectron/{method}/energy", method=name)
        if key in f:
            g = f[key]
            photo[name] = (g["momentum"][()], g["density_left"][()], g["density_right"][()], g["energy"][()],
                           g["energy_density_left"][()] + g["energy_density_right"][()])
    harmonic = group_of("spectra/harmonic/power")
    h = f[harmonic] if harmonic in f else None
    analysis = _analyse(_Inputs(
        time=f[path("field/time")][()], electric=f[path("field/electric")][()],
        vector_potential=f[path("field/vector_potential")][()], acceleration=f[path("observables/acceleration")][()],
        energies=f[path("states/energy")][()], initial_state=initial,
        ionization_probability=float(f[path("ionization/probability")][()]),
        harmonic_frequency=h["frequency"][()] if h is not None else np.zeros(0),
        harmonic_power=h["power"][()] if h is not None else np.zeros(0),
        window=str(h.attrs.get("window", "hann")) if h is not None else "hann",
        pulses=pulses, photoelectrons=photo,
        estimate={k: float(v) for k, v in f[group_of("estimates@photon_energy")].attrs.items() if k != "units"},
        photoelectron_floor=_stored_floor(f),
    ))
    if group_of("classical/tunnelling/time") in f:
        analysis = replace(analysis, tunnelling_time=f[path("classical/tunnelling/time")][()],
                           tunnelling_probability=f[path("classical/tunnelling/probability")][()])
    return analysis


# --------------------------------------------------------------------------- HDF5



#: scalar results stored under /classical: attribute of RunAnalysis or of its
#: three-step summary -> (units, description)
_CLASSICAL_SCALARS = {
    "ionization_potential": ("hartree", "Ip of the initial state"),
    "ponderomotive_energy": ("hartree", "Up of the first pulse's peak field"),
    "keldysh_parameter": ("1", "sqrt(Ip / 2 Up)"),
    "barrier_suppression_field": ("atomic_unit_of_electric_field", "field at which the barrier top reaches E0"),
    "peak_field": ("atomic_unit_of_electric_field", "peak field of the first pulse"),
    "tunnelling_yield": ("1", "quasi-static WKB tunnelling probability at the end"),
}
_SUMMARY_SCALARS = {
    "max_return_energy": ("hartree", "largest return kinetic energy, three-step model"),
    "cutoff_energy": ("hartree", "Ip + largest return energy"),
    "cutoff_birth_time": ("atomic_unit_of_time", "birth time of the cutoff trajectory"),
    "cutoff_return_time": ("atomic_unit_of_time", "return time of the cutoff trajectory"),
    "max_direct_energy": ("hartree", "largest drift energy of direct electrons (2 Up)"),
    "max_backscattered_energy": ("hartree", "largest drift energy of backscattered electrons (10 Up)"),
}


def write_analysis(h5file, analysis: RunAnalysis) -> None:
    """Store a :class:`RunAnalysis` in an open result file (groups listed in the module docstring)."""
    f = h5file
    c = f.create_group("classical")
    c.attrs["notes"] = "\n".join(analysis.notes)
    for name, (units, text) in _CLASSICAL_SCALARS.items():
        write_dataset(c, name, float(getattr(analysis, name)))
    s = analysis.three_step
    if s is not None:
        for name, (units, text) in _SUMMARY_SCALARS.items():
            write_dataset(c, name, float(getattr(s, name)))
        tr = analysis.trajectories
        g = c.create_group("trajectories")
        write_fields(g, tr, ("birth_time", "return_time", "return_energy", "drift_momentum",
                             "backscattered_momentum"))
        b = c.create_group("branches")
        for branch in ("short", "long"):
            tables = getattr(s, f"{branch}_branch")
            stacked = np.concatenate(tables) if tables else np.zeros((0, 2))
            labels = np.concatenate([np.full(len(t), k) for k, t in enumerate(tables)]) if tables else np.zeros(0)
            write_dataset(b, f"{branch}_time", stacked[:, 0])
            write_dataset(b, f"{branch}_energy", stacked[:, 1])
            write_dataset(b, f"{branch}_half_cycle", labels.astype(int))
    if analysis.tunnelling_time.size:
        g = c.create_group("tunnelling")
        write_fields(g, analysis, {"time": "tunnelling_time", "probability": "tunnelling_probability"})
    cut = analysis.cutoff
    if cut is not None and analysis.harmonic_floor_log10 is not None:
        h = f.require_group("spectra/harmonic")
        write_dataset(h, "noise_floor_log10", analysis.harmonic_floor_log10)
        write_dataset(h, "cutoff_headroom", cut.headroom, resolved=bool(cut.resolved), reason=cut.reason)
    tf = analysis.time_frequency
    if tf is not None:
        g = f.create_group("spectra/time_frequency")
        g.attrs["window"] = "gaussian"
        write_fields(g, tf, ("time", "frequency", "power", "width"))
        em = analysis.emission
        if em is not None:
            e = g.create_group("emission")
            write_fields(e, em, ("half_cycle", "frequency", "quantum", "short", "long", "period"))
    if analysis.edges is not None or analysis.ponderomotive is not None:
        g = f.create_group("spectra/photoelectron/edges")
        g.attrs["method"] = analysis.photoelectron_method or ""
        if analysis.edges is not None:
            ed = analysis.edges
            write_dataset(g, "direct", ed.direct, reason=ed.direct_reason)
            write_dataset(g, "backscattered", ed.backscattered, reason=ed.backscattered_reason)
            write_fields(g, ed, ("plateau_log10", "noise_floor_log10"))
        pond = analysis.ponderomotive
        if pond is not None:
            write_dataset(g, "ponderomotive_shift", pond.measured, measurable=pond.measurable, reason=pond.reason)
    if analysis.photoelectron_floor is not None:
        g = f.create_group("spectra/photoelectron/field_free")
        g.attrs["description"] = ("the same numerics with no field for one optical period: the method's floor "
                                  "(tdse1d.analysis.field_free_floor)")
        for name, values in zip(("energy", "energy_density"), analysis.photoelectron_floor):
            write_dataset(g, name, values)
    st = analysis.streaking
    if st is not None:
        g = f.create_group("streaking")
        write_fields(g, st, ("xuv_time", "xuv_photon_energy", "photoelectric_energy", "initial_momentum",
                             "vector_potential", "peak_right", "peak_left", "measured"))
        g.attrs["reason"] = st.reason


def ionization_note(group) -> str:
    """Footnote of the quantum ionization probability, from a result's ``/ionization`` group.

    Parameters
    ----------
    group : h5py.Group
        ``/ionization`` of a result file.

    Returns
    -------
    str
        Empty for a file without the pieces (written before they existed).
    """
    if "probability_band" not in group:
        return "quantum: 1 - population of the bound states stored with the run"
    lower, upper = (float(v) for v in group["probability_band"][()])
    attrs = group.attrs
    found, held = int(attrs.get("states_found", 0)), int(attrs.get("states_held", 0))
    text = (f"quantum: 1 - population of all bound states (docs/analysis.md), band {lower:.4g} to {upper:.4g}; "
            f"a population of {float(group['bound_unheld'][()]):.2e} sits in bound states the box cannot hold "
            f"({float(group['bound_edge'][()]):.2e} measured in the {found - held} grid states reaching the absorber, "
            f"{float(group['bound_beyond'][()]):.2e} estimated above the grid's highest level); "
            f"{found} bound states found on the grid" + ("" if attrs.get("states_complete", True) else
                                                          " (not all converged: the count may be incomplete)"))
    if not attrs.get("converged", True):
        text += "; NOT CONVERGED in the box: the band is wider than +-2 %, use a larger box"
    return text


def ionization_band(group):
    """``(lower, upper)`` of ``/ionization/probability_band``, None for a file without it.

    Parameters
    ----------
    group : h5py.Group
        ``/ionization`` of a result file.
    """
    if "probability_band" not in group:
        return None
    lower, upper = (float(v) for v in group["probability_band"][()])
    return lower, upper


def target_ionization_potential(input_toml) -> float:
    """``atom.ionization_potential`` of the stored input (hartree), NaN if absent."""
    from ..input.spec import tomllib

    try:
        value = tomllib.loads(input_toml).get("atom", {}).get("ionization_potential")
        return units.to_atomic(value, "energy") if value is not None else math.nan
    except (tomllib.TOMLDecodeError, units.UnitError, TypeError, ValueError):
        return math.nan
