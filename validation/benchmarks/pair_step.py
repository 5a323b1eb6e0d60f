"""Milliseconds per step of the two-electron atom against the floor of the same 2-D grid.

The step is the core's propagator moving the registered two-electron system: the
length-gauge Strang step with the absorber, the propagator's observables (norm,
<x1 + x2>, <p1 + p2>, total acceleration, ground-state population) and the region
readings at three radii. The floor is what no split-operator step on that grid can
beat: two planned in-place threaded 2-D pyfftw transforms plus three point-wise complex
products. Also printed: the memory the run estimates before it starts (bytes), and the
machine's load.

Run: python validation/benchmarks/pair_step.py [--points 512 1024 2048] [--steps S] [--threads T]
Prints N | step (ms) | floor (ms) | ratio | memory (MiB) | load. Target: ratio <= 1.5.
"""

from __future__ import annotations

import argparse
import os
import time

import numpy as np

from tdse1d.physics.absorbers import CosineMask
from tdse1d.physics.fft import InPlaceFFT
from tdse1d.physics.grid import Grid
from tdse1d.physics.pair_system import TwoElectrons
from tdse1d.physics.propagation import Propagator, Strang
from tdse1d.physics.pulses import AnalyticPulse, Field, Sin2
from tdse1d.physics.two_electron import TwoElectronAtom


def best_of(fn, repeats):
    best = np.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        count = fn()
        best = min(best, (time.perf_counter() - t0) / count)
    return best * 1e3


def floor_time(n, steps, repeats, threads):
    fft = InPlaceFFT((n, n), "FFTW_MEASURE", threads)
    psi = fft.data
    psi[:] = np.exp(1j * np.linspace(0, 1, n * n)).reshape(n, n)
    a = np.exp(-1j * np.linspace(0, 1, n * n)).reshape(n, n) / n
    b, c = a.copy(), a.copy()

    def run():
        for _ in range(steps):
            np.multiply(psi, a, out=psi)
            fft.forward()
            np.multiply(psi, b, out=psi)
            fft.backward()
            np.multiply(psi, c, out=psi)
        return steps

    run()
    return best_of(run, repeats)


def step_time(n, steps, repeats, threads, spacing=0.3):
    axis = Grid(n, spacing)
    grid = Grid.product(axis, axis)
    atom = TwoElectronAtom(2.0, 1.0, 1.0)
    omega = 0.0584
    field = Field([AnalyticPulse(Sin2(3 * 2 * np.pi / omega), omega, 0.15)])
    h = 0.05
    times = -40 + h * np.arange(steps * (repeats + 1) + 2)
    mask = CosineMask().step_factor(grid, 20.0, h)
    x = axis.x
    psi0 = np.exp(-np.abs(x)[:, None] - np.abs(x)[None, :]).astype(complex)
    psi0 /= np.sqrt(np.sum(np.abs(psi0) ** 2) * spacing**2)
    system = TwoElectrons(axis, atom, absorber_factor=mask, reference=psi0)
    prop = Propagator(system, field, times, scheme=Strang, fft_effort="FFTW_MEASURE", threads=threads)
    prop.start(psi0)
    prop.advance(2)

    def run():
        return prop.advance(steps)

    return best_of(run, repeats)


def main():
    from tdse1d.physics.states import _blas_controller

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, nargs="+", default=[512, 1024, 2048])
    parser.add_argument("--steps", type=int, default=10)
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--threads", type=int, default=2)
    args = parser.parse_args()
    print(f"{'N':>6} | {'step (ms)':>10} | {'floor (ms)':>10} | {'ratio':>6} | {'memory (MiB)':>12} | load")
    with _blas_controller().limit(limits=1, user_api="blas"):
        for n in args.points:
            floor = floor_time(n, args.steps, args.repeats, args.threads)
            step = step_time(n, args.steps, args.repeats, args.threads)
            # the estimate of tdse1d.runs.pair_runner.pair_memory_bytes for the arrays
            memory = (6 * 16 + 6 * 8) * n * n / 2**20
            load = os.getloadavg()[0]
            print(f"{n:>6} | {step:>10.2f} | {floor:>10.2f} | {step / floor:>6.2f} | {memory:>12.0f} | {load:.1f}",
                  flush=True)


if __name__ == "__main__":
    main()
