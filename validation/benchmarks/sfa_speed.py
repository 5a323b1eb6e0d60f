"""Wall time of the strong-field approximation of the shipped argon input (10 cycles,
800 nm, 1.6e14 W/cm^2): the harmonic dipole (compiled loop) against the same sum in plain
vectorised numpy, and the photoelectron spectrum (direct, then direct + rescattered).

Run: python validation/benchmarks/sfa_speed.py [--repeats R] [--input PATH]
Prints one line per part: median and minimum wall time over R repeats after a warm-up,
the 1-minute load average before and after, and the largest difference between the two
routes of the harmonic dipole relative to its largest value. Target: harmonic spectrum
under 2 s on 2 cores. The problem assembly (grid, ground state) is timed apart.
"""

from __future__ import annotations

import argparse
import math
import os
import platform
import time
from pathlib import Path

import numpy as np

from tdse1d.analysis.sfa import sfa_spectra
from tdse1d.input.problem import build_problem
from tdse1d.input.schema import load_input
from tdse1d.semiclassical import sfa_harmonic as H
from tdse1d.spectra.harmonic import harmonic_spectrum

ROOT = Path(__file__).resolve().parents[2]


def numpy_dipole(field, table, ip, period, window=H.ExcursionWindow(), block=200_000):
    """The harmonic dipole as plain vectorised numpy: all (t, tau) pairs in blocks."""
    dt = field.step
    count = int(math.ceil(window.reach(period) / dt))
    j = np.arange(1, count + 1)
    full, _, _ = window.weights(j * dt, period)
    quad = np.where(j == 1, 2.5 * dt, dt) * full
    n = field.time.size
    out = np.zeros(n)
    rows_per_block = max(1, block // count)
    for first in range(0, n, rows_per_block):
        rows = np.arange(first, min(n, first + rows_per_block))
        r, s = np.meshgrid(rows, j, indexing="ij")
        ok = s <= r
        terms = np.zeros(r.shape, dtype=complex)
        terms[ok] = H.saddle_terms(field, table, ip, r[ok], s[ok])
        out[rows] = 2 * np.imag(terms @ quad)
    return out


def timed(fn, repeats):
    fn()  # warm-up (numba compiles or loads its cache)
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        value = fn()
        times.append(time.perf_counter() - t0)
    return value, float(np.median(times)), float(np.min(times))


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--input", default=str(ROOT / "inputs" / "argon_800nm.toml"))
    args = parser.parse_args()
    load = os.getloadavg()[0]
    print(f"# {platform.processor() or platform.machine()}, {os.cpu_count()} cpus, "
          f"numba threads {os.environ.get('NUMBA_NUM_THREADS', 'default')}, load {load:.2f}")
    t0 = time.perf_counter()
    problem = build_problem(load_input(args.input), with_states=False)
    print(f"problem assembly (grid, ground state): {time.perf_counter() - t0:.2f} s")
    ip = problem.ionization_potential
    up = problem.pulse_estimates[0].ponderomotive_energy
    period = 2 * math.pi / problem.field.omega
    dt = H.sfa_time_step(ip, up)
    t = problem.time.start + dt * np.arange(int(math.ceil((problem.time.end - problem.time.start) / dt)) + 1)
    field = H.sample_field(t, problem.field.electric(t), problem.field.vector_potential(t))
    table = H.dipole_table(problem.grid.x, problem.states.wavefunctions[0], 8.0)
    pairs = t.size * math.ceil(H.ExcursionWindow().reach(period) / dt)

    def compiled():
        d = H.sfa_dipole(field, table, ip, period)
        harmonic_spectrum(t, d.total, problem.field.omega, form="dipole")
        return d.total

    x, med, best = timed(compiled, args.repeats)
    print(f"harmonic dipole + spectrum, compiled: median {med:.3f} s, min {best:.3f} s "
          f"({t.size} times, {pairs:.3g} pairs)")
    x_np, med_np, best_np = timed(lambda: numpy_dipole(field, table, ip, period), 1)
    print(f"harmonic dipole, plain numpy: median {med_np:.3f} s, min {best_np:.3f} s; "
          f"largest difference {np.max(np.abs(x - x_np)) / np.max(np.abs(x)):.2e} of max |x|")
    for rescattering in (False, True):
        _, med_pe, best_pe = timed(lambda: sfa_spectra(problem, harmonics=False, rescattering=rescattering), 1)
        what = "direct + rescattered" if rescattering else "direct only"
        print(f"photoelectron spectrum ({what}, default axis to 20 Up): median {med_pe:.3f} s, min {best_pe:.3f} s")
    print(f"# load after {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
