"""Milliseconds per step of the two-electron atom against the floor of the same 2-D grid.

The step is the core's propagator moving the registered two-electron system: the
length-gauge Strang step with the mask absorber, the propagator's observables (norm,
<x1 + x2>, <p1 + p2>, total acceleration, ground-state population) and the region
readings at three radii, in the compiled loop (:mod:`tdse1d.physics.plane_loop`) and,
with ``--array``, in the array loop it replaced. The floor is what no split-operator
step on that grid can beat: two planned in-place threaded 2-D pyfftw transforms plus
three point-wise complex products (numpy).

Floor and step are timed back to back in one process, alternately (floor, step,
floor, step, ...), ``--rounds`` times ``--steps`` steps each; printed: the best of
each, their ratio, the median of the per-round ratios, and the 1-minute load before
and after (the machine is shared: read the ratios, not the times). Also printed: the
memory a run of that grid estimates for its arrays.

Run: python validation/benchmarks/pair_step.py [--points 256 512 1024] [--steps S] [--rounds R]
     [--threads T] [--record-every K] [--array]
Target: step / floor <= 1.5.
"""

from __future__ import annotations

import argparse
import os
import time

import numpy as np
from floor import floor_runner, timed_once

from tdse1d.physics.absorbers import CosineMask
from tdse1d.physics.grid import Grid
from tdse1d.physics.pair_system import TwoElectrons
from tdse1d.physics.propagation import Propagator, Strang
from tdse1d.physics.pulses import AnalyticPulse, Field, Sin2
from tdse1d.physics.threads import one_blas_thread
from tdse1d.physics.two_electron import TwoElectronAtom


def step_runner(n, steps, rounds, threads, compiled, every, spacing=0.3):
    axis = Grid(n, spacing)
    grid = Grid.product(axis, axis)
    atom = TwoElectronAtom(2.0, 1.0, 1.0)
    omega = 0.0584
    field = Field([AnalyticPulse(Sin2(3 * 2 * np.pi / omega), omega, 0.15)])
    h = 0.05
    total = every * (steps * (rounds + 1) // every + 2)
    times = -40 + h * np.arange(total + 1)
    mask = CosineMask().step_factor(grid, 20.0, h)
    x = axis.x
    psi0 = np.exp(-np.abs(x)[:, None] - np.abs(x)[None, :]).astype(complex)
    psi0 /= np.sqrt(np.sum(np.abs(psi0) ** 2) * spacing**2)
    system = TwoElectrons(axis, atom, absorber_factor=mask, reference=psi0)
    prop = Propagator(system, field, times, scheme=Strang, fft_effort="FFTW_MEASURE", threads=threads,
                      compiled=compiled, record_every=every)
    if compiled and prop._stepper.plans is None:
        raise SystemExit("the compiled 2-D loop is not available here")
    prop.start(psi0)
    prop.advance(steps)  # warm: compiles, first touches

    def run():
        return prop.advance(steps)

    return run


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, nargs="+", default=[256, 512, 1024])
    parser.add_argument("--steps", type=int, default=10)
    parser.add_argument("--rounds", type=int, default=5)
    parser.add_argument("--threads", type=int, default=2)
    parser.add_argument("--record-every", type=int, default=1)
    parser.add_argument("--array", action="store_true", help="also time the array loop (compiled=False)")
    args = parser.parse_args()
    print(time.strftime("%Y-%m-%d %H:%M:%S UTC", time.gmtime()), f"threads {args.threads}, record every "
          f"{args.record_every}, {args.steps} steps x {args.rounds} rounds")
    print(f"{'N':>6} | {'loop':>8} | {'step (ms)':>9} | {'floor (ms)':>10} | {'best/best':>9} | "
          f"{'median ratio':>12} | {'memory (MiB)':>12} | load before, after")
    with one_blas_thread():
        for n in args.points:
            loops = [("compiled", True)] + ([("array", False)] if args.array else [])
            floor = floor_runner((n, n), args.steps, args.threads)
            for name, compiled in loops:
                step = step_runner(n, args.steps, args.rounds, args.threads, compiled, args.record_every)
                load = os.getloadavg()[0]
                pairs = [(timed_once(floor), timed_once(step)) for _ in range(args.rounds)]
                f = min(p[0] for p in pairs)
                s = min(p[1] for p in pairs)
                median = float(np.median([p[1] / p[0] for p in pairs]))
                memory = (6 * 16 + 6 * 8) * n * n / 2**20  # tdse1d.runs.pair_runner.pair_memory_bytes' arrays
                print(f"{n:>6} | {name:>8} | {s:>9.2f} | {f:>10.2f} | {s / f:>9.2f} | {median:>12.2f} | "
                      f"{memory:>12.0f} | {load:.2f}, {os.getloadavg()[0]:.2f}", flush=True)


if __name__ == "__main__":
    main()
