"""What recording every k-th step changes in the shipped examples' results.

Each regression case (tests/regression/fingerprint.py, same overrides) is run twice in
one process, recording every step and at the default stride
(:func:`tdse1d.runs.runner.record_stride_of`), and compared: the harmonic plateau
(orders 3 to the cutoff estimate Ip + 3.17 Up, 20 frequencies per order, the same
Hann-windowed Fourier sum over each run's own record), as the RMS of the difference of
log10 power (decade), and the ionization probability and absorbed norm.

Run: python validation/benchmarks/decimation_effect.py
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]


def plateau_rms(a, b, omega, top):
    """RMS difference (decade) of the two runs' harmonic power over orders 3 .. top / omega."""
    from tdse1d.spectra.windows import _window

    omegas = omega * np.arange(3.0, top / omega, 0.05)

    def power(obs):
        t, s = obs.time, obs.acceleration
        w = _window("hann").weights(t.size)
        return np.abs((t[1] - t[0]) * np.exp(-1j * np.outer(omegas, t)) @ (w * s)) ** 2

    return float(np.sqrt(np.mean((np.log10(power(a.observables)) - np.log10(power(b.observables))) ** 2)))


def main():
    sys.path.insert(0, str(ROOT))
    from tests.regression.fingerprint import CASES
    from tdse1d.input.problem import build_problem
    from tdse1d.input.schema import load_input
    from tdse1d.runs.runner import record_stride_of, simulate

    print(f"{'case':<22} {'steps':>6} {'k':>3} {'plateau (decade RMS)':>21} {'P_ion every step':>17} "
          f"{'change':>9} {'absorbed change':>15}")
    for name, overrides in CASES.items():
        problem = build_problem(load_input(ROOT / "inputs" / f"{name}.toml", overrides))
        k = record_stride_of(problem)
        full = simulate(problem, fft_effort="FFTW_ESTIMATE", record_every=1)
        sparse = simulate(problem, fft_effort="FFTW_ESTIMATE")
        top = max(p.cutoff_energy for p in problem.pulse_estimates)
        rms = plateau_rms(full, sparse, problem.field.omega, top)
        print(f"{name:<22} {problem.time.steps:>6} {k:>3} {rms:>21.2e} {full.ionization_probability:>17.6g} "
              f"{sparse.ionization_probability - full.ionization_probability:>9.1e} "
              f"{sparse.absorbed - full.absorbed:>15.1e}", flush=True)


if __name__ == "__main__":
    main()
