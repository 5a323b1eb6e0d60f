"""A run records its per-step series every k-th step (the rule of
:func:`tdse1d.runs.runner.record_stride_of`), and what it reads off them is unchanged.

Tolerances, set before the runs:

* Populations, ionization, final state, surface-flux spectrum: the steps are the same
  operations whatever the stride (the steps between records only skip the sums), so
  these agree exactly (tests/test_record_stride.py shows the same wavefunction).
* Harmonic spectrum: the records are the very values of a full record at those steps,
  so the spectrum below the highest frequency analysed w_a changes only (i) by aliasing
  of content above 7 w_a (rule margin 4: Nyquist >= 4 w_a), many decades below the
  plateau, and (ii) because the record ends at the last multiple of k, up to k - 1
  field-free steps early: the Hann window is then shorter by (k - 1) / S relative, which
  moves each amplitude by about that fraction (2e-3 here, 1e-3 decade). The plateau
  (orders 3 to the cutoff estimate Ip + 3.17 Up: Krause, Schafer and Kulander, Phys.
  Rev. Lett. 68, 3535 (1992); Corkum, Phys. Rev. Lett. 71, 1994 (1993)) may move by
  0.01 decade RMS, half of the 0.02 decade the project accepts for a change of the time
  step (the budget of tests/test_record_stride.py). The null, records whose Nyquist
  frequency is 0.7 of the cutoff, must move it by more than ten times that.
* Time-frequency map: not tested here (see docs/performance.md): its window centres
  snap to the sample times of its own low-pass filtered series, which depend on the
  sampling, and its cells 3 to 4 decades below the maximum differ by more than the
  0.01 decade argued for the spectrum even at shared centres.
* Resume: a run stopped twice and resumed writes the same file as one run straight
  through, bitwise: the same steps in the same chunks, checkpoints at record steps.
"""

from __future__ import annotations

import functools
import math
from unittest import mock

import h5py
import numpy as np
import pytest
from conftest import small_input

from tdse1d import api
from tdse1d.input.problem import build_problem
from tdse1d.input.schema import load_input
from tdse1d.io.result_file import is_complete
from tdse1d.runs.checkpoint import checkpoint_path
from tdse1d.runs import runner
from tdse1d.runs.runner import RunControl, RunInterrupted, record_stride_of, simulate
from tdse1d.spectra.windows import _window

PLATEAU_TOL = 0.01  # decade RMS, argued in the module docstring


@pytest.fixture(scope="module")
def problem():
    text = small_input(intensity="1e14 W/cm^2", time_step=0.05, cycles=2, snapshots=0)
    return build_problem(load_input("decimated", [], text=text))


@pytest.fixture(scope="module")
def runs(problem):
    k = record_stride_of(problem)
    cutoff = max(p.cutoff_energy for p in problem.pulse_estimates)
    coarse = int(math.pi / (0.7 * cutoff * problem.time.step))
    return {every: simulate(problem, fft_effort="FFTW_ESTIMATE", record_every=every) for every in (1, k, coarse)}


def _power(time, signal, omegas):
    """|dt sum_j w_j s(t_j) exp(-i w t_j)|^2 with the run's Hann weights over the record."""
    dt = time[1] - time[0]
    weights = _window("hann").weights(time.size)
    return np.abs(dt * np.exp(-1j * np.outer(omegas, time)) @ (weights * signal)) ** 2


def _plateau_rms(a, b, problem, top):
    omega = problem.field.omega
    omegas = omega * np.arange(3.0, top / omega, 0.05)
    pa = _power(a.observables.time, a.observables.acceleration, omegas)
    pb = _power(b.observables.time, b.observables.acceleration, omegas)
    return float(np.sqrt(np.mean((np.log10(pa) - np.log10(pb)) ** 2)))


def test_default_run_records_at_the_rule_and_reads_the_recorded_axis(problem, runs):
    k = record_stride_of(problem)
    assert k > 1  # the case decimates, else the comparisons below test nothing
    full, sparse = runs[1], runs[k]
    assert sparse.record_every == k and full.record_every == 1
    times = problem.time.times
    records = problem.time.steps // k + 1
    assert np.array_equal(sparse.observables.time, times[::k][:records])
    for name in ("norm", "dipole", "acceleration", "initial_population"):
        assert np.array_equal(getattr(sparse.observables, name), getattr(full.observables, name)[::k]), name
    # the harmonic spectrum lies on the recorded axis: Nyquist pi / (k dt)
    assert sparse.harmonic.frequency[-1] <= math.pi / (k * problem.time.step) * (1 + 1e-12)
    # what looks at the wavefunction itself is the same, to the last bit
    assert np.array_equal(sparse.final_state, full.final_state)
    assert np.array_equal(sparse.bound_population, full.bound_population)
    assert sparse.ionization_probability == full.ionization_probability
    assert sparse.absorbed == full.absorbed
    for method in full.photoelectrons:
        assert np.array_equal(sparse.photoelectrons[method].density_right, full.photoelectrons[method].density_right)


def test_harmonic_spectrum_of_the_decimated_run_matches_and_a_coarser_stride_does_not(problem, runs):
    k = record_stride_of(problem)
    cutoff = max(p.cutoff_energy for p in problem.pulse_estimates)
    coarse = max(runs)
    full = runs[1]
    assert _plateau_rms(full, runs[k], problem, cutoff) < PLATEAU_TOL
    # null: Nyquist frequency of the records at 0.7 of the cutoff
    assert _plateau_rms(full, runs[coarse], problem, cutoff) > 10 * PLATEAU_TOL


class _StopAt:
    """Progress callback asking the run to stop once it passed ``step``."""

    def __init__(self, control, step):
        self.control, self.step = control, step

    def __call__(self, step, steps):
        if step >= self.step:
            self.control.request_stop()


def _numeric_datasets(path):
    out = {}
    with h5py.File(path, "r") as f:
        def visit(name, obj):
            if isinstance(obj, h5py.Dataset) and obj.dtype.kind in "biufc" and not name.startswith("run_info"):
                out[name] = obj[()]
        f.visititems(visit)
        out["@record_stride"] = f.attrs["record_stride"]
    return out


def test_resumed_decimated_run_is_bitwise_the_straight_run(tmp_path):
    text = small_input(intensity="1e14 W/cm^2", time_step=0.05, cycles=2, snapshots=5)
    problem = build_problem(load_input("decimated", [], text=text))
    k = record_stride_of(problem)
    assert k > 1
    full = tmp_path / "full.h5"
    # one FFTW plan for every run: plans chosen by timing differ between runs, and so
    # does their round-off (tests/regression/fingerprint.py)
    planned = functools.partial(runner.simulate, fft_effort="FFTW_ESTIMATE")
    with mock.patch.object(runner, "simulate", planned):
        api.run_problem(problem, full)
        out = tmp_path / "cut.h5"
        for stop in (problem.time.steps // 3 + 1, 2 * problem.time.steps // 3 + 1):
            control = RunControl()
            with pytest.raises(RunInterrupted):
                api.run_problem(problem, out, progress=_StopAt(control, stop), resume=True, control=control)
            assert checkpoint_path(out).exists()
        api.run_problem(problem, out, resume=True)
    assert is_complete(out)
    a, b = _numeric_datasets(full), _numeric_datasets(out)
    assert a["@record_stride"] == k
    assert sorted(a) == sorted(b)
    timings = ("seconds", "wall", "elapsed")
    for key in a:
        if any(t in key for t in timings):
            continue
        assert np.array_equal(a[key], b[key], equal_nan=True), key
