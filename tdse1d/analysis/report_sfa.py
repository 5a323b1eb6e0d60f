"""The SFA column of the report: beside each classical prediction and each quantum
value, the number read off the strong-field approximation for the same pulse
(:mod:`tdse1d.analysis.sfa`), its uncertainty, and which rung of the ladder
(classical, SFA, run) deviates (:func:`tdse1d.analysis.sfa.deviating_rung`).

:func:`with_sfa` fills the column of rows built by :func:`tdse1d.analysis.report.rows`
from the :class:`~tdse1d.analysis.sfa.SfaReadings` and the quantum orbits stored in the
run's file. Nothing here reads a file. Values are in atomic units.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from .readings import branch_samples
from .sfa import SfaReadings, deviating_rung, emission_deviation
from .verdict import AGREE_WITHIN

__all__ = ["with_sfa", "sfa_emission_after_crest", "CLASSICAL_SOURCES", "ORBIT_SOURCE"]

#: sources of the rows whose prediction is the classical rung (the three-step model and
#: its long-pulse laws); the rows of SFA laws (1.32 Ip + 3.17 Up, the quantum-orbit
#: cutoff) and of other models get an SFA value but no rung
CLASSICAL_SOURCES = ("three-step model, this pulse", "Ip + 3.17 Up", "2 Up", "10 Up",
                     "three-step model, after the field crest")
#: source of the row that compares the run's cutoff with the quantum-orbit branch point
ORBIT_SOURCE = "SFA quantum orbits, strongest half cycle"


def sfa_emission_after_crest(emission, orbits, branch, period) -> float:
    """SFA emission time of one branch after the crest of its half cycle (a.u.), in the
    frame of the report's emission-time rows.

    Each plateau sample of the run's time-frequency map (photon energy ``f``) is matched
    to the SFA half cycle whose ``branch`` orbit at ``f`` lies nearest the *classical*
    time of that branch (so the SFA value does not depend on the run's time), within
    half a period; the value is the median over the samples of that orbit's return time
    minus its half cycle's crest.

    Parameters
    ----------
    emission : tdse1d.analysis.EmissionTimes
        ``frequency`` (hartree) and the classical ``short`` and ``long`` times (a.u.).
    orbits : dict
        ``energy`` (E,), ``crest_time`` (H,), ``emission_short`` and ``emission_long``
        (H, E), a.u., as stored under ``sfa/orbits``.
    branch : str
        ``"short"`` or ``"long"``.
    period : float
        Optical period (a.u.).

    Returns
    -------
    float
        NaN when no sample meets an orbit.
    """
    energy = np.asarray(orbits["energy"], dtype=float)
    crest = np.asarray(orbits["crest_time"], dtype=float).ravel()
    table = np.asarray(orbits[f"emission_{branch}"], dtype=float).reshape(-1, energy.size)
    if table.size == 0 or crest.size != table.shape[0]:
        return math.nan
    after = []
    for f, t in zip(np.asarray(emission.frequency, float), np.asarray(getattr(emission, branch), float)):
        if not (math.isfinite(t) and energy[0] <= f <= energy[-1]):
            continue
        at = np.array([np.interp(f, energy, row, left=np.nan, right=np.nan) for row in table])
        if not np.any(np.isfinite(at)):
            continue
        k = int(np.nanargmin(np.abs(at - t)))
        if abs(at[k] - t) <= 0.5 * period:
            after.append(at[k] - crest[k])
    return float(np.median(after)) if after else math.nan


def _rung(row, sfa_value, sfa_u):
    """Which rung deviates on this row; empty where its prediction is not the classical rung.

    The half widths are AGREE_WITHIN (2) uncertainties, the verdict's band: run and
    classical model then agree exactly when the row's verdict says so, and the rung never
    contradicts it. The classical model for the given pulse is exact within itself: no width.
    """
    if row.source not in CLASSICAL_SOURCES:
        return ""
    return deviating_rung(row.quantum, AGREE_WITHIN * row.uncertainty, sfa_value, AGREE_WITHIN * sfa_u,
                          row.prediction, 0.0)


def with_sfa(table, a, sfa: SfaReadings | None, orbits: dict | None = None) -> list:
    """The rows with their SFA column filled (unchanged when the file holds no SFA).

    Parameters
    ----------
    table : list of tdse1d.analysis.report.Row
        The rows of the run (:func:`tdse1d.analysis.report.rows`).
    a : RunAnalysis
        The run's analysis (its emission times and carrier frequency).
    sfa : SfaReadings or None
        The SFA readings stored in the run's file (:func:`tdse1d.io.sfa_file.read_sfa_readings`).
    orbits : dict, optional
        The stored quantum orbits (``sfa/orbits``), for the emission-time rows.

    Returns
    -------
    list of Row
        ``sfa`` (value, a.u.), ``sfa_uncertainty``, ``sfa_reason`` (why it is missing)
        and ``rung`` (none, classical, sfa, run, all, unclear, unknown; empty where the
        row's prediction is not the classical model) set on each row the SFA speaks to.
    """
    if sfa is None:
        return list(table)
    w = a.omega0
    period = 2 * math.pi / w if math.isfinite(w) and w > 0 else math.nan
    # an edge read off the ATI comb is placed to within one comb spacing, hbar w (the
    # same argument as the cutoff's one harmonic order, tdse1d.analysis.sfa.SfaReadings)
    edge_u = w
    deviation = None
    if orbits is not None and a.emission is not None and math.isfinite(period):
        deviation = emission_deviation(a.emission, orbits, period)
    out = []
    for r in table:
        value, u, reason, extra = math.nan, math.nan, "", ""
        if r.key == "harmonic_cutoff" and sfa.cutoff_family is not None:
            # the run's cutoff in this row is the family's: the SFA's is read by it too
            fam = sfa.cutoff_family
            value, u, reason = fam.value, fam.uncertainty, fam.reason
        elif r.key == "harmonic_cutoff":
            value, u = sfa.cutoff, sfa.cutoff_uncertainty
            reason = "" if math.isfinite(value) else (sfa.cutoff_reason or "not read")
        elif r.key == "direct_edge":
            value, u = sfa.direct_edge, edge_u
            reason = "" if math.isfinite(value) else "no direct SFA spectrum or no edge read"
        elif r.key == "backscattered_edge":
            value, u = sfa.backscattered_edge, edge_u
            reason = "" if math.isfinite(value) else "no rescattered SFA spectrum or no edge read"
        elif r.key.startswith("emission_time_"):
            branch = r.key.rsplit("_", 1)[1]
            if orbits is None or a.emission is None:
                reason = "no quantum orbits stored"
            else:
                value = sfa_emission_after_crest(branch_samples(a.emission, branch), orbits, branch, r.period)
                # the saddle-point return times are solved to round-off: no reading width
                u = 0.0 if math.isfinite(value) else math.nan
                reason = "" if math.isfinite(value) else "no quantum orbit meets the run's plateau samples"
                d = getattr(deviation, branch, math.nan) if deviation is not None else math.nan
                if math.isfinite(d):
                    extra = (f"pointwise, run - nearest SFA {branch}-branch orbit (any half cycle) at the same "
                             f"photon energy: median {d:+.3f} cycle over {deviation.samples} samples")
        else:
            out.append(r)
            continue
        u = u if math.isfinite(value) else math.nan
        note = f"{r.note}; {extra}" if extra and r.note else (extra or r.note)
        out.append(replace(r, sfa=float(value), sfa_uncertainty=float(u), sfa_reason=reason,
                           rung=_rung(r, value, u), note=note))
    return out

