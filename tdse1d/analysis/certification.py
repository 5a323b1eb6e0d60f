"""Numerical uncertainty of a run: the spread of its reported quantities across
companion runs that each refine one numerical parameter.

A certified run is the run as given (the *main* run) plus companions, each refining
one numerical parameter (the time step, the grid spacing, the box with its absorber).
For every reported quantity (:data:`QUANTITIES`) the numerical uncertainty bounds the
main run's own error from its move to each companion. A companion that refines a
parameter by the ratio r, for a quantity whose error falls as the p-th power of that
parameter, leaves the main run an error of ``(q_c - q_main) r^p / (r^p - 1)``
(Richardson's extrapolation, L. F. Richardson, Phil. Trans. R. Soc. A 210, 307
(1911)); the bare move ``q_c - q_main`` would fall short of the converged value by
the companion's own remaining error whenever the quantity converges monotonically.
So the uncertainty is ``max_c f_c |q_c - q_main|`` with the factor
``f_c = r^p / (r^p - 1)`` of each companion (:func:`richardson_factor`; the
companions and their factors are chosen in :mod:`tdse1d.scans.certify`), and the
main run's value +- that contains every companion's value. A quantity that one
companion moves (bare move) by more than its tolerance (:func:`tolerances`) is
flagged ``"not converged: ..."``, naming the parameter to refine.

Pure numerics: nothing here reads or writes a file (:mod:`tdse1d.io.certification_file`
does) or runs anything (:mod:`tdse1d.scans.certify` does). Atomic units throughout:
hartree for energies, a.u. of time, a.u. of momentum for the streaking shift,
probability for P_ion.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..physics.ionization import CONVERGED_RELATIVE

__all__ = ["QUANTITIES", "QUANTITY_UNITS", "PARAMETER_ADVICE", "Tolerance", "Certified", "quantities", "tolerances",
           "certify_quantities", "not_converged_note", "richardson_factor"]

#: the keys of the reported quantities, in report order, and their unit (as the result
#: file writes units: "1" is a probability)
QUANTITY_UNITS = {
    "harmonic_cutoff": "hartree",
    "ionization_probability": "1",
    "direct_edge": "hartree",
    "backscattered_edge": "hartree",
    "emission_time_short": "atomic_unit_of_time",
    "emission_time_long": "atomic_unit_of_time",
    "streaking_shift": "atomic_unit_of_momentum",
    "line_shift": "hartree",
    "sideband_below": "hartree",
    "sideband_above": "hartree",
    "ground_state_energy": "hartree",
    "ionization_potential": "hartree",
}
QUANTITIES = tuple(QUANTITY_UNITS)

#: what to do about a quantity that a companion refining this parameter moves beyond
#: its tolerance; the text after "not converged: "
PARAMETER_ADVICE = {
    "box": "enlarge box (grid.points with absorber.width)",
    "grid spacing": "reduce grid spacing (grid.spacing)",
    "time step": "reduce time step (propagation.time_step or propagation.order)",
}


# ------------------------------------------------------------------ the quantities


def quantities(analysis) -> dict[str, float]:
    """The reported quantities of a run: the report's quantum value of each row key.

    One reading, one place: the rows are built by :func:`tdse1d.analysis.report.rows`
    with no numerical part, and each key's quantum value is taken as the report shows
    it (:func:`tdse1d.analysis.report.quantum_values`), so that the spread certified for
    a key is the spread of the number the report shows for it. A quantity the report
    does not show for this run (no such row, or a value left out below the noise
    floor) is absent.

    Parameters
    ----------
    analysis : tdse1d.analysis.RunAnalysis

    Returns
    -------
    dict of str to float
        Key (:data:`QUANTITIES`) -> value in its unit (:data:`QUANTITY_UNITS`):
        ``harmonic_cutoff`` (middle of the cutoff rules' range), ``direct_edge``,
        ``backscattered_edge``, ``line_shift`` (the row of the run's regime: ATI comb
        shift, photoelectric line, or the XUV line's shift in the infrared field),
        ``sideband_below``, ``sideband_above`` (distance from the main line),
        ``ground_state_energy``, ``ionization_potential`` in hartree;
        ``emission_time_short`` and ``emission_time_long`` (after the field crest) in
        a.u. of time; ``streaking_shift`` in a.u. of momentum;
        ``ionization_probability`` a probability.
    """
    from .report import quantum_values, rows

    values = quantum_values(rows(analysis))
    unknown = set(values) - set(QUANTITY_UNITS)
    if unknown:  # a report row this module has no unit or tolerance for
        raise ValueError(f"report keys without a certification unit: {sorted(unknown)}")
    return values


# ------------------------------------------------------------------ the tolerances


@dataclass(frozen=True)
class Tolerance:
    """How far a refinement may move a quantity and the run still count as converged."""

    value: float
    """absolute, in the quantity's unit (:data:`QUANTITY_UNITS`)"""
    reason: str


def tolerances(analysis) -> dict[str, Tolerance]:
    """The tolerance of every quantity of a run, from its own physical scales.

    Each is set by what the comparison with the semiclassical picture needs, not by
    what the companions give (they were fixed before any certified run was looked at):

    * harmonic cutoff: one photon energy w. The spectrum is a comb of odd harmonics
      2 w apart; a reading that moves by less than one photon stays on the same
      harmonic, which is as finely as a cutoff is defined.
    * ionization probability: the relative width :data:`~tdse1d.physics.ionization.CONVERGED_RELATIVE`
      (2 %) of P_ion within which the ionization estimate calls itself converged,
      so that the two notions of "converged" are one; at least 1e-6 (below it a
      probability is at the level of the absorber's leakage at rest).
    * direct and backscattered edges: 0.1 Up. The edges are compared with 2 Up and
      10 Up; a tenth of Up is 5 % of the direct edge, below which the comparison is
      settled by the reading rules rather than the numerics.
    * emission times: 0.02 optical periods. The short and long branches of one energy
      lie a few tenths of a period apart and their attochirp spans about 0.1 period;
      a move of 2 % of a period leaves the branch assignment unchanged.
    * streaking shift (momentum): 5 % of |A_IR(t_XUV)|, the classical shift it is
      compared with (at least 1e-3 a.u.).
    * line shift: 0.05 Up, half of the 10 % within which the ponderomotive shift
      should reproduce -Up.
    * sidebands (distance of each from the main line): 0.02 w, a fiftieth of the IR
      photon it is compared with.
    * ground-state energy and Ip: 1e-4 hartree (2.7 meV), far below the energy
      resolution 2 pi / duration of any spectrum of a run (~5e-3 hartree for a
      10-cycle 800 nm pulse): a larger move means the grid no longer resolves the atom.

    Parameters
    ----------
    analysis : tdse1d.analysis.RunAnalysis
        The main run's analysis.

    Returns
    -------
    dict of str to Tolerance
        For every key of :data:`QUANTITIES`; a tolerance that a run's scales leave
        undefined (no field: no w, no Up) is NaN, and its quantity is not flagged.
    """
    w, up = float(analysis.omega0), float(analysis.ponderomotive_energy)
    p_ion = float(analysis.ionization_probability)
    period = 2 * math.pi / w if w > 0 else math.nan
    a_ir = abs(float(analysis.streaking.vector_potential)) if analysis.streaking is not None else math.nan
    t = {
        "harmonic_cutoff": (w, "one photon energy: the harmonic comb's granularity"),
        "ionization_probability": (max(CONVERGED_RELATIVE * abs(p_ion), 1e-6),
                                   f"{CONVERGED_RELATIVE:.0%} of P_ion, the ionization estimate's own convergence band"),
        "direct_edge": (0.1 * up, "0.1 Up: 5 % of the 2 Up the edge is compared with"),
        "backscattered_edge": (0.1 * up, "0.1 Up, as the direct edge"),
        "emission_time_short": (0.02 * period, "0.02 optical periods: leaves the branch assignment unchanged"),
        "emission_time_long": (0.02 * period, "0.02 optical periods: leaves the branch assignment unchanged"),
        "streaking_shift": (max(0.05 * a_ir, 1e-3), "5 % of the classical shift A_IR(t_XUV)"),
        "line_shift": (0.05 * up, "0.05 Up: half of the 10 % within which the shift should give -Up"),
        "sideband_below": (0.02 * w, "0.02 of the IR photon energy the distance is compared with"),
        "sideband_above": (0.02 * w, "0.02 of the IR photon energy the distance is compared with"),
        "ground_state_energy": (1e-4, "1e-4 hartree, far below the energy resolution of any spectrum of the run"),
        "ionization_potential": (1e-4, "1e-4 hartree, far below the energy resolution of any spectrum of the run"),
    }
    return {k: Tolerance(float(v) if np.isfinite(v) else math.nan, why) for k, (v, why) in t.items()}


# ------------------------------------------------------------------ the spread


@dataclass(frozen=True)
class Certified:
    """One quantity of a certified run (its unit: :data:`QUANTITY_UNITS`).

    Attributes
    ----------
    key : str
    value : float
        The main run's value.
    uncertainty : float
        ``max_c f_c |q_c - q_main|`` over the companions that read the quantity
        (:func:`certify_quantities`); NaN when none did.
    tolerance : Tolerance
    companion_values : tuple of float
        Each companion's value, in companion order (NaN where it could not read it).
    converged : bool
        No companion moved the quantity beyond its tolerance, and each read it.
    note : str
        Empty when converged; otherwise ``"not converged: ..."`` naming the
        parameter(s) to refine (:data:`PARAMETER_ADVICE`).
    """

    key: str
    value: float
    uncertainty: float
    tolerance: Tolerance
    companion_values: tuple
    converged: bool
    note: str

    @property
    def unit(self) -> str:
        return QUANTITY_UNITS[self.key]


def not_converged_note(parameters) -> str:
    """``"not converged: enlarge box; ..."`` for the refined parameters that moved a quantity."""
    return "not converged: " + "; ".join(PARAMETER_ADVICE.get(p, f"refine {p}") for p in parameters)


def richardson_factor(ratio: float, order: float) -> float:
    """``r^p / (r^p - 1)``: the main run's error in units of its move to a companion that
    refines a parameter by the ratio ``r`` (> 1) for an error falling as its ``p``-th
    power (Richardson 1911); 1 for an infinite ratio or order (a companion whose own
    error is negligible).

    Parameters
    ----------
    ratio : float
        Refinement ratio r > 1 (2 for a halved step or a doubled box).
    order : float
        Order p > 0 of the error in the refined parameter.

    Returns
    -------
    float
    """
    if not (ratio > 1 and order > 0):
        raise ValueError(f"a refinement needs ratio > 1 and order > 0, got {ratio} and {order}")
    gain = ratio**order
    return 1.0 if math.isinf(gain) else gain / (gain - 1.0)


def certify_quantities(main: dict, companions, tolerance: dict) -> dict[str, Certified]:
    """The uncertainty of every quantity of the main run from its companions.

    Parameters
    ----------
    main : dict of str to float
        :func:`quantities` of the main run.
    companions : sequence of (str, dict, float)
        Per companion: the parameter it refines (a key of :data:`PARAMETER_ADVICE`),
        its :func:`quantities`, and its :func:`richardson_factor`.
    tolerance : dict of str to Tolerance
        :func:`tolerances` of the main run.

    Returns
    -------
    dict of str to Certified
        For each quantity the main run has: uncertainty ``max_c f_c |q_c - q_main|``.
        A companion that cannot read a quantity the main run reads flags it too
        ("... could not read it"): a refinement that loses a reading is no evidence of
        convergence.
    """
    out = {}
    for key, value in main.items():
        moved, lost, values, bounds = [], [], [], []
        for parameter, theirs, factor in companions:
            q = theirs.get(key, math.nan)
            values.append(float(q))
            if not math.isfinite(q):
                lost.append(parameter)
                continue
            bounds.append(factor * abs(q - value))
            tol = tolerance[key].value
            if math.isfinite(tol) and abs(q - value) > tol and parameter not in moved:
                moved.append(parameter)
        spread = max(bounds) if bounds else math.nan
        notes = []
        if moved:
            notes.append(not_converged_note(moved))
        if lost:
            notes.append(("" if moved else "not converged: ") + "the " + ", ".join(lost)
                         + " companion could not read it")
        out[key] = Certified(key, float(value), float(spread), tolerance[key], tuple(values),
                             not notes, "; ".join(notes))
    return out
