"""What the benchmarks time a step against, in one place: the floor of a split-operator
step, and the best-of timing loop.

The floor of a Strang step is what no implementation of it can avoid: one forward and
one backward in-place FFT (planned by :class:`tdse1d.physics.fft.InPlaceFFT`, as the
solver plans them) and three point-wise complex products, on an array of the step's
shape. A step's cost is quoted in floors so that the number carries from one machine to
another. Imported by the scripts beside it (run as ``python validation/benchmarks/X.py``,
which puts this folder on the path).
"""

from __future__ import annotations

import time

import numpy as np

from tdse1d.physics.fft import InPlaceFFT


def floor_runner(shape, steps, threads=1, effort="FFTW_MEASURE"):
    """A callable that runs ``steps`` floor steps on an array of ``shape`` and returns
    ``steps`` (run once here, so its plans and caches are warm).

    Parameters
    ----------
    shape : int or tuple of int
        Grid points (per axis).
    steps : int
        Floor steps per call.
    threads : int
        FFTW threads.
    effort : str
        FFTW planning effort, as the solver's (default ``"FFTW_MEASURE"``).
    """
    fft = InPlaceFFT(shape, effort, threads)
    size = int(np.prod(shape))
    psi = fft.data
    psi[...] = np.exp(1j * np.linspace(0, 1, size)).reshape(psi.shape)
    # a unitary-size factor keeps the norm bounded over many calls
    a = np.exp(-1j * np.linspace(0, 1, size)).reshape(psi.shape) / np.sqrt(size)
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
    return run


def best_of(fn, repeats, clock=time.perf_counter, scale=1e3):
    """Smallest time per unit of ``repeats`` calls of ``fn`` (which returns its count of
    units, e.g. steps), times ``scale`` (default milliseconds).

    The smallest, not the mean: on a shared machine other processes only ever add time,
    so the minimum is the estimate least disturbed by them.
    """
    best = np.inf
    for _ in range(repeats):
        t0 = clock()
        count = fn()
        best = min(best, (clock() - t0) / count)
    return best * scale


def timed_once(fn, clock=time.perf_counter, scale=1e3):
    """Time per unit of one call of ``fn`` (which returns its count of units), times ``scale``."""
    t0 = clock()
    count = fn()
    return (clock() - t0) / count * scale
