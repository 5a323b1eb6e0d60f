"""The rows of the report of one run: beside each semiclassical prediction, the quantum
value with its combined uncertainty, the difference in units of that uncertainty and a
verdict (agrees, deviates, unresolved; :mod:`.verdict`). :func:`rows` builds them from a
:class:`~tdse1d.analysis.RunAnalysis` and only the rows the run makes meaningful
(three-step rows for a driving field below Ip with a plateau; the photoelectric line
and its streaking shift, or its ponderomotive shift and sidebands, for an XUV pulse
inside an infrared field); :func:`format_table` renders them as text and
:func:`to_json` for machines. Nothing here reads a file (the run's file is read by
:mod:`tdse1d.io.analysis_file`). Values are in atomic units inside.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from .. import units
from ..semiclassical.estimates import CUTOFF_UP, LEWENSTEIN_IP
from .run_analysis import RunAnalysis
from .report_sfa import ORBIT_SOURCE, with_sfa
from .verdict import combined_uncertainty, verdict

#: energy tolerance of the bound-state solver (hartree; tdse1d.physics.states): the
#: uncertainty of an eigenvalue on the run's grid
EIGENVALUE_TOLERANCE = 1e-10
#: the unit of each kind of row, as written in the JSON
UNITS = {"energy": "hartree", "photon": "hartree", "probability": "1", "momentum": "atomic_unit_of_momentum",
         "time": "atomic_unit_of_time", "number": "1"}


@dataclass(frozen=True)
class Row:
    """One compared quantity (values in the atomic unit ``unit``; NaN where not available).

    ``prediction`` comes from ``source``; ``quantum +- uncertainty`` is the quantum value
    with its combined uncertainty (reading, numerical and, where the prediction holds
    only within a width, model parts: ``parts``); ``verdict`` is agrees, deviates,
    unresolved, or empty where there is no prediction; ``z`` the difference in units
    of the uncertainty; ``reason`` why a row is unresolved. ``sfa +- sfa_uncertainty``
    is the value read off the strong-field approximation for the same pulse (NaN, with
    ``sfa_reason``, where the file holds no SFA or it was not read) and ``rung`` which of
    run, SFA and classical model deviates (:mod:`.report_sfa`).
    """

    quantity: str
    key: str
    prediction: float
    source: str
    quantum: float
    uncertainty: float
    unit: str
    verdict: str
    note: str = ""
    kind: str = "energy"
    difference: float = math.nan
    z: float = math.nan
    reason: str = ""
    low: float = math.nan
    high: float = math.nan
    rules: tuple = ()
    parts: tuple = ()
    headroom: float = math.nan
    spread: float = math.nan
    period: float = math.nan
    #: (low, high) = the value +- its uncertainty of a quantity that is not converged: not a
    #: value, but the range a converged one is expected in (empty otherwise)
    unconverged_range: tuple = ()
    sfa: float = math.nan
    sfa_uncertainty: float = math.nan
    sfa_reason: str = ""
    rung: str = ""

    @property
    def unresolved(self) -> str:
        """The reason when the verdict is unresolved (empty otherwise)."""
        return self.reason if self.verdict == "unresolved" else ""


class _Builder:
    """Collects rows, each with its uncertainty parts and verdict."""

    def __init__(self, numerical, not_converged):
        self.numerical, self.not_converged, self.rows = dict(numerical), dict(not_converged), []

    def add(self, quantity, key, prediction, source, quantum, kind, *, reading=None, reading_u=math.nan,
            model_u=math.nan, effect=None, note="", reason="", spread=math.nan, period=math.nan):
        if reading is not None:
            quantum, reading_u = reading.value, reading.uncertainty
            reason = reason or reading.reason
        numerical = self.numerical.get(key, math.nan)
        if key in self.not_converged and not reason:
            reason = self.not_converged[key]
        u = combined_uncertainty(reading_u, numerical, model_u)
        v = verdict(prediction, quantum, u, effect=effect, unresolved=reason)
        unconverged = ()
        if reason and key in self.not_converged and math.isfinite(quantum) and math.isfinite(u):
            unconverged = (float(quantum - u), float(quantum + u))
        if reason:
            quantum = math.nan  # no value below the noise floor or unconverged
        parts = tuple((name, float(x)) for name, x in (("reading", reading_u), ("numerical", numerical),
                                                         ("model", model_u)) if math.isfinite(float(x)))
        self.rows.append(Row(
            quantity, key, float(prediction), source, float(quantum), u, UNITS[kind], v.word, note, kind,
            v.difference, v.z, reason or v.reason,
            reading.low if reading is not None else math.nan, reading.high if reading is not None else math.nan,
            tuple(sorted(reading.rules.items())) if reading is not None else (), parts,
            reading.headroom if reading is not None else math.nan, spread, period, unconverged))


def rows(a: RunAnalysis, target_ip: float = math.nan, ionization_note: str = "", ionization_band=None,
         numerical: Mapping[str, float] | None = None, not_converged: Mapping[str, str] | None = None,
         sfa=None, orbits: Mapping | None = None, derived: Mapping | None = None) -> list[Row]:
    """The rows of a run's report.

    Parameters
    ----------
    a : RunAnalysis
    target_ip : float
        Ionization potential the input asked for (hartree); NaN when it gives the potential.
    ionization_note : str
        Footnote of the ionization probability (:func:`tdse1d.io.analysis_file.ionization_note`).
    ionization_band : (float, float), optional
        Band of the bound-state count (``/ionization/probability_band``).
    numerical : mapping, optional
        Quantity key -> numerical uncertainty (absolute, atomic units) from companion runs.
    not_converged : mapping, optional
        Quantity key -> "not converged: enlarge <parameter>"; such rows are unresolved.
    sfa : tdse1d.analysis.sfa.SfaReadings, optional
        The SFA readings stored in the run's file: fill the SFA column
        (:func:`tdse1d.analysis.report_sfa.with_sfa`) and add the quantum-orbit cutoff row.
    orbits : mapping, optional
        The stored quantum orbits (``sfa/orbits``), for the SFA emission times.
    derived : mapping, optional
        Derived spectrum name -> its readings as stored (reading name -> value in the
        unit its class declares, :mod:`tdse1d.spectra.derived`): one row each, keyed
        ``NAME.READING``, without a prediction.

    Returns
    -------
    list of Row
    """
    b = _Builder(numerical or {}, not_converged or {})
    up, ip, w = a.ponderomotive_energy, a.ionization_potential, a.omega0
    s = a.three_step
    b.add("ground-state energy", "ground_state_energy", -target_ip, "-Ip asked for in the input",
          a.ground_state_energy, "energy", reading_u=EIGENVALUE_TOLERANCE,
          note="quantum: lowest eigenvalue on the run's grid (solver tolerance 1e-10 hartree)")
    b.add("ionization potential Ip", "ionization_potential", target_ip, "asked for in the input", ip, "energy",
          reading_u=EIGENVALUE_TOLERANCE, note="quantum: -E of the initial state on the run's grid; the rows below use it")
    if a.three_step_applies and a.cutoff_reading is not None:
        r = a.cutoff_reading
        cut_note = (f"quantum: middle of the range of the cutoff rules (docs/analysis.md); three-step largest return "
                    f"energy {s.max_return_energy / up:.3g} Up for this pulse (3.17 Up for a long one)")
        for source, value in (("three-step model, this pulse", s.cutoff_energy), ("Ip + 3.17 Up", ip + CUTOFF_UP * up),
                              ("1.32 Ip + 3.17 Up", LEWENSTEIN_IP * ip + CUTOFF_UP * up)):
            b.add("harmonic cutoff", "harmonic_cutoff", value, source, math.nan, "photon", reading=r,
                  effect=value - ip, note=cut_note)
        if sfa is not None and math.isfinite(sfa.orbit_cutoff):
            b.add("harmonic cutoff", "harmonic_cutoff", sfa.orbit_cutoff, ORBIT_SOURCE, math.nan, "photon",
                  reading=r, effect=sfa.orbit_cutoff - ip, note=cut_note)
    _ionization_row(b, a, ionization_note, ionization_band)
    if a.three_step_applies and a.regime == "" and a.direct_reading is not None:
        edge_note = "quantum: middle of the range of the edge rules, surface-flux spectrum (docs/analysis.md)"
        for quantity, key, law, value, classical, r in (
                ("direct-electron edge", "direct_edge", "2 Up", 2 * up, s.max_direct_energy, a.direct_reading),
                ("backscattered edge", "backscattered_edge", "10 Up", 10 * up, s.max_backscattered_energy,
                 a.backscattered_reading)):
            b.add(quantity, key, value, law, math.nan, "energy", reading=r, note=edge_note)
            b.add(quantity, key, classical, "three-step model, this pulse", math.nan, "energy", reading=r,
                  note=edge_note)
    if a.ati is not None:
        b.add("ATI comb shift", "line_shift", -up, "-Up (the threshold is raised by Up)", math.nan, "energy",
              reading=a.ati.shift, effect=up,
              note="quantum: offset of the ATI comb from n hbar w - Ip, modulo the photon energy (docs/analysis.md)")
    _emission_rows(b, a.timing)
    _xuv_rows(b, a)
    _derived_rows(b, derived or {})
    return with_sfa(b.rows, a, sfa, orbits)


def _emission_rows(b, timing):
    """One row per classical branch (``timing``: branch -> BranchTiming), each with the
    quantum times assigned to that branch (:func:`tdse1d.analysis.readings.emission_timing`)."""
    for branch, t in timing.items():
        period = t.period
        b.add(f"emission time, {branch} branch", f"emission_time_{branch}", t.classical * period,
              "three-step model, after the field crest", math.nan, "time",
              reading=_scaled(t.quantum, period), model_u=t.statistical * period, effect=t.separation * period,
              spread=t.spread * period, period=period,
              note=("quantum: median of the Gabor-map times after the crest of the birth half cycle that lie nearer "
                    "this branch than the other, per half cycle and photon energy (rules: maximum, centroid); "
                    "prediction: the branch's median over the same samples; spread: half the interquartile range; "
                    "the statistical part of the uncertainty is the standard error of that median; unresolved when "
                    "fewer than 6 independent times are assigned or they are no more concentrated than times at "
                    "random (docs/analysis.md)"))


def _derived_rows(b, derived):
    from ..spectra.derived import DERIVED_SPECTRA

    kinds = {"hartree": "energy", "1": "number"}
    for name, readings in derived.items():
        spectrum = DERIVED_SPECTRA.get(name)
        for column in spectrum.readings_declared if spectrum is not None else ():
            if column.unit in kinds and column.name in readings:
                b.add(f"{name.replace('_', ' ')}: {column.name.replace('_', ' ')}", f"{name}.{column.name}",
                      math.nan, "", float(readings[column.name]), kinds[column.unit],
                      note=f"{spectrum.title}: {column.description} (docs/output.md)")


def quantum_values(table: list[Row]) -> dict[str, float]:
    """Each row key's quantum value as the report shows it (atomic units, :data:`UNITS`).

    Rows of one key show one value (the cutoff's three predictions share one reading);
    a key whose value the report leaves out (below the noise floor, not converged: NaN)
    is absent, so that nothing is certified that the report does not show.

    Parameters
    ----------
    table : list of Row

    Returns
    -------
    dict of str to float
        Key -> quantum value, in row order.

    Raises
    ------
    ValueError
        Two rows of one key show different values (one key, one number).
    """
    out = {}
    for r in table:
        if not math.isfinite(r.quantum):
            continue
        if r.key in out and out[r.key] != r.quantum:
            raise ValueError(f"rows of {r.key!r} show two values, {out[r.key]!r} and {r.quantum!r}")
        out[r.key] = float(r.quantum)
    return out


def _scaled(reading, factor):
    from dataclasses import replace

    scale = (lambda x: x * factor)
    return replace(reading, value=scale(reading.value), low=scale(reading.low), high=scale(reading.high),
                   rules={k: scale(v) for k, v in reading.rules.items()}, resolution=scale(reading.resolution))


def _ionization_row(b, a, note, band):
    reading_u = math.nan
    p = a.ionization_probability
    if band is not None and all(math.isfinite(x) for x in band):
        # the band of the bound-state count covers the error of the Rydberg estimate
        reading_u = max(abs(p - band[0]), abs(band[1] - p))
    quasi = a.tunnelling_yield if a.tunnelling_probability.size else math.nan
    note = (f"Keldysh parameter {a.keldysh_parameter:.3g}; peak field / barrier-suppression field "
            f"{a.peak_field / a.barrier_suppression_field:.3g}" + (f". {note}" if note else ""))
    b.add("ionization probability", "ionization_probability", quasi, "quasi-static WKB tunnelling", p,
          "probability", reading_u=reading_u, note=note)


def _xuv_rows(b, a):
    ip, w = a.ionization_potential, a.omega0
    st = a.streaking
    if a.regime == "streaking" and st is not None:
        # Einstein's relation holds within the pulse's bandwidth: its rms width is the model part
        sigma = a.xuv_bandwidth / (2 * math.sqrt(2 * math.log(2)))
        b.add("photoelectric line", "line_shift", st.xuv_photon_energy - ip, "hbar w_XUV - Ip", math.nan, "energy",
              reading=a.photoelectric_reading, model_u=sigma,
              note="quantum: (|p_left| + p_right)^2 / 8 of the peak centroids; model part: rms spectral width "
                   "of the XUV pulse")
        b.add("streaking shift", "streaking_shift", st.vector_potential, "A_IR(t_XUV), infrared field alone",
              math.nan, "momentum", reading=a.streaking_reading, note="quantum: (|p_left| - p_right) / 2")
    d = a.dressed
    if a.regime == "sidebands" and d is not None:
        # energy conservation places each line only within the XUV pulse's bandwidth:
        # the transition weight changes across the line and pulls its peak
        sigma = a.xuv_bandwidth / (2 * math.sqrt(2 * math.log(2)))
        b.add("line shift in the infrared field", "line_shift", -a.dressing_up,
              "-Up of the infrared field over the XUV pulse", math.nan, "energy", reading=d.shift, model_u=sigma,
              note="quantum: shift of the comb of lines from hbar w_XUV - Ip, modulo the infrared photon energy "
                   "(docs/analysis.md); the electron leaves the pulse without regaining its quiver energy; "
                   "model part: rms spectral width of the XUV pulse")
        for name, r in (("below", d.below), ("above", d.above)):
            b.add(f"sideband {name} the line", f"sideband_{name}", w, "one infrared photon", math.nan, "energy",
                  reading=r, effect=w, model_u=sigma,
                  note="quantum: distance from the main line (rules: parabola, centroid); model part: rms spectral "
                       "width of the XUV pulse")


# --------------------------------------------------------------------------- rendering


def _value(row: Row, value: float, signed=True) -> str:
    if not math.isfinite(value):
        return "-"
    if row.kind in ("energy", "photon"):
        return f"{value * units.HARTREE_EV:.3f}"
    if row.kind == "time":
        return f"{value / row.period:.3f}"
    if row.kind in ("probability", "number"):
        return f"{value:.4g}"
    return f"{value:+.4f}" if signed else f"{value:.4f}"


def _unit_label(row: Row) -> str:
    return {"energy": "eV", "photon": "eV", "probability": "", "momentum": "a.u.", "time": "cycle", "number": ""}[row.kind]


def _cell(row: Row, value: float, omega0: float, with_u=False, u=None) -> str:
    text = _value(row, value)
    if text == "-":
        return text
    u = row.uncertainty if u is None else u
    if with_u and math.isfinite(u):
        text += f" +- {_value(row, u, signed=False)}"
    unit = _unit_label(row)
    text += f" {unit}" if unit else ""
    if row.kind == "photon" and math.isfinite(omega0):
        text += f" (H{value / omega0:.1f})"
    if row.kind == "time":
        text += f" ({units.au_to_fs(value):.3f} fs)"
    return text


def to_json(table: list[Row], a: RunAnalysis, sfa_column: bool = False) -> dict:
    """The rows as JSON-ready data: values in atomic units (``unit``), energies also in eV,
    times also in fs and cycles; ``null`` where a value does not apply (the SFA keys of
    every row when ``sfa_column`` is False: the file holds no SFA)."""
    def clean(x):
        return None if isinstance(x, float) and not math.isfinite(x) else x

    def also(r, x):
        if r.kind in ("energy", "photon"):
            return {"eV": clean(x * units.HARTREE_EV)}
        if r.kind == "time":
            return {"fs": clean(units.au_to_fs(x)), "cycles": clean(x / r.period)}
        return {}

    out = []
    for r in table:
        row = {"quantity": r.quantity, "key": r.key, "prediction": clean(r.prediction), "source": r.source,
               "quantum": clean(r.quantum), "uncertainty": clean(r.uncertainty), "unit": r.unit,
               "verdict": r.verdict or None, "note": r.note, "difference": clean(r.difference),
               "difference_in_uncertainties": clean(r.z), "reason": r.reason or None,
               "rule_range": [clean(r.low), clean(r.high)], "rules": {k: clean(v) for k, v in r.rules},
               "uncertainty_parts": {k: clean(v) for k, v in r.parts},
               "noise_headroom_decades": clean(r.headroom), "sfa": clean(r.sfa),
               "sfa_uncertainty": clean(r.sfa_uncertainty), "sfa_reason": r.sfa_reason or None,
               "deviating_rung": r.rung or None,
               "unconverged_range": [clean(x) for x in r.unconverged_range] or None}
        if r.kind in ("energy", "photon", "time"):
            row["in_other_units"] = {"prediction": also(r, r.prediction), "quantum": also(r, r.quantum),
                                     "uncertainty": also(r, r.uncertainty), "sfa": also(r, r.sfa),
                                     "sfa_uncertainty": also(r, r.sfa_uncertainty)}
        if r.kind == "time":
            row["spread"] = clean(r.spread)
            row["in_other_units"]["spread"] = also(r, r.spread)
        out.append(row)
    return {"photon_energy_au": clean(a.omega0), "ponderomotive_energy_au": clean(a.ponderomotive_energy),
            "sfa_column": bool(sfa_column), "rows": out, "notes": list(a.notes) + ([a.three_step_reason] if a.three_step_reason else [])}


def format_table(table: list[Row], a: RunAnalysis, sfa_column: bool = False) -> str:
    """The rows as plain text for people, footnotes marked on their rows; with
    ``sfa_column`` the SFA value and the deviating rung stand beside each row."""
    footnotes = []

    def mark(text):
        if not text:
            return ""
        if text not in footnotes:
            footnotes.append(text)
        return f"[{footnotes.index(text) + 1}]"

    head = ("quantity", "semiclassical prediction", "prediction", "SFA +- uncertainty", "quantum +- uncertainty",
            "(q-p)/u", "verdict", "deviating rung")
    body = []
    for r in table:
        quantum = _cell(r, r.quantum, a.omega0, with_u=True)
        if r.unconverged_range:
            low, high = r.unconverged_range
            unit = _unit_label(r)
            quantum = f"not converged: {_value(r, low, signed=False)} to {_value(r, high, signed=False)}" + (
                f" {unit}" if unit else "")
        if r.kind == "time" and math.isfinite(r.spread) and math.isfinite(r.quantum):
            quantum += f", spread {r.spread / r.period:.2f} cycle ({units.au_to_fs(r.spread):.2f} fs)"
        z = f"{r.z:+.1f}" if math.isfinite(r.z) else "-"
        marks = "".join(m for m in (mark(r.note), mark(r.reason)) if m)
        sfa = f"{_cell(r, r.sfa, a.omega0, with_u=True, u=r.sfa_uncertainty)} {mark(r.sfa_reason)}".rstrip()
        body.append((r.quantity, r.source, _cell(r, r.prediction, a.omega0), sfa, quantum, z,
                     f"{r.verdict or '-'} {marks}".rstrip(), r.rung or "-"))
    if not sfa_column:  # a file without SFA reports as before
        head, body = head[:3] + head[4:7], [cells[:3] + cells[4:7] for cells in body]
    widths = [max(len(x[i]) for x in [head, *body]) for i in range(len(head))]
    lines = []
    if math.isfinite(a.ponderomotive_energy):
        lines.append(f"photon energy {a.omega0 * units.HARTREE_EV:.4f} eV, Up {a.ponderomotive_energy * units.HARTREE_EV:.4f}"
                     f" eV, Ip {a.ionization_potential * units.HARTREE_EV:.4f} eV; H = harmonic order; times in "
                     "optical cycles after the field crest")
    lines += ["  ".join(h.ljust(wd) for h, wd in zip(head, widths)).rstrip(), "  ".join("-" * wd for wd in widths)]
    lines += ["  ".join(c.ljust(wd) for c, wd in zip(cells, widths)).rstrip() for cells in body]
    lines += ["", "verdict: agrees when |quantum - prediction| <= 2 u, u the combined uncertainty (reading range, "
                  "numerical spread, model width, in quadrature); unresolved below the noise floor, not converged, "
                  "or when u is not smaller than the effect (docs/analysis.md)"]
    if sfa_column:
        lines += ["SFA: the strong-field approximation for the same pulse (docs/sfa.md); deviating rung: which of "
                  "run, SFA and classical model disagrees (intervals that overlap agree): none, classical, sfa, run, "
                  "all, or unclear (the run lies between the two models)"]
    lines += [f"[{k}] {text}" for k, text in enumerate(footnotes, 1)]
    lines += [f"* {n}" for n in list(a.notes) + ([f"three-step rows left out: {a.three_step_reason}"]
                                                 if a.three_step_reason else [])]
    return "\n".join(lines)
