"""The case kind that lays the strong-field approximation beside the time-dependent run
(registered in :data:`~tdse1d.validation.cases.CASE_KINDS` as ``sfa_cutoff``)."""

from __future__ import annotations

import math

import numpy as np

from .. import units
from .cases import register_case_kind
from .kinds import CaseKind, _plt


@register_case_kind("sfa_cutoff")
class SfaCutoff(CaseKind):
    """SFA and run harmonic cutoffs of the same pulse and atom, read by the same rule.

    Both readings are uncertain by one harmonic order each (the rule smooths over +-1
    order, docs/analysis.md); they agree when their intervals overlap, |SFA - run| <=
    2 omega0 (set before the run). Reported beside: the quantum-orbit cutoff of the
    strongest half cycle against 1.32 Ip + 3.17 Up, and the classical one, so a
    disagreement says which rung deviates.
    """

    def run(self):
        from ..analysis.sfa import sfa_readings, sfa_spectra
        from ..analysis.run_analysis import analyse_run

        out = self.runner.run(self.case.input())
        problem = out.problem
        analysis = analyse_run(problem, out.result)
        spectra = sfa_spectra(problem, photoelectrons=False)
        sfa = sfa_readings(spectra)
        ev, w = units.HARTREE_EV, spectra.omega0
        run_cut = analysis.harmonic_cutoff
        tol = 2 * w * ev
        rows = [self.row((sfa.cutoff - run_cut) * ev, quantity="SFA cutoff - run cutoff (same reading rule)",
                         reference=0.0, tolerance=tol, units="eV",
                         rule="|difference| <= the sum of the two readings' half widths, one order each")]
        lewenstein = 1.32 * spectra.ionization_potential + 3.17 * spectra.ponderomotive_energy
        rows.append(self.row(sfa.orbit_cutoff * ev, quantity="quantum-orbit cutoff of the strongest half cycle",
                             reference=lewenstein * ev, tolerance=tol, units="eV", informational=True, passed=True,
                             source="Lewenstein et al., Phys. Rev. A 49, 2117 (1994): 1.32 Ip + 3.17 Up"))
        if analysis.three_step is not None:
            classical = analysis.three_step.cutoff_energy
            for label, value in (("run", run_cut), ("SFA", sfa.cutoff)):
                rows.append(self.row(value * ev, quantity=f"{label} cutoff against the classical three-step cutoff",
                                     reference=classical * ev, tolerance=tol, units="eV", informational=True,
                                     passed=True, source="three-step model for the run's own field"))
        plt = _plt()
        fig, ax = plt.subplots(figsize=(5, 3.4))
        h = out.result.harmonic
        for freq, power, label in ((h.frequency, h.power, "run"), (spectra.harmonic.frequency,
                                                                  spectra.harmonic.power, "SFA")):
            sel = (freq > spectra.ionization_potential) & (freq < 1.5 * lewenstein)
            ax.semilogy(freq[sel] / w, power[sel] / np.median(power[sel]), lw=0.7, label=label)
        for value, label, style in ((run_cut, "run cutoff", "--"), (sfa.cutoff, "SFA cutoff", ":")):
            if math.isfinite(value):
                ax.axvline(value / w, ls=style, color="k", lw=0.8, label=label)
        ax.set_xlabel("harmonic order")
        ax.set_ylabel("power / median")
        ax.legend(fontsize=8)
        self.figure(fig, "sfa_cutoff")
        return rows
