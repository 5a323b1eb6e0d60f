"""The automatic time step against a run at half of it: plateau and ionization.

The automatic step is chosen from the splitting error on the model's core
(tdse1d/semiclassical/step_error.py). This runs one input twice, at the automatic step
and at half of it (same grid), and reports:

* the RMS difference of log10 of the harmonic power over the plateau (harmonic orders
  from Ip / w to the classical cutoff (Ip + 3.17 Up) / w), target <= 0.02 decade;
* the relative difference of the ionization probability, target <= 1 %;
* the wall time of each run and the step count of the previous rule (0.25 rad per step
  at 18 Up, kept here to compare), so the speed-up is steps_old / steps_new (the cost
  of a step does not depend on its length).

Run: python validation/benchmarks/automatic_step.py [--wavelength NM] [--intensity W_CM2]
     [--cycles N] [--set KEY=VALUE ...]
The issue's case is --wavelength 3200 --intensity 1.6e14 --cycles 10 (a few minutes on
two cores); fewer cycles give the same per-return comparison sooner.
"""

from __future__ import annotations

import argparse
import math
import os
import platform
import subprocess
import time
from dataclasses import replace

import numpy as np

from tdse1d.input.problem import build_problem
from tdse1d.input.schema import load_input
from tdse1d.runs.runner import simulate

BASE = """
[atom]
ionization_potential = "15.76 eV"
[[laser]]
wavelength = "{wavelength} nm"
peak_intensity = "{intensity} W/cm^2"
envelope = "sin2"
cycles = {cycles}
[propagation]
gauge = "length"
order = 2
after_pulse = "2 fs"
[absorber]
type = "mask"
[output]
snapshots = 0
[spectra]
photoelectrons = "none"
"""

#: the previous rule, for the step count it would take: 0.25 rad per step at the
#: energy 0.5 (6 sqrt(Up) + ...)^2 + depth, at most 0.05 a.u.
OLD_PHASE_PER_STEP, OLD_MAX_STEP = 0.25, 0.05


def old_rule_step(problem) -> float:
    est = problem.pulse_estimates[0]
    p_needed = max(math.sqrt(2 * est.ionization_potential), 6 * math.sqrt(est.ponderomotive_energy))
    depth = -float(np.min(problem.potential.value(np.linspace(-20, 20, 4001))))
    return min(OLD_MAX_STEP, OLD_PHASE_PER_STEP / (0.5 * p_needed**2 + depth))


def run(problem):
    t0 = time.perf_counter()
    result = simulate(problem, fft_effort="FFTW_ESTIMATE")
    return result, time.perf_counter() - t0


def halved(problem):
    """The same problem at half the step (same grid, same start and end)."""
    time_axis = problem.time
    half = replace(time_axis, steps=2 * time_axis.steps)
    return replace(problem, time=half)


def at_previous_rule(problem):
    """The same problem at the previous rule's step (same grid, same start and end)."""
    time_axis = problem.time
    steps = math.ceil((time_axis.end - time_axis.start) / old_rule_step(problem) - 1e-9)
    return replace(problem, time=replace(time_axis, steps=steps))


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--wavelength", type=float, default=3200.0)
    parser.add_argument("--intensity", type=float, default=1.6e14)
    parser.add_argument("--cycles", type=int, default=10)
    parser.add_argument("--set", dest="overrides", action="append", default=[])
    parser.add_argument("--against-previous", action="store_true",
                        help="compare with the previous rule's step instead of half the step")
    args = parser.parse_args()
    text = BASE.format(wavelength=args.wavelength, intensity=args.intensity, cycles=args.cycles)
    problem = build_problem(load_input("automatic_step.toml", args.overrides, text=text))
    est = problem.pulse_estimates[0]
    fine_problem = at_previous_rule(problem) if args.against_previous else halved(problem)
    other = "the previous rule's step" if args.against_previous else "half the step"
    print(f"machine: {platform.node()} {platform.processor() or platform.machine()}, {os.cpu_count()} cores; "
          f"load: {subprocess.run(['uptime'], capture_output=True, text=True).stdout.strip()}")
    print(f"case: {args.wavelength:g} nm, {args.intensity:.3g} W/cm^2, {args.cycles} cycles; grid "
          f"{problem.grid.points} x {problem.grid.spacing:.4g} bohr")
    print(f"automatic step {problem.time.step:.5g} a.u. ({problem.time.steps} steps); previous rule "
          f"{old_rule_step(problem):.5g} a.u. ({(problem.time.end - problem.time.start) / old_rule_step(problem):.0f} "
          f"steps): {problem.time.step / old_rule_step(problem):.1f} times fewer steps")
    coarse, t_coarse = run(problem)
    fine, t_fine = run(fine_problem)
    h = coarse.harmonic
    # the other run has the same frequency spacing (same length) and a wider range:
    # its power at the automatic run's frequencies
    fine_power = np.interp(h.frequency, fine.harmonic.frequency, fine.harmonic.power)
    lo, hi = est.ionization_potential / est.photon_energy, est.cutoff_energy / est.photon_energy
    band = (h.order >= lo) & (h.order <= hi)
    diff = np.log10(h.power[band]) - np.log10(fine_power[band])
    rms = float(np.sqrt(np.mean(diff**2)))
    # per harmonic: the power summed over each harmonic's bin (order +- 1/2), less
    # sensitive to the deep minima between harmonics
    peaks = []
    for q in np.arange(math.ceil(lo), math.floor(hi) + 1):
        sel = np.abs(h.order - q) <= 0.5
        peaks.append(np.log10(h.power[sel].sum()) - np.log10(fine_power[sel].sum()))
    rms_peaks = float(np.sqrt(np.mean(np.square(peaks)))) if peaks else math.nan
    p_c, p_f = coarse.ionization_probability, fine.ionization_probability
    print(f"wall time: {t_coarse:.1f} s at the automatic step, {t_fine:.1f} s at {other}")
    print(f"plateau (orders {lo:.1f}-{hi:.1f}): RMS of the log10 difference {rms:.4f} decade over "
          f"{band.sum()} frequencies, {rms_peaks:.4f} decade over {len(peaks)} harmonics (target <= 0.02)")
    print(f"ionization: {p_c:.6g} against {p_f:.6g} at {other}: {abs(p_c - p_f) / p_f:.3%} (target <= 1 %)")


if __name__ == "__main__":
    main()
