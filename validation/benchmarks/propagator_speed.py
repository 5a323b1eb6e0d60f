"""Microseconds per split-operator step against the floor for the same grid size.

The step is the length-gauge Strang step with every per-step observable (norm, dipole,
momentum, acceleration, initial-state population) and the absorber. The floor is what
no split-operator step can beat: two planned in-place pyfftw transforms plus three
point-wise complex products on arrays of the same size.

Columns: ``step`` is the propagator's default loop (the compiled loop for one electron
on a line), ``python`` the Python-driven loop over the same kernels (``compiled=False``),
``run/step`` the whole-run cost per step: the difference of two complete propagations
(construction, start, advance in chunks of 256 steps as the runner does, finish) that
differ only in their length, divided by the difference in steps; ``run/step, k=8`` the
same with the observables recorded every 8th step (``record_every=8``). Ratios are to
the floor measured in the same run.

Run: python validation/benchmarks/propagator_speed.py [--repeats R] [--sizes N ...] [--clock cpu]
Targets: run/step within 1.3 floors at N = 1024 and 4096.
"""

from __future__ import annotations

import argparse
import platform
import time

import numpy as np
from floor import best_of, floor_runner

from tdse1d.physics.absorbers import CosineMask
from tdse1d.physics.grid import Grid
from tdse1d.physics.potentials import Centre, SoftCore
from tdse1d.physics.propagation import Propagator, Strang
from tdse1d.physics.pulses import AnalyticPulse, Field, Sin2


#: the clock: wall time, or the process's CPU time (``--clock cpu``), which on a shared
#: machine leaves out the time other processes held the cores (everything here runs
#: on one thread, so on an idle machine the two agree)
CLOCK = time.perf_counter


def _propagator(n, total, compiled=True, every=1):
    grid = Grid(n, 0.2)
    pot = SoftCore((Centre(0.0, 1.0, 1.0),))
    omega = 0.057
    field = Field([AnalyticPulse(Sin2(100 * 2 * np.pi / omega), omega, 0.05)])
    times = field.start + 0.05 * np.arange(total + 1)
    psi0 = np.exp(-grid.x**2).astype(complex)
    psi0 /= np.sqrt(np.sum(abs(psi0) ** 2) * grid.spacing)
    mask = CosineMask().step_factor(grid, 0.1 * grid.half_width, 0.05)
    prop = Propagator(grid, pot, field, times, "length", Strang, absorber_factor=mask, reference=psi0,
                      compiled=compiled, record_every=every)
    return prop, psi0


def step_time(n, steps, repeats, compiled=True):
    prop, psi0 = _propagator(n, steps * (repeats + 1), compiled)
    prop.start(psi0)
    prop.advance(steps)  # warm-up (numba compilation, caches)
    return best_of(lambda: prop.advance(steps), repeats, CLOCK, scale=1e6)


def whole_run(n, total, every=1):
    """Seconds for a complete propagation of ``total`` steps, in chunks of 256."""
    t0 = CLOCK()
    prop, psi0 = _propagator(n, total, every=every)
    prop.start(psi0)
    while prop.advance(256):
        pass
    prop.finish()
    return CLOCK() - t0


def run_cost_per_step(n, steps, repeats, every=1):
    """(best t(3S) - best t(S)) / 2S in microseconds: the whole-run cost of one step."""
    whole_run(n, 256, every)  # warm-up
    short = min(whole_run(n, steps, every) for _ in range(repeats))
    long = min(whole_run(n, 3 * steps, every) for _ in range(repeats))
    return (long - short) / (2 * steps) * 1e6


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--sizes", type=int, nargs="*", default=[1024, 2048, 4096, 8192, 16384, 32768, 65536])
    parser.add_argument("--clock", choices=("wall", "cpu"), default="wall")
    args = parser.parse_args()
    global CLOCK
    CLOCK = time.process_time if args.clock == "cpu" else time.perf_counter
    print(f"machine: {platform.processor() or platform.machine()}, python {platform.python_version()}, "
          f"numpy {np.__version__}, clock: {args.clock}")
    print(f"{'N':>7} {'step (us)':>10} {'python (us)':>11} {'floor (us)':>11} {'ratio':>6} "
          f"{'run/step (us)':>13} {'run ratio':>9} {'run/step, k=8':>13} {'ratio':>6}")
    for n in args.sizes:
        steps = max(20, int(2e6 / n))
        floor = best_of(floor_runner(n, steps), args.repeats, CLOCK, scale=1e6)
        step = step_time(n, steps, args.repeats)
        python = step_time(n, steps, args.repeats, compiled=False)
        run = run_cost_per_step(n, steps, args.repeats)
        sparse = run_cost_per_step(n, steps, args.repeats, every=8)
        print(f"{n:>7} {step:>10.1f} {python:>11.1f} {floor:>11.1f} {step / floor:>6.2f} {run:>13.1f} "
              f"{run / floor:>9.2f} {sparse:>13.1f} {sparse / floor:>6.2f}", flush=True)


if __name__ == "__main__":
    main()
