"""Milliseconds per split-operator step on a 2-D grid (two electrons on a line) against its floor.

The step is the length-gauge Strang step of :class:`tdse1d.physics.grid_step.GridStepper`
for a 2-D system with field weights (1, 1) (the coupling x1 + x2), the mask absorber on
all four edges and every per-step observable. The floor is two planned in-place 2-D
FFTW transforms and three point-wise complex products on an array of the same shape.
Both with 1 and with 2 FFTW threads.

Run: python validation/benchmarks/grid_speed.py [--sizes N ...] [--repeats R] [--clock cpu|wall]
Prints N (points per axis) | threads | step (ms) | floor (ms) | ratio.
"""

from __future__ import annotations

import argparse
import platform
import time

import numpy as np
from floor import best_of, floor_runner

from tdse1d.physics.absorbers import CosineMask
from tdse1d.physics.grid import Grid
from tdse1d.physics.propagation import Propagator, Strang
from tdse1d.physics.pulses import AnalyticPulse, Field, Sin2
from tdse1d.physics.systems import System

#: the clock (``--clock cpu``: the process's CPU time, which adds up the threads)
CLOCK = time.perf_counter


def step_time(n, threads, steps, repeats):
    line = Grid(n, 0.3)
    grid = Grid.product(line, line)
    x1, x2 = grid.positions(0), grid.positions(1)

    def soft(x):
        return -1 / np.sqrt(x**2 + 1)

    def dsoft(x):
        return x / (x**2 + 1) ** 1.5

    v = soft(x1) + soft(x2) + 1 / np.sqrt((x1 - x2) ** 2 + 1)
    system = System(grid, v, dsoft(x1) + dsoft(x2), (1.0, 1.0),
                    CosineMask().step_factor(grid, 0.1 * line.half_width, 0.05))
    omega = 0.057
    field = Field([AnalyticPulse(Sin2(10 * 2 * np.pi / omega), omega, 0.05)])
    times = field.start + 0.05 * np.arange(steps * (repeats + 1) + 1)
    prop = Propagator(system, field, times, "length", Strang, threads=threads)
    psi0 = np.exp(-(x1**2) - x2**2) * np.ones(grid.shape)
    prop.start(psi0 / np.sqrt(grid.integrate(abs(psi0) ** 2)))
    prop.advance(steps)
    return best_of(lambda: prop.advance(steps), repeats, CLOCK)


def main():
    global CLOCK
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--sizes", type=int, nargs="*", default=[128, 256, 512])
    parser.add_argument("--clock", choices=("wall", "cpu"), default="wall")
    args = parser.parse_args()
    CLOCK = time.process_time if args.clock == "cpu" else time.perf_counter
    print(f"machine: {platform.processor() or platform.machine()}, python {platform.python_version()}, "
          f"numpy {np.__version__}, clock: {args.clock} (cpu time adds up the threads)")
    print(f"{'N':>5} {'threads':>7} {'step (ms)':>10} {'floor (ms)':>11} {'ratio':>6}")
    for n in args.sizes:
        steps = max(5, int(2e6 / n**2))
        for threads in (1, 2):
            floor = best_of(floor_runner((n, n), steps, threads), args.repeats, CLOCK)
            step = step_time(n, threads, steps, args.repeats)
            print(f"{n:>5} {threads:>7} {step:>10.2f} {floor:>11.2f} {step / floor:>6.2f}", flush=True)


if __name__ == "__main__":
    main()
