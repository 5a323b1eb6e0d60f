"""The report of one run of the two-electron atom: the quantum yields and their ratio
beside the sequential estimate, and 3.17 Up against the ion's Ip. Pure numerics: the
run's numbers come in a :class:`PairRecord` (read from the file by
:func:`tdse1d.io.pair_result_file.read_pair_record`), the rows are
:class:`tdse1d.analysis.report.Row` with the verdict logic of :mod:`.verdict`.

The quantum values are read from regions of the (x1, x2) plane cut at |x| = R
(:mod:`tdse1d.physics.pair_regions`); the reading at the reported radius is the value
and its distance to the farthest of the others is its uncertainty (the reading rule's
spread, as the one-electron report takes the band of its bound-state count). The
prediction is the sequential estimate for the same pulse (independent tunnelling of
the atom, then of the ion; :mod:`tdse1d.semiclassical.double_ionization`). A double
yield far above it (a ratio that *deviates* upwards) is the knee of non-sequential
double ionization (Walker et al., Phys. Rev. Lett. 73, 1227 (1994), from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .. import units
from .report import Row, UNITS
from .verdict import combined_uncertainty, verdict

__all__ = ["PairRecord", "PairReport", "pair_rows", "yield_columns", "KINDS"]

#: the regions, as the file names them
KINDS = ("neutral", "single_ionization", "double_ionization")
_SEQUENTIAL = {"neutral": "neutral", "single_ionization": "single", "double_ionization": "double"}


@dataclass(frozen=True)
class PairRecord:
    """The numbers of a run of the two-electron atom (atomic units).

    Attributes
    ----------
    time : ndarray, shape (S+1,)
        Recorded times (a.u.).
    electric : ndarray, shape (S+1,)
        Field at those times (a.u.).
    radii : ndarray, shape (R,)
        Radii of the regions (bohr), the reported one first.
    regions : dict of str to ndarray, shape (R, S+1)
        ``neutral``, ``single_ionization``, ``double_ionization`` through the run.
    sequential : dict of str to ndarray, shape (S+1,), or None
        ``neutral``, ``single``, ``double`` of the sequential estimate.
    ionization_potential, ion_ionization_potential : float
        Ip1 and Ip2 (hartree).
    ponderomotive_energy, return_energy, knockout_intensity : float
        Up and 3.17 Up (hartree) of the strongest pulse, and the intensity (W/cm^2)
        where 3.17 Up = Ip2; NaN without a pulse.
    omega0 : float
        Photon energy of the first pulse (hartree; NaN without one).
    momenta : ndarray, shape (N,)
        Momentum axis of each electron (a.u.).
    momentum_map : ndarray, shape (N, N)
        |psi(p1, p2)|^2 of the double-ionization part at the end (a.u.).
    """

    time: np.ndarray
    electric: np.ndarray
    radii: np.ndarray
    regions: dict
    sequential: dict | None
    ionization_potential: float
    ion_ionization_potential: float
    ponderomotive_energy: float = math.nan
    return_energy: float = math.nan
    knockout_intensity: float = math.nan
    omega0: float = math.nan
    momenta: np.ndarray = field(default=None, repr=False)
    momentum_map: np.ndarray = field(default=None, repr=False)

    def final(self, kind: str) -> np.ndarray:
        """The final reading of ``kind`` at every radius, shape (R,)."""
        return np.asarray(self.regions[kind])[:, -1]

    @property
    def ratios(self) -> np.ndarray:
        """Double over single ionization after the run at every radius (NaN where single is 0)."""
        single, double = self.final("single_ionization"), self.final("double_ionization")
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(single > 0, double / np.where(single > 0, single, 1.0), math.nan)


def _spread(values) -> tuple[float, float]:
    """(value at the reported radius, its uncertainty: the farthest other radius' distance)."""
    values = np.asarray(values, dtype=float)
    value = float(values[0])
    finite = values[np.isfinite(values)]
    if not math.isfinite(value) or finite.size < 2:
        return value, math.nan
    return value, float(np.max(np.abs(finite - value)))


def _row(quantity, key, prediction, source, quantum, u, kind, note="", compared=True):
    """A row; ``compared=False`` for two values side by side that are not a prediction
    and its quantum reading (no verdict)."""
    u = combined_uncertainty(u)
    v = verdict(prediction if compared else math.nan, quantum, u)
    return Row(quantity, key, float(prediction), source, float(quantum), u, UNITS[kind], v.word, note, kind,
               v.difference, v.z, v.reason, parts=(("reading", u),) if math.isfinite(u) else ())


def pair_rows(r: PairRecord) -> list[Row]:
    """The rows of the report of a two-electron run.

    Parameters
    ----------
    r : PairRecord

    Returns
    -------
    list of Row
        The double-to-single ratio and the three yields against the sequential
        estimate (with a verdict), the ionization potentials of atom and ion, and
        3.17 Up against the ion's Ip (no verdict: two predictions side by side).
    """
    radii = ", ".join(f"{x:g}" for x in r.radii)
    region_note = (f"quantum: region |x| = R = {r.radii[0]:g} bohr; uncertainty: the farthest reading at "
                   f"R = {radii} bohr, the box not varied (a box too small reads the double yield low: "
                   "docs/input.md, the two-electron atom)")
    source = "sequential: tunnelling of the atom, then of the ion"
    seq = r.sequential
    out = []
    ratio, u = _spread(r.ratios)
    seq_ratio = math.nan
    if seq is not None and seq["single"][-1] > 0:
        seq_ratio = float(seq["double"][-1] / seq["single"][-1])
    note = region_note
    if math.isfinite(seq_ratio) and seq_ratio > 0 and ratio > 0:
        note += f"; quantum over sequential {ratio / seq_ratio:.3g}"
    out.append(_row("double / single ionization", "double_to_single", seq_ratio, source, ratio, u, "number", note))
    for kind in KINDS:
        value, u = _spread(r.final(kind))
        prediction = float(seq[_SEQUENTIAL[kind]][-1]) if seq is not None else math.nan
        name = {"neutral": "neutral atom", "single_ionization": "single ionization",
                "double_ionization": "double ionization"}[kind]
        out.append(_row(name, kind, prediction, source, value, u, "probability", region_note))
    out.append(_row("ionization potential of the atom Ip1", "ionization_potential", math.nan, "", r.ionization_potential,
                    math.nan, "energy", "E_ion - E_atom on the run's grid"))
    out.append(_row("ionization potential of the ion Ip2", "ion_ionization_potential", math.nan, "",
                    r.ion_ionization_potential, math.nan, "energy", "-E_ion on one axis of the run's grid"))
    if math.isfinite(r.return_energy):
        above = r.return_energy > r.ion_ionization_potential
        out.append(_row("largest return energy 3.17 Up", "return_energy", r.return_energy,
                        "three-step model (Corkum 1993)", r.ion_ionization_potential, math.nan, "energy",
                        f"{'above' if above else 'below'} the ion's Ip2 = "
                        f"{r.ion_ionization_potential * units.HARTREE_EV:.2f} eV: direct knock-out "
                        f"{'possible' if above else 'not possible'}; 3.17 Up = Ip2 at "
                        f"{r.knockout_intensity:.3g} W/cm^2; the quantum column shows Ip2", compared=False))
    return out


def _cell(row: Row, value: float, with_u=False) -> str:
    if not math.isfinite(value):
        return "-"
    if row.kind == "energy":
        text = f"{value * units.HARTREE_EV:.3f}"
        u = f" +- {row.uncertainty * units.HARTREE_EV:.3f}" if with_u and math.isfinite(row.uncertainty) else ""
        return f"{text}{u} eV"
    u = f" +- {row.uncertainty:.2g}" if with_u and math.isfinite(row.uncertainty) else ""
    return f"{value:.4g}{u}"


@dataclass(frozen=True)
class PairReport:
    """The report of a two-electron run file (``tdse1d report``): :attr:`rows`
    (:func:`pair_rows`), :meth:`table` for people, :meth:`to_json` for machines."""

    path: Path
    record: PairRecord = field(repr=False)

    @property
    def rows(self) -> list[Row]:
        return pair_rows(self.record)

    def table(self) -> str:
        """The rows as plain text, notes as footnotes."""
        r = self.record
        notes = []
        head = ("quantity", "prediction", "source", "quantum +- uncertainty", "(q-p)/u", "verdict")
        body = []
        for row in self.rows:
            marks = ""
            for text in (row.note, row.reason):
                if text:
                    if text not in notes:
                        notes.append(text)
                    marks += f"[{notes.index(text) + 1}]"
            z = f"{row.z:+.1f}" if math.isfinite(row.z) else "-"
            body.append((row.quantity, _cell(row, row.prediction), row.source or "-",
                         _cell(row, row.quantum, with_u=True), z, f"{row.verdict or '-'} {marks}".rstrip()))
        widths = [max(len(x[i]) for x in [head, *body]) for i in range(len(head))]
        ev = units.HARTREE_EV
        lines = [f"two-electron atom: photon energy {r.omega0 * ev:.4f} eV, Up {r.ponderomotive_energy * ev:.4f} eV, "
                 f"Ip1 {r.ionization_potential * ev:.4f} eV, Ip2 {r.ion_ionization_potential * ev:.4f} eV",
                 "  ".join(h.ljust(w) for h, w in zip(head, widths)).rstrip(), "  ".join("-" * w for w in widths)]
        lines += ["  ".join(c.ljust(w) for c, w in zip(cells, widths)).rstrip() for cells in body]
        lines += ["", "verdict: agrees when |quantum - prediction| <= 2 u, u the spread of the readings over the "
                      "region radii; unresolved when u is not smaller than the effect (docs/analysis.md); a double "
                      "yield that deviates far above the sequential one is the knee of non-sequential double "
                      "ionization"]
        lines += [f"[{k}] {text}" for k, text in enumerate(notes, 1)]
        return "\n".join(lines)

    __str__ = table

    def to_json(self) -> dict:
        """The rows for machines: atomic units (``unit``), energies also in eV; null where none."""
        def clean(x):
            return None if isinstance(x, float) and not math.isfinite(x) else x

        rows = []
        for row in self.rows:
            item = {"quantity": row.quantity, "key": row.key, "prediction": clean(row.prediction),
                    "source": row.source, "quantum": clean(row.quantum), "uncertainty": clean(row.uncertainty),
                    "unit": row.unit, "verdict": row.verdict or None, "note": row.note,
                    "difference_in_uncertainties": clean(row.z), "reason": row.reason or None}
            if row.kind == "energy":
                item["in_eV"] = {k: clean(getattr(row, k) * units.HARTREE_EV)
                                 for k in ("prediction", "quantum", "uncertainty")}
            rows.append(item)
        r = self.record
        return {"model": "two-electron", "photon_energy_au": clean(r.omega0),
                "ponderomotive_energy_au": clean(r.ponderomotive_energy), "radii_bohr": [float(x) for x in r.radii],
                "rows": rows}

    def __repr__(self) -> str:
        words = [row.verdict for row in self.rows if row.verdict]
        counts = ", ".join(f"{words.count(w)} {w}" for w in ("agrees", "deviates", "unresolved") if w in words)
        return f"<PairReport {Path(self.path).name}: {len(self.rows)} rows ({counts or 'no verdicts'})>"


def yield_columns(r: PairRecord) -> list[tuple[str, np.ndarray, str]]:
    """The yields through the run as columns (name, values, dimension): time, then each
    region at each radius, then the sequential estimate (``tdse1d export --what yields``)."""
    columns = [("time", np.asarray(r.time), "time")]
    for k, radius in enumerate(r.radii):
        columns += [(f"{kind}_R{radius:g}", np.asarray(r.regions[kind][k]), "1") for kind in KINDS]
    if r.sequential is not None:
        columns += [(f"sequential_{name}", np.asarray(r.sequential[name]), "1") for name in ("neutral", "single",
                                                                                          "double")]
    return columns
