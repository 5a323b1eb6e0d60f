"""The rows of the report of one run: the semiclassical prediction beside the quantum
result, one quantity per row: prediction | quantum result | comparison (a ratio for
positive quantities, a difference for shifts and times), with energies in eV, harmonic
orders and atomic units. :func:`rows` builds them from a
:class:`~tdse1d.analysis.RunAnalysis`; :func:`format_table` renders them as text and
:func:`to_json` for machines. Nothing here reads a file (the run's file is read by
:mod:`tdse1d.io.analysis_file`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import units
from ..semiclassical.estimates import CUTOFF_UP, LEWENSTEIN_IP
from ..spectra.cutoff import NOISE_MARGIN
from .run_analysis import RunAnalysis


@dataclass(frozen=True)
class Row:
    """One compared quantity (values in a.u. of ``kind``; NaN where not available)."""

    quantity: str
    prediction_label: str
    prediction: float
    quantum: float
    kind: str  # "energy", "photon", "probability", "momentum", "time", "number"
    compare: str = "ratio"  # or "difference"
    note: str = ""
    #: why the quantum value could not be read, e.g. "unresolved (within 0.3 decades
    #: of the noise floor)"; the table then says "unresolved" and gives this as a footnote
    unresolved: str = ""

    @property
    def comparison(self) -> float:
        if not (math.isfinite(self.prediction) and math.isfinite(self.quantum)):
            return math.nan
        if self.compare == "difference":
            return self.quantum - self.prediction
        return self.quantum / self.prediction if self.prediction != 0 else math.nan


def rows(a: RunAnalysis, target_ip: float = math.nan, ionization_note: str = "") -> list[Row]:
    """The table of a run's analysis.

    ``target_ip`` is the ionization potential the input asked for (the softening is
    fitted to it), NaN when the input gives the potential directly. ``ionization_note``
    (from :func:`tdse1d.io.analysis_file.ionization_note`) is the quantum ionization probability's footnote.
    """
    nan = math.nan
    up, ip = a.ponderomotive_energy, a.ionization_potential
    s = a.three_step
    out = [
        Row("ground-state energy", "-Ip asked for in the input", -target_ip, a.ground_state_energy, "energy",
            note="quantum: lowest eigenvalue on the run's grid"),
        Row("ionization potential Ip", "asked for in the input", target_ip, ip, "energy",
            note="quantum: -E of the initial state on the run's grid; the rows below use it"),
    ]
    cut_why = a.cutoff.reason if a.cutoff is not None and not math.isfinite(a.harmonic_cutoff) else ""
    if math.isfinite(up):
        out += [
            Row("harmonic cutoff", "three-step model, this pulse", s.cutoff_energy if s else nan,
                a.harmonic_cutoff, "photon", note="quantum: read off the spectrum (docs/analysis.md)",
                unresolved=cut_why),
            Row("harmonic cutoff", "Ip + 3.17 Up", ip + CUTOFF_UP * up, a.harmonic_cutoff, "photon", unresolved=cut_why),
            Row("harmonic cutoff", "1.32 Ip + 3.17 Up", LEWENSTEIN_IP * ip + CUTOFF_UP * up, a.harmonic_cutoff, "photon",
                unresolved=cut_why),
            Row("max. return energy / Up", "three-step model (3.17 for a long pulse)",
                s.max_return_energy / up if s else nan, nan, "number"),
        ]
    out.append(Row("ionization probability", "quasi-static WKB tunnelling", a.tunnelling_yield,
                   a.ionization_probability, "probability",
                   note=f"Keldysh parameter {a.keldysh_parameter:.3g}; peak field / barrier-suppression field "
                        f"{a.peak_field / a.barrier_suppression_field:.3g}"
                        + (f". {ionization_note}" if ionization_note else "")))
    if a.streaking is None and math.isfinite(up):
        e = a.edges
        d_why = e.direct_reason if e else ""
        b_why = e.backscattered_reason if e else ""
        out += [
            Row("direct-electron edge", "2 Up", 2 * up, e.direct if e else nan, "energy",
                note="quantum: knee where the direct distribution falls 0.5 decade (docs/analysis.md)",
                unresolved=d_why),
            Row("direct-electron edge", "three-step model, this pulse", s.max_direct_energy if s else nan,
                e.direct if e else nan, "energy", unresolved=d_why),
            Row("backscattered edge", "10 Up", 10 * up, e.backscattered if e else nan, "energy",
                note=f"quantum: end of the plateau, {a.photoelectron_method or 'no'} spectrum", unresolved=b_why),
            Row("backscattered edge", "three-step model, this pulse", s.max_backscattered_energy if s else nan,
                e.backscattered if e else nan, "energy", unresolved=b_why),
        ]
    pond = a.ponderomotive
    if pond is not None:
        out.append(Row("ponderomotive shift", "Up", pond.predicted, pond.measured, "energy",
                       note=("" if pond.measurable else "not measurable: ") + pond.reason))
    em = a.emission
    if em is not None and em.frequency.size:
        central = _central_half_cycles(em)
        dev_short = float(np.median(em.deviation_cycles("short")[central]))
        dev_long = float(np.median(em.deviation_cycles("long")[central]))
        share = float(np.mean(em.dominant_branch()[central] == "short"))
        out += [
            Row("emission time - short trajectory", "three-step model", 0.0, dev_short, "cycles", "difference",
                note=f"median over the plateau of the central half cycles; {share:.0%} of points nearer short"),
            Row("emission time - long trajectory", "three-step model", 0.0, dev_long, "cycles", "difference"),
        ]
    st = a.streaking
    if st is not None:
        out += [
            Row("photoelectric peak", "hbar w_XUV - Ip", st.xuv_photon_energy - ip, st.photoelectric_energy, "energy",
                note="quantum: from (|p_left| + p_right) / 2", unresolved=st.reason),
            Row("streaking shift", "A_IR(t_XUV)", st.vector_potential, st.measured, "momentum",
                note="quantum: (|p_left| - p_right) / 2", unresolved=st.reason),
        ]
    return out


def _central_half_cycles(em):
    """Rows of the half cycles holding at least half the largest number of plateau points."""
    labels, counts = np.unique(em.half_cycle, return_counts=True)
    keep = labels[counts >= 0.5 * counts.max()]
    return np.isin(em.half_cycle, keep)


def _units_of(row: Row, value: float, omega0: float) -> dict:
    if row.kind in ("energy", "photon"):
        out = {"au": value, "eV": value * units.HARTREE_EV}
        if row.kind == "photon" and math.isfinite(omega0):
            out["order"] = value / omega0
        return out
    return {"au": value}


def _format(row: Row, value: float, omega0: float) -> str:
    if not math.isfinite(value):
        return "-"
    if row.kind in ("energy", "photon"):
        text = f"{value * units.HARTREE_EV:.3f} eV ({value:.4g})"
        if row.kind == "photon" and math.isfinite(omega0):
            text += f" H{value / omega0:.1f}"
        return text
    if row.kind == "probability":
        return f"{value:.3e}"
    if row.kind == "momentum":
        return f"{value:+.4f} a.u."
    if row.kind == "cycles":
        return f"{value:+.3f} cycles"
    return f"{value:.4g}"


def _format_comparison(row: Row) -> str:
    c = row.comparison
    if not math.isfinite(c):
        return "-"
    if row.compare == "ratio":
        return f"x {c:.3f}"
    if row.kind in ("energy", "photon"):
        return f"{c * units.HARTREE_EV:+.3f} eV"
    return f"{c:+.4g}"


def to_json(a: RunAnalysis, target_ip: float = math.nan, ionization_note: str = "") -> dict:
    """The table as JSON-ready data (energies in a.u. and eV, photons also as orders)."""
    def clean(x):
        return None if isinstance(x, float) and not math.isfinite(x) else x

    return {
        "photon_energy_au": clean(a.omega0),
        "ponderomotive_energy_au": clean(a.ponderomotive_energy),
        "rows": [
            {
                "quantity": r.quantity,
                "prediction_from": r.prediction_label,
                "prediction": {k: clean(v) for k, v in _units_of(r, r.prediction, a.omega0).items()},
                "quantum": {k: clean(v) for k, v in _units_of(r, r.quantum, a.omega0).items()},
                r.compare: clean(r.comparison),
                "note": r.note,
                **({"unresolved": r.unresolved} if r.unresolved else {}),
            }
            for r in rows(a, target_ip, ionization_note)
        ],
        "notes": list(a.notes),
    }


def format_table(a: RunAnalysis, target_ip: float = math.nan, ionization_note: str = "") -> str:
    """The table as plain text for people."""
    head = ("quantity", "semiclassical prediction", "prediction", "quantum result", "ratio/diff")
    table = rows(a, target_ip, ionization_note)
    footnotes = []
    for r in table:
        if r.unresolved and r.unresolved not in footnotes:
            footnotes.append(r.unresolved)

    def quantum_cell(r):
        if r.unresolved:
            return f"unresolved [{footnotes.index(r.unresolved) + 1}]"
        return _format(r, r.quantum, a.omega0)

    body = [(r.quantity, r.prediction_label, _format(r, r.prediction, a.omega0), quantum_cell(r),
             _format_comparison(r)) for r in table]
    widths = [max(len(x[i]) for x in [head, *body]) for i in range(len(head))]
    lines = ["  ".join(h.ljust(w) for h, w in zip(head, widths)), "  ".join("-" * w for w in widths)]
    notes = []
    for r, cells in zip(table, body):
        lines.append("  ".join(c.ljust(w) for c, w in zip(cells, widths)).rstrip())
        if r.note and r.note not in notes:
            notes.append(r.note)
    if math.isfinite(a.ponderomotive_energy):
        lines.insert(0, f"photon energy {a.omega0 * units.HARTREE_EV:.4f} eV, Up {a.ponderomotive_energy * units.HARTREE_EV:.4f} eV, "
                        f"Ip {a.ionization_potential * units.HARTREE_EV:.4f} eV; energies in eV (a.u.), H = harmonic order")
    lines += [""] + [f"* {n}" for n in notes + list(a.notes)]
    lines += [f"[{k}] {why}: the reading level stands less than {NOISE_MARGIN:g} decade above the spectrum's "
              "noise floor, so no value is given (docs/analysis.md)" for k, why in enumerate(footnotes, 1)]
    return "\n".join(lines)
