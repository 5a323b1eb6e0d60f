"""The library function :func:`plot`: the figures of a result file (``tdse1d plot``).

The file's kind is read from the root attribute ``kind`` (a run file written before
the attribute existed has none and is a run) and looked up in :data:`KINDS`, which
maps it to the figures that kind offers. Each figure is a function of the open file
returning a matplotlib Figure; the drawing itself is in :mod:`tdse1d.plots`. Adding a
kind of file is adding one entry to :data:`KINDS`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..input.spec import InputError
from ..io.guarded_file import replaced_when_written
from ..plots import pair_figures, run_figures, scan_figures, sfa_figures
from ..spectra.derived import DERIVED_SPECTRA
from ..semiclassical.estimates import CUTOFF_UP, LEWENSTEIN_IP

__all__ = ["plot", "Figures", "KINDS", "all_figures", "output_files"]


FORMATS = (".png", ".pdf", ".svg")
DPI = 200


def _analysis(f, cache):
    if "analysis" not in cache:
        from ..io.analysis_file import analyse_file

        cache["analysis"] = analyse_file(f)
    return cache["analysis"]


def _field(f, cache):
    return run_figures.field_figure(f["field/time"][()], f["field/electric"][()], f["field/vector_potential"][()])


def _density(f, cache):
    if "snapshots/psi" not in f or f["snapshots/psi"].shape[0] == 0:
        raise InputError("the file holds no wavefunction snapshots ([output] snapshots = 0)", "--what")
    psi = f["snapshots/psi"][()]
    return run_figures.density_figure(f["snapshots/time"][()], f["snapshots/x"][()], np.abs(psi) ** 2,
                                f["field/time"][()], f["field/electric"][()])


def _rows(f, cache):
    """The report's rows of the file (its predictions, quantum values and uncertainties)."""
    if "rows" not in cache:
        from ..analysis.report import rows
        from ..io.analysis_file import ionization_band, target_ionization_potential
        from .results import _numerical_uncertainties

        numerical, not_converged = _numerical_uncertainties(f.filename)
        band = ionization_band(f["ionization"]) if "ionization" in f else None
        cache["rows"] = rows(_analysis(f, cache), target_ionization_potential(f.attrs.get("input", "")), "", band,
                             numerical, not_converged)
    return cache["rows"]


def _band(label, row):
    """(label, low, high) of a row's quantum value +- its combined uncertainty (NaNs if none)."""
    if not (math.isfinite(row.quantum) and math.isfinite(row.uncertainty)):
        return (label, math.nan, math.nan)
    return (label, row.quantum - row.uncertainty, row.quantum + row.uncertainty)


def _harmonic(f, cache):
    a = _analysis(f, cache)
    g = f["spectra/harmonic"]
    rows = [r for r in _rows(f, cache) if r.key == "harmonic_cutoff"]
    cutoffs = [(r.source, r.prediction) for r in rows]
    bands = [_band("read off +- u", rows[0])] if rows else []
    return run_figures.harmonic_figure(g["frequency"][()], g["power"][()], a.omega0, cutoffs, bands)


def _time_frequency(f, cache):
    from ..analysis.readings import field_crests

    a = _analysis(f, cache)
    tf = a.time_frequency
    if tf is None:
        raise InputError("no time-frequency map: the run has no field", "--what")
    s = a.three_step
    branches = [("short", s.short_branch), ("long", s.long_branch)] if s is not None else []
    bands = []
    timing = {r.key: r for r in _rows(f, cache) if r.key.startswith("emission_time")}
    row = timing.get("emission_time_long")
    if row is not None and s is not None and math.isfinite(row.quantum):
        t, e = f["field/time"][()], f["field/electric"][()]
        for crest in field_crests(t, e, s, row.period):
            low, high = crest + row.quantum - row.uncertainty, crest + row.quantum + row.uncertainty
            bands.append(("quantum emission time, median +- u", low, high))
    return run_figures.time_frequency_figure(tf.time, tf.frequency, tf.power, a.omega0, branches,
                                       s.cutoff_energy if s is not None and a.three_step_applies else math.nan,
                                       f["field/time"][()], f["field/electric"][()], bands)


def _photoelectron(f, cache):
    a = _analysis(f, cache)
    method = a.photoelectron_method
    if method is None:
        raise InputError("the file holds no photoelectron spectrum", "--what")
    g = f[f"spectra/photoelectron/{method}"]
    rows = {(r.key, r.source): r for r in _rows(f, cache)}
    marks, bands = [], []
    if a.streaking is not None:
        st = a.streaking
        marks = [("hbar w_XUV - Ip", st.xuv_photon_energy - a.ionization_potential),
                 ("streaked right, (p0 - A_IR)^2/2", 0.5 * (st.initial_momentum - st.vector_potential) ** 2),
                 ("streaked left, (p0 + A_IR)^2/2", 0.5 * (st.initial_momentum + st.vector_potential) ** 2)]
        line = next((r for (k, _), r in rows.items() if k == "line_shift"), None)
        if line is not None:
            bands.append(_band("photoelectric line +- u", line))
    elif a.dressed is not None:
        line = a.dressed.expected - a.dressing_up
        marks = [("hbar w_XUV - Ip - Up", line), ("- one infrared photon", line - a.omega0),
                 ("+ one infrared photon", line + a.omega0)]
        shift = next((r for (k, _), r in rows.items() if k == "line_shift"), None)
        if shift is not None and math.isfinite(shift.quantum):
            centre = a.dressed.expected + shift.quantum
            bands.append(("line read off +- u", centre - shift.uncertainty, centre + shift.uncertainty))
    else:
        for key, label in (("direct_edge", "direct edge"), ("backscattered_edge", "backscattered edge")):
            for (k, source), r in rows.items():
                if k == key:
                    marks.append((f"{label}: {source}", r.prediction))
            first = next((r for (k, _), r in rows.items() if k == key), None)
            if first is not None:
                bands.append(_band(f"{label} read off +- u", first))
    return run_figures.photoelectron_figure(g["energy"][()], g["energy_density_left"][()], g["energy_density_right"][()],
                                      marks, title=f"photoelectron spectrum ({method.replace('_', ' ')})",
                                      bands=bands)


def _sfa_view(f, cache, group):
    """The preamble of the SFA figures: the run's analysis, checked for what the figure
    of ``group`` draws the SFA over (a photoelectron spectrum; a time-frequency map for
    the orbits), and the stored SFA group ``group`` (None when the file holds no ``sfa/``)."""
    from ..io.sfa_file import read_sfa

    a = _analysis(f, cache)
    if group == "photoelectron" and a.photoelectron_method is None:
        raise InputError("the file holds no photoelectron spectrum", "--what")
    if group == "orbits" and a.time_frequency is None:
        raise InputError("no time-frequency map: the run has no field", "--what")
    sfa = read_sfa(f)
    return a, None if sfa is None else sfa.get(group)


def _sfa_harmonic(f, cache):
    a, sfa = _sfa_view(f, cache, "harmonic")
    g = f["spectra/harmonic"]
    cutoffs = [("Ip + 3.17 Up", a.ionization_potential + CUTOFF_UP * a.ponderomotive_energy),
               ("1.32 Ip + 3.17 Up", LEWENSTEIN_IP * a.ionization_potential + CUTOFF_UP * a.ponderomotive_energy),
               ("run, read off", a.harmonic_cutoff)]
    if sfa is not None:
        cutoffs.append(("SFA, read off", sfa["cutoff_energy"]))
    return sfa_figures.harmonic_ladder_figure(g["frequency"][()], g["power"][()], a.omega0, a.ionization_potential,
                                              cutoffs, sfa)


def _sfa_photoelectron(f, cache):
    a, sfa = _sfa_view(f, cache, "photoelectron")
    g = f[f"spectra/photoelectron/{a.photoelectron_method}"]
    up = a.ponderomotive_energy
    return sfa_figures.photoelectron_ladder_figure(g["energy"][()], g["energy_density_left"][()],
                                                   g["energy_density_right"][()], up,
                                                   [("2 Up", 2 * up), ("10 Up", 10 * up)], sfa)


def _sfa_time_frequency(f, cache):
    a, sfa = _sfa_view(f, cache, "orbits")
    tf, s = a.time_frequency, a.three_step
    branches = [("short", s.short_branch), ("long", s.long_branch)] if s is not None else []
    return sfa_figures.sfa_time_frequency_figure(tf.time, tf.frequency, tf.power, a.omega0, branches,
                                                 s.cutoff_energy if s is not None else math.nan,
                                                 f["field/time"][()], f["field/electric"][()], sfa)


def _populations(f, cache):
    return run_figures.populations_figure(f["observables/time"][()], f["observables/norm"][()],
                                    f["observables/population_time"][()], f["observables/bound_population"][()])


def _derived(name):
    """The figure of the registered derived spectrum ``name`` (:mod:`tdse1d.spectra.derived`)."""

    def draw(f, cache):
        spectrum = DERIVED_SPECTRA[name]
        if f"spectra/{name}" not in f:
            raise InputError(f"the file holds no {name} spectrum (written by runs since it was registered)", "--what")
        g = f[f"spectra/{name}"]
        curves = [(c.description, g[c.name][()]) for c in spectrum.columns]
        marks = [(c.description, float(g.attrs[c.name])) for c in spectrum.readings_declared if c.unit == "hartree"]
        return run_figures.derived_spectrum_figure(g[spectrum.axis.name][()], spectrum.axis.unit, curves,
                                                   spectrum.title, _analysis(f, cache).omega0, marks)

    return draw


#: file kind -> figure name -> function(open file, cache) -> Figure
KINDS = {
    "run": {
        "field": _field,
        "density": _density,
        "harmonic": _harmonic,
        "time-frequency": _time_frequency,
        "photoelectron": _photoelectron,
        "populations": _populations,
        "sfa-harmonic": _sfa_harmonic,
        "sfa-photoelectron": _sfa_photoelectron,
        "sfa-time-frequency": _sfa_time_frequency,
        **{name.replace("_", "-"): _derived(name) for name in DERIVED_SPECTRA},
    },
    "scan-summary": scan_figures.FIGURES,
    # a run file holding two_electron/ (its kind attribute is "run"): see plot()
    "two-electron": pair_figures.FIGURES,
}


def all_figures() -> list:
    """Every figure name of every kind of file."""
    return sorted({name for figures in KINDS.values() for name in figures})


def file_kind(h5file) -> str:
    """The ``kind`` root attribute; absent means a run file."""
    kind = h5file.attrs.get("kind", "run")
    return kind.decode() if isinstance(kind, bytes) else str(kind)


def output_files(result, what, names, output=None) -> dict:
    """Figure name -> output path."""
    if output is not None:
        out = Path(output)
        if out.suffix.lower() not in FORMATS:
            raise InputError(f"unknown figure format {out.suffix!r}; use one of {', '.join(FORMATS)}", "--output")
    else:
        out = Path(result).with_suffix(".png")
    if what != "all" and output is not None:
        return {what: out}
    chosen = names if what == "all" else [what]
    return {name: out.with_name(f"{out.stem}-{name}{out.suffix}") for name in chosen}


@dataclass(frozen=True)
class Figures:
    """The figures written by :func:`plot`: figure name -> file."""

    kind: str
    """Kind of the result file (``run`` or ``scan-summary``)."""
    files: dict

    @property
    def paths(self) -> list:
        return list(self.files.values())

    def __repr__(self) -> str:
        names = ", ".join(self.files)
        if len(names) > 120:
            names = names[:117] + "..."
        return f"<Figures of a {self.kind} file: {len(self.files)} written ({names})>"


def plot(path, what: str = "all", output=None, on_written=None, beside=()) -> Figures:
    """Draw the figures of a result file and write them (``tdse1d plot``).

    Parameters
    ----------
    path : path
        Result file of a run or a scan summary.
    what : str
        A figure name of :data:`KINDS` for the file's kind, or ``"all"``.
    output : path, optional
        Output file (.png, .pdf or .svg); with ``what="all"`` a stem for one file per
        figure, ``STEM-WHAT.EXT``. Default: beside the result file, PNG.
    on_written : callable, optional
        ``on_written(path)`` after each file is written (the command prints it).
    beside : sequence of path
        Other scan summaries whose points the ``cutoff-ladder`` figure of a summary
        draws too (e.g. an SFA scan beside a run scan kept in another directory).

    Returns
    -------
    Figures
        The written files by figure name.
    """
    import contextlib

    import matplotlib

    matplotlib.use("Agg")
    from matplotlib import pyplot

    from ..io.checked_open import open_result

    written = {}
    with contextlib.ExitStack() as stack:
        f = stack.enter_context(open_result(path, kinds=KINDS))
        kind = f.kind
        if kind == "run" and "two_electron" in f:  # a run of the two-electron atom: its own figures
            kind = "two-electron"
        figures = KINDS[kind]
        if what != "all" and what not in figures:
            raise InputError(f"{what!r} is not a figure of a {kind} file; choose from {', '.join(figures)}", "--what")
        cache = {}
        if beside:
            if kind != "scan-summary" or what not in ("all", "cutoff-ladder"):
                raise InputError("--beside lays other scan summaries beside a summary's cutoff-ladder figure; "
                                 f"not for the {what} figure of a {kind} file", "--beside")
            cache["beside"] = [stack.enter_context(open_result(other, kinds=("scan-summary",))) for other in beside]
        for name, out in output_files(path, what, list(figures), output).items():
            fig = figures[name](f, cache)
            out.parent.mkdir(parents=True, exist_ok=True)
            try:
                with replaced_when_written(out) as tmp:  # an interrupted figure leaves the earlier one
                    fig.savefig(tmp, dpi=DPI)
            finally:
                pyplot.close(fig)
            written[name] = out
            if on_written is not None:
                on_written(out)
    return Figures(kind, written)
