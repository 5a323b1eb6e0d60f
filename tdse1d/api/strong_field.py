"""The strong-field approximation of an input, without a time-dependent run (the library
function of ``tdse1d sfa``)::

    import tdse1d
    out = tdse1d.sfa("inputs/argon_800nm.toml")      # SfaOutcome
    out.readings.cutoff                              # hartree
    out.spectra.harmonic_short.power                 # short-branch harmonic spectrum

The same atom as the run: the pulse, the grid, the fitted softening and the ground state
come from the input's problem assembly (docs/sfa.md).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..analysis.sfa import SfaReadings, SfaSpectra, sfa_readings, sfa_spectra
from ..input.problem import Problem, build_problem
from ..input.schema import RunConfig, load_input
from .. import units

__all__ = ["sfa", "SfaOutcome", "sfa_scan", "SfaScan"]


@dataclass(frozen=True)
class SfaOutcome:
    """SFA spectra of an input and the numbers read off them (atomic units)."""

    problem: Problem
    spectra: SfaSpectra
    readings: SfaReadings

    def to_json(self) -> dict:
        """The readings, in hartree and a.u., NaN as None."""
        r, s = self.readings, self.spectra

        def clean(x):
            return None if not math.isfinite(x) else float(x)

        return {
            "ionization_potential": clean(s.ionization_potential),
            "ponderomotive_energy": clean(s.ponderomotive_energy),
            "omega0": clean(s.omega0),
            "cutoff": clean(r.cutoff), "cutoff_uncertainty": clean(r.cutoff_uncertainty),
            "cutoff_reason": r.cutoff_reason,
            "cutoff_family": None if r.cutoff_family is None else {
                "value": clean(r.cutoff_family.value), "uncertainty": clean(r.cutoff_family.uncertainty),
                "rule_range": [clean(r.cutoff_family.low), clean(r.cutoff_family.high)],
                "rules": {k: clean(v) for k, v in r.cutoff_family.rules.items()},
                "reason": r.cutoff_family.reason or None},
            "orbit_cutoff": clean(r.orbit_cutoff),
            "direct_edge": clean(r.direct_edge), "backscattered_edge": clean(r.backscattered_edge),
            "crest_time": clean(r.crest_time),
            "emission_energy": [clean(x) for x in r.emission_energy],
            "emission_short": [clean(x) for x in r.emission_short],
            "emission_long": [clean(x) for x in r.emission_long],
            "seconds": dict(s.seconds),
        }

    def __repr__(self) -> str:
        r, s = self.readings, self.spectra
        return (f"<SfaOutcome cutoff={r.cutoff / s.omega0:.1f} orders, orbit cutoff="
                f"{r.orbit_cutoff / s.omega0:.1f} orders, direct edge={r.direct_edge / s.ponderomotive_energy:.2f} Up, "
                f"backscattered edge={r.backscattered_edge / s.ponderomotive_energy:.2f} Up, "
                f"{sum(s.seconds.values()):.2f} s>")


def sfa(config: RunConfig | Problem | str, *, overrides=(), photoelectrons=True, rescattering=True,
        energy=None, time_step=None) -> SfaOutcome:
    """SFA harmonic and photoelectron spectra of an input's pulse and ground state.

    Parameters
    ----------
    config : RunConfig, Problem or path
        The input (or its TOML file, with ``overrides`` applied), or an assembled problem.
    overrides : sequence of str
        ``KEY=VALUE`` overrides for a path.
    photoelectrons, rescattering : bool
        Compute the photoelectron spectrum, and its rescattered part (the costly one).
    energy : array_like, optional
        Photoelectron energies (hartree).
    time_step : float, optional
        SFA time step (a.u.); default from Ip and Up (docs/sfa.md).

    Returns
    -------
    SfaOutcome
    """
    if isinstance(config, Problem):
        problem = config
    else:
        if not isinstance(config, RunConfig):
            config = load_input(config, overrides)
        problem = build_problem(config, with_states=False)
    spectra = sfa_spectra(problem, photoelectrons=photoelectrons, rescattering=rescattering, energy=energy,
                          time_step=time_step)
    return SfaOutcome(problem, spectra, sfa_readings(spectra))


def _family_line(family, ev, w) -> str:
    """The line of :func:`describe` for the cutoff family's reading."""
    head = "harmonic cutoff (the family of rules the run's report reads with): "
    if family is None:
        return head + "not read"
    if not family.resolved:
        return head + family.reason
    return (head + f"{family.value * ev:.2f} +- {family.uncertainty * ev:.2f} eV, order {family.value / w:.1f} "
            f"(rules {family.low * ev:.2f} to {family.high * ev:.2f} eV)")


def describe(outcome: SfaOutcome) -> str:
    """The readings as lines of text with units (eV, orders, Up, fs)."""
    r, s = outcome.readings, outcome.spectra
    ev, w, up = units.HARTREE_EV, s.omega0, s.ponderomotive_energy
    fs = units.au_to_fs(1.0)
    lines = [f"Ip = {s.ionization_potential * ev:.3f} eV, Up = {up * ev:.3f} eV, photon {w * ev:.4f} eV",
             f"harmonic cutoff (read off the SFA spectrum, one rule as scans read it): "
             + (f"{r.cutoff * ev:.2f} +- {r.cutoff_uncertainty * ev:.2f} eV, order {r.cutoff / w:.1f}"
                if math.isfinite(r.cutoff) else f"unresolved ({r.cutoff_reason})"),
             _family_line(r.cutoff_family, ev, w),
             f"quantum-orbit cutoff of the strongest half cycle: {r.orbit_cutoff * ev:.2f} eV, "
             f"order {r.orbit_cutoff / w:.1f} (1.32 Ip + 3.17 Up = "
             f"{(1.32 * s.ionization_potential + 3.17 * up) * ev:.2f} eV)"]
    if s.photoelectrons is not None:
        lines.append(f"photoelectron edges: direct {r.direct_edge / up:.2f} Up, backscattered "
                     f"{r.backscattered_edge / up:.2f} Up")
    if r.emission_energy.size:
        lines.append(f"quantum-orbit emission times (fs) of the half cycle whose crest is at {r.crest_time * fs:.3f} fs:")
        lines.append("  order     short      long")
        for q in np.arange(math.ceil(s.ionization_potential / w) | 1, r.orbit_cutoff / w, 4):
            i = int(np.argmin(np.abs(r.emission_energy / w - q)))
            lines.append(f"  {q:5.0f}  {r.emission_short[i] * fs:8.3f}  {r.emission_long[i] * fs:8.3f}")
    lines.append("wall time: " + ", ".join(f"{k} {v:.2f} s" for k, v in s.seconds.items()))
    return "\n".join(lines)


@dataclass(frozen=True)
class SfaScan:
    """The SFA harmonic cutoff at every point of a scan plan, beside a run scan's if given.

    Attributes (hartree)
    ----------
    ponderomotive_energy, cutoff, cutoff_uncertainty, orbit_cutoff : ndarray
        Per point of the plan, in plan order.
    local_ponderomotive_energy : ndarray
        Up of the strongest half cycle (the orbits' field), per point.
    ionization_potential : ndarray
    run : dict or None
        ``ponderomotive_energy``, ``cutoff`` (NaN: unresolved) of the run scan's summary.
    figure : path or None
        The cutoff-against-Up figure written.
    seconds : float
        Wall time of the SFA points.
    """

    ponderomotive_energy: np.ndarray
    cutoff: np.ndarray
    cutoff_uncertainty: np.ndarray
    orbit_cutoff: np.ndarray
    ionization_potential: np.ndarray
    local_ponderomotive_energy: np.ndarray
    run: dict | None
    figure: object
    seconds: float

    def __repr__(self) -> str:
        beside = "" if self.run is None else f", beside {len(self.run['cutoff'])} run points"
        return (f"<SfaScan {self.cutoff.size} points{beside}, {self.seconds:.1f} s"
                + ("" if self.figure is None else f", figure {self.figure}") + ">")


def sfa_scan(plan, *, summary=None, figure=None) -> SfaScan:
    """SFA cutoffs over the points of a scan plan (the plan files of ``tdse1d scan``), and
    the figure of cutoff against Up for the SFA and, given its ``summary.h5``, the run scan.

    The points are computed one after the other in this process, with no scan
    directory: a quick look. On the scan machinery (Dask, job arrays, ``summary.h5``
    with ``/sfa``), give the plan ``rungs = ["sfa"]`` and run ``tdse1d scan``
    (:mod:`tdse1d.scans.rungs`; the figure: ``tdse1d plot SUMMARY --what cutoff-ladder``).

    Parameters
    ----------
    plan : path
        Scan plan (TOML); each point's input is the SFA's (no run is made).
    summary : path, optional
        ``summary.h5`` of the time-dependent scan of the same (or another) plan.
    figure : path, optional
        Where to write the figure (.png, .pdf, .svg).

    Returns
    -------
    SfaScan
    """
    import time

    from ..scans.plan import load_plan

    loaded = load_plan(plan)
    clock = time.perf_counter()
    rows = []
    for point in loaded.points:
        out = sfa(point.config, photoelectrons=False)
        r = out.readings
        local = max((o.ponderomotive_energy for o in out.spectra.orbits), default=math.nan)
        rows.append((out.spectra.ponderomotive_energy, r.cutoff, r.cutoff_uncertainty, r.orbit_cutoff,
                     out.spectra.ionization_potential, local))
    seconds = time.perf_counter() - clock
    up, cut, err, orbit, ip, local_up = (np.array(c) for c in zip(*rows))
    run = None
    if summary is not None:
        import h5py

        ev = units.HARTREE_EV
        with h5py.File(summary, "r") as f:
            run = {"ponderomotive_energy": f["estimates/ponderomotive_energy_eV"][()] / ev,
                   "cutoff": f["cutoff/cutoff_energy_eV"][()] / ev,
                   "photon_energy": f["estimates/photon_energy_eV"][()] / ev}
    written = None
    if figure is not None:
        import matplotlib

        matplotlib.use("Agg")
        from pathlib import Path

        from ..plots.sfa_figures import cutoff_against_up_figure

        # the orbits' cutoff belongs to the strongest half cycle, at its own (local) Up
        rungs = [("SFA", up, cut, err), ("SFA quantum orbits (at the local Up)", local_up, orbit, np.zeros_like(orbit))]
        if run is not None:
            rungs.insert(0, ("time-dependent run", run["ponderomotive_energy"], run["cutoff"], run["photon_energy"]))
        fig = cutoff_against_up_figure(rungs, float(np.median(ip)))
        written = Path(figure)
        fig.savefig(written, dpi=200)
    return SfaScan(up, cut, err, orbit, ip, local_up, run, written, seconds)
