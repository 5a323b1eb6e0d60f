"""Case kinds: small classes registered in :data:`~tdse1d.validation.cases.CASE_KINDS`
(contract in :class:`CaseKind`). Given the case, a kind runs what it needs and returns
:class:`~tdse1d.validation.cases.Row` objects (quantity, reference and its source, computed
value, deviation, tolerance, pass or fail) and the figures it drew. The kinds that run a
scan of inputs are in :mod:`tdse1d.validation.scan_kinds`.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from .. import units
from .cases import Case, Row, register_case_kind
from .suite import Runner


# ------------------------------------------------------------------------ helpers


def _plt():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _smoothed_log(spec, half_width):
    from ..spectra.cutoff import running_mean

    return running_mean(spec.frequency, np.log10(np.maximum(spec.power, 1e-300)), half_width)


def _plateau_band(problem, lo_up=0.5, hi_up=2.5):
    """Photon energies (a.u.) of the harmonic plateau, Ip + lo_up Up .. Ip + hi_up Up."""
    est = problem.pulse_estimates[0]
    return est.ionization_potential + lo_up * est.ponderomotive_energy, est.ionization_potential + hi_up * est.ponderomotive_energy


def _plateau_rms(spec_a, spec_b, band, omega0):
    """RMS difference (decades) of two spectra smoothed over one harmonic order, in ``band``."""
    freq = spec_a.frequency
    la = _smoothed_log(spec_a, omega0)
    lb = np.interp(freq, spec_b.frequency, _smoothed_log(spec_b, omega0))
    sel = (freq >= band[0]) & (freq <= band[1])
    return float(np.sqrt(np.mean((la[sel] - lb[sel]) ** 2)))


def _linear_fit(x, y):
    slope, intercept = np.polyfit(np.asarray(x, float), np.asarray(y, float), 1)
    return float(slope), float(intercept)


# -------------------------------------------------------------------------- kinds


class CaseKind:
    """How one kind of case is computed.

    Contract for an implementer: ``__init__(case, runner, figure_dir)`` (the base class
    stores them), and :meth:`run` returns a list of :class:`Row`; figures are saved as
    PNG in ``figure_dir`` through :meth:`figure`, which records their names. Values
    and references are in the units the rows state.
    """

    kind = "?"

    def __init__(self, case: Case, runner: Runner, figure_dir: Path):
        self.case = case
        self.runner = runner
        self.figure_dir = Path(figure_dir)
        self.figures = []
        self.notes = []

    def run(self) -> list[Row]:  # pragma: no cover - abstract
        raise NotImplementedError

    def figure(self, fig, stem):
        name = f"{self.case.name}_{stem}.png"
        self.figure_dir.mkdir(parents=True, exist_ok=True)
        fig.savefig(self.figure_dir / name, dpi=110, bbox_inches="tight")
        _plt().close(fig)
        self.figures.append(name)

    def row(self, computed, quantity=None, reference=None, tolerance=None, **kw):
        c = self.case
        return Row(
            quantity=quantity or c.get("quantity"),
            reference=c.get("reference") if reference is None else reference,
            computed=computed,
            tolerance=c.get("tolerance") if tolerance is None else tolerance,
            source=kw.pop("source", c.get("source")),
            units=kw.pop("units", c.get("units", "")),
            relative=kw.pop("relative", bool(c.get("relative", False))),
            **kw,
        )


@register_case_kind("bound_energy")
class BoundEnergy(CaseKind):
    """Energy of bound state ``params.state`` of the input's model on its grid."""

    def run(self):
        from ..api.single_run import find_states as states

        result = states(self.case.input())
        n = int(self.case.get("params.state", 0))
        e = float(result.states.energies[n])
        unit = self.case.get("units", "hartree")
        return [self.row(e if unit == "hartree" else units.au_to_ev(e))]


@register_case_kind("exact_levels")
class ExactLevels(CaseKind):
    """Every bound level of a model with exact levels (``potential.exact_levels()``)."""

    def run(self):
        from ..api.single_run import find_states as states

        result = states(self.case.input())
        exact = result.problem.potential.exact_levels()
        got = result.states.energies
        if len(got) < len(exact):
            self.notes.append(f"only {len(got)} of the {len(exact)} exact levels were found on the grid")
        rows = []
        for n, ref in enumerate(exact):
            value = float(got[n]) if n < len(got) else math.nan
            rows.append(self.row(value, quantity=f"E_{n}", reference=float(ref)))
        return rows


@register_case_kind("softening_fit")
class SofteningFit(CaseKind):
    """Fit the softening to each listed ionization potential; check the fitted model's Ip.

    ``params.atoms`` is an array of ``{name, ionization_potential_ev}``; the fitted
    ground state on the run's grid must reproduce the Ip (eV).
    """

    def run(self):
        from ..api.single_run import find_states as states

        rows = []
        for atom in self.case.get("params.atoms"):
            ip = float(atom["ionization_potential_ev"])
            config = self.case.input(overrides=[f'atom.ionization_potential="{ip!r} eV"'])
            result = states(config, count=1)
            got = -units.au_to_ev(float(result.states.energies[0]))
            rows.append(self.row(got, quantity=f"{atom['name']}: Ip of the fitted model (softening a = "
                                 f"{result.softening:.5f} bohr)", reference=ip))
        return rows


@register_case_kind("photoelectric_peak")
class PhotoelectricPeak(CaseKind):
    """Peak of the photoelectron energy spectrum of one-photon ionization at hbar w - Ip."""

    def run(self):
        out = self.runner.run(self.case.input())
        spec = out.result.photoelectrons.get("surface_flux") or out.result.photoelectrons["plane_wave"]
        est = out.problem.pulse_estimates[0]
        e = spec.energy
        dens = np.nan_to_num(spec.energy_density)
        sel = e > 0.1 * est.photon_energy
        peak = float(e[sel][np.argmax(dens[sel])])
        ref = est.photon_energy - est.ionization_potential
        ev = units.HARTREE_EV
        plt = _plt()
        fig, ax = plt.subplots(figsize=(5, 3.4))
        ax.semilogy(e * ev, np.maximum(dens, 1e-12))
        ax.axvline(ref * ev, color="k", ls="--", label="hbar w - Ip")
        ax.set_xlim(0, 2 * est.photon_energy * ev)
        ax.set_xlabel("photoelectron energy (eV)")
        ax.set_ylabel("dP/dE (1/Hartree)")
        ax.legend(fontsize=8)
        self.figure(fig, "spectrum")
        return [self.row(peak * ev, reference=ref * ev, units="eV")]


@register_case_kind("emission_times")
class EmissionTimesCase(CaseKind):
    """Emission times read off the time-frequency map against the classical returns.

    For each half cycle and plateau photon energy, the time of the Gabor maximum of the
    dipole acceleration (:func:`tdse1d.analysis.emission_times`) beside the classical
    short- and long-trajectory return times of the three-step model for the same field.
    Checked: the one-sided significance of the correlation of the quantum times with
    the long branch within each central half cycle (:func:`tdse1d.analysis.branch_correlation`),
    a statistic that white-noise and time-shuffled maps fail. Reported beside it: how
    often the times lie within 0.1 cycle of each branch against chance
    (:func:`tdse1d.analysis.branch_agreement`).
    """

    def run(self):
        from ..analysis.run_analysis import analyse_run

        out = self.runner.run(self.case.input())
        em = analyse_run(out.problem, out.result).emission
        if em is None or len(em.quantum) == 0:
            raise ValueError("no plateau emission times could be read off the map")
        nearer = np.minimum(np.abs(em.deviation_cycles("short")), np.abs(em.deviation_cycles("long")))
        dominant = em.dominant_branch()
        share_long = float(np.mean(dominant == "long"))
        self.notes.append(
            f"{100 * share_long:.0f}% of the {len(dominant)} (half cycle, energy) samples lie nearer the long "
            "branch than the short one"
        )
        plt = _plt()
        fig, ax = plt.subplots(figsize=(5, 3.4))
        ev = units.HARTREE_EV
        t0 = em.quantum[0]
        for data, label, style, colour in ((em.short, "short (classical)", "-", "C0"),
                                           (em.long, "long (classical)", "--", "C1")):
            for i, half in enumerate(np.unique(em.half_cycle)):
                rows = np.flatnonzero(em.half_cycle == half)
                rows = rows[np.argsort(em.frequency[rows])]
                ax.plot((data[rows] - t0) / em.period, em.frequency[rows] * ev, style, lw=1, color=colour,
                        label=label if i == 0 else None)
        ax.plot((em.quantum - t0) / em.period, em.frequency * ev, ".", ms=3, color="k", label="Gabor maximum")
        ax.set_xlabel("emission time (optical cycles)")
        ax.set_ylabel("photon energy (eV)")
        ax.legend(fontsize=8)
        self.figure(fig, "emission_times")
        from ..analysis.emission import branch_agreement, branch_correlation

        # set before the run: one-sided p < tolerance (0.01) for the correlation with the
        # long branch; white-noise and time-shuffled maps score p > 0.06
        # (tests/test_analysis.py keeps them); the binomial hit counts are reported
        resolution = 1.0 / analyse_run(out.problem, out.result).time_frequency.width
        tol = float(self.case.get("tolerance"))
        corr = branch_correlation(em, "long", frequency_resolution=resolution)
        rows = [self.row(corr.p_value, quantity="emission time vs photon energy follows the long branch: one-sided p "
                         f"of Pearson r = {corr.correlation:.2f} over {corr.samples} independent samples",
                         reference=0.0, tolerance=tol, units="1", rule="p below the tolerance")]
        for branch in ("long", "short"):
            agreement = branch_agreement(em, branch, frequency_resolution=resolution)
            rows.append(self.row(agreement.p_value, quantity=f"{branch} branch: {agreement.hits} of {agreement.samples} "
                                 f"samples within 0.1 cycle ({100 * agreement.chance:.0f}% by chance), binomial p",
                                 reference=0.0, tolerance=tol, units="1", informational=True, passed=True))
        return rows


@register_case_kind("gauge_invariance")
class GaugeInvariance(CaseKind):
    """The same run in the length and velocity gauges: their difference vanishes as dt^p.

    The exact TDSE is gauge invariant; the split-operator propagator of order p is not
    exactly, each gauge carrying its own splitting error C_g dt^p. So the difference
    of the two gauges' results must fall as dt^p: halving the time step divides it by
    2^p. Checked: the observed order log2(d(dt) / d(dt/2)) of the relative difference of
    the ionization probability and of the plateau RMS difference, against the
    scheme's order p. Band, set before the run: the next term of the error changes the
    ratio by a relative amount of order (dt E)^2, E the top of the plateau compared
    (Ip + 2.5 Up, about 2 hartree, so 1 % at dt = 0.05 a.u.); 0.1 in the order allows
    ten times that. The differences themselves are reported; the former bands (2 % and
    0.1 decade) were four orders of magnitude above them.
    """

    def run(self):
        def pair(extra):
            length = self.runner.run(self.case.input(overrides=['propagation.gauge="length"', *extra]))
            velocity = self.runner.run(self.case.input(overrides=['propagation.gauge="velocity"', *extra]))
            return length, velocity

        length, velocity = pair(())
        dt = length.problem.time.step
        order = int(length.problem.config.propagation.order)
        length_h, velocity_h = pair([f"propagation.time_step={dt / 2!r}"])
        omega0 = length.problem.field.omega
        band = _plateau_band(length.problem)

        def differences(a, b):
            p_a, p_b = a.result.ionization_probability, b.result.ionization_probability
            return abs(p_b - p_a) / p_a, _plateau_rms(a.result.harmonic, b.result.harmonic, band, omega0)

        (ion, rms), (ion_h, rms_h) = differences(length, velocity), differences(length_h, velocity_h)
        _spectra_figure(self, {"length": length.result.harmonic, "velocity": velocity.result.harmonic}, omega0, band)
        tol = float(self.case.get("params.order_tolerance"))
        rows = [
            self.row(ion, quantity=f"ionization probability, abs(velocity - length) / length at dt = {dt:.4g}",
                     reference=0.0, tolerance=math.nan, units="1", rule="reported", informational=True, passed=True),
            self.row(rms, quantity=f"plateau RMS difference of log10 spectra at dt = {dt:.4g}", reference=0.0,
                     tolerance=math.nan, units="decades", rule="reported", informational=True, passed=True),
        ]
        for name, d, d_h in (("ionization probability", ion, ion_h), ("harmonic plateau", rms, rms_h)):
            observed = math.log2(d / d_h) if d > 0 and d_h > 0 else math.nan
            rows.append(self.row(observed, quantity=f"order of the gauge difference in dt, {name}", reference=order,
                                 tolerance=tol, units="1"))
        return rows


def _spectra_figure(kind, spectra_by_name, omega0, band):
    plt = _plt()
    fig, ax = plt.subplots(figsize=(5.5, 3.4))
    for name, spec in spectra_by_name.items():
        ax.semilogy(spec.order, np.maximum(spec.power, 1e-300), lw=0.7, label=name)
    ax.axvspan(band[0] / omega0, band[1] / omega0, color="0.9", zorder=-1, label="plateau compared")
    top = max(float(np.max(s.power[s.order > 3])) for s in spectra_by_name.values())
    ax.set_ylim(top * 1e-12, top * 10)
    ax.set_xlim(0, band[1] / omega0 * 1.6)
    ax.set_xlabel("harmonic order")
    ax.set_ylabel("power (a.u.)")
    ax.legend(fontsize=7)
    kind.figure(fig, "spectra")


@register_case_kind("dipole_forms")
class DipoleForms(CaseKind):
    """Dipole, velocity and acceleration forms of one run's harmonic spectrum in the plateau."""

    def run(self):
        from ..spectra.harmonic import dipole_forms

        out = self.runner.run(self.case.input())
        obs = out.result.observables
        omega0 = out.problem.field.omega
        window = out.problem.config.spectra.window
        forms = dipole_forms(obs.time, omega0, dipole=obs.dipole, velocity=obs.momentum,
                             acceleration=obs.acceleration, window=window)
        band = _plateau_band(out.problem)
        _spectra_figure(self, forms, omega0, band)
        tol = float(self.case.get("tolerance"))
        return [
            self.row(_plateau_rms(forms["acceleration"], forms[name], band, omega0),
                     quantity=f"plateau RMS difference of log10 spectra, {name} vs acceleration form",
                     reference=0.0, tolerance=tol, units="decades")
            for name in ("dipole", "velocity")
        ]


@register_case_kind("convergence")
class Convergence(CaseKind):
    """Halving grid spacing, doubling box and absorber, halving the time step.

    ``params.variants`` is an array of ``{name, set = [overrides]}``; each is compared
    with the base run: plateau RMS difference (decades) and relative change of the
    depletion of the initial state, 1 - |<phi_0|psi(T)>|^2. (Not 1 - the summed bound
    populations: which near-threshold states a box supports changes with its size, so
    that number measures the box as much as the propagation.)
    """

    def run(self):
        base = self.runner.run(self.case.input())
        omega0 = base.problem.field.omega
        band = _plateau_band(base.problem)
        rows = []
        shown = {"base": base.result.harmonic}
        for variant in self.case.get("params.variants"):
            out = self.runner.run(self.case.input(overrides=variant["set"]))
            shown[variant["name"]] = out.result.harmonic
            rows.append(self.row(_plateau_rms(base.result.harmonic, out.result.harmonic, band, omega0),
                                 quantity=f"{variant['name']}: plateau RMS change of log10 spectrum",
                                 reference=0.0, tolerance=float(self.case.get("params.plateau_tolerance")),
                                 units="decades"))
            rows.append(self.row(_depletion(out),
                                 quantity=f"{variant['name']}: depletion of the initial state (reference: base run)",
                                 reference=_depletion(base),
                                 tolerance=float(self.case.get("params.ionization_tolerance")),
                                 relative=True, units="1"))
        _spectra_figure(self, shown, omega0, band)
        return rows


def _depletion(outcome):
    """1 - population of the initial state at the end of a run."""
    return float(1.0 - outcome.result.observables.initial_population[-1])
