"""Observables recorded every k-th step: the same records, and unchanged harmonic spectra.

1. The records of a run with ``record_every = k`` are the records of a run that records
   every step, taken every k-th (exact: the steps are the same; the momentum within
   1e-12, the reassociated reduction argued in tests/test_compiled_loop.py), and the
   wavefunction is the same.
2. The rule of :func:`tdse1d.physics.observables.record_stride` (Nyquist of the records
   >= 4 times the highest frequency analysed): the harmonic spectrum of the records
   differs from that of the full series only by aliasing of content above 7 times the
   highest frequency analysed. Tolerance set before the run: the plateau (orders 3 to
   the cutoff estimate Ip + 3.17 Up; Krause, Schafer and Kulander, Phys. Rev. Lett. 68,
   3535 (1992); Corkum, Phys. Rev. Lett. 71, 1994 (1993)) moves by at most 0.01 decade
   RMS: half of the 0.02 decade the project accepts for a change of the time step,
   so that decimation uses at most half of that budget. The null, records whose
   Nyquist frequency is below the cutoff (k far beyond the rule), must fail it.
"""

from __future__ import annotations

import numpy as np
import pytest

from tdse1d.physics.absorbers import CosineMask
from tdse1d.physics.grid import Grid
from tdse1d.physics.observables import record_stride
from tdse1d.physics.potentials import Centre, SoftCore
from tdse1d.physics.propagation import SCHEMES, Propagator
from tdse1d.physics.pulses import AnalyticPulse, Field, Sin2
from tdse1d.physics.states import bound_states

PLATEAU_TOL = 0.01  # decade RMS, argued in the module docstring
GRID = Grid(1024, 0.25)
POTENTIAL = SoftCore((Centre(0.0, 1.0, 1.0),))
OMEGA, E0 = 0.057, 0.0675  # 800 nm, 1.6e14 W/cm^2
FIELD = Field([AnalyticPulse(Sin2(3 * 2 * np.pi / OMEGA), OMEGA, E0)])
H = 0.05
STEPS = int(round(3 * 2 * np.pi / OMEGA / H))
TIMES = FIELD.start + H * np.arange(STEPS + 1)
MASK = CosineMask().step_factor(GRID, 40.0, H)


def ground_state():
    """The ground state on the grid (normalised) and its energy (hartree)."""
    states = bound_states(GRID, POTENTIAL, 1)
    psi = states.wavefunctions[0].astype(complex)
    return psi / np.sqrt(GRID.integrate(abs(psi) ** 2)), float(states.energies[0])


def run(every, gauge="length", scheme="strang"):
    psi0, _ = ground_state()
    prop = Propagator(GRID, POTENTIAL, FIELD, TIMES, gauge, SCHEMES[scheme], absorber_factor=MASK, reference=psi0,
                      fft_effort="FFTW_ESTIMATE", record_every=every)
    prop.start(psi0)
    while prop.advance(300):
        pass
    prop.finish()
    return prop


@pytest.mark.parametrize("gauge", ["length", "velocity"])
def test_records_are_every_kth_record_of_the_full_series(gauge):
    full, sparse = run(1, gauge, "yoshida4"), run(7, gauge, "yoshida4")
    assert np.array_equal(full.psi, sparse.psi)
    assert np.array_equal(sparse.observables.time, full.observables.time[::7])
    for name in ("norm", "dipole", "acceleration", "initial_population"):
        assert np.array_equal(getattr(sparse.observables, name), getattr(full.observables, name)[::7]), name
    assert np.allclose(sparse.observables.momentum, full.observables.momentum[::7], rtol=0, atol=1e-12)


def power(time, signal, omegas):
    """|dt sum_j w_j s(t_j) exp(-i w t_j)|^2 with a Hann window w_j = sin^2(pi j / (n - 1))."""
    dt = time[1] - time[0]
    weights = np.hanning(time.size)
    return np.abs(dt * np.exp(-1j * np.outer(omegas, time)) @ (weights * signal)) ** 2


def plateau_rms(full, sparse, top):
    """RMS difference (decades) of the two harmonic spectra over orders 3 .. top / omega.

    Both are evaluated by the same windowed Fourier sum on the same frequencies (20 per
    harmonic order); the full series is cut to the span of the records (they end at the
    last step that is a multiple of the stride), where the Hann weights of the records
    are those of the full series at the same times.
    """
    span = (sparse.observables.time.size - 1) * sparse.record_every + 1
    omegas = OMEGA * np.arange(3.0, top / OMEGA, 0.05)
    a = power(full.observables.time[:span], full.observables.acceleration[:span], omegas)
    b = power(sparse.observables.time, sparse.observables.acceleration, omegas)
    return float(np.sqrt(np.mean((np.log10(a) - np.log10(b)) ** 2)))


def test_the_rule_keeps_the_plateau_and_a_coarser_stride_does_not():
    _, energy = ground_state()
    up = E0**2 / (4 * OMEGA**2)
    cutoff = -energy + 3.17 * up
    k = record_stride(H, 1.5 * cutoff)
    assert k > 1
    full = run(1)
    sparse = run(k)
    assert plateau_rms(full, sparse, cutoff) < PLATEAU_TOL
    # null: records with their Nyquist frequency at 0.7 of the cutoff
    coarse = int(np.pi / (0.7 * cutoff * H))
    assert plateau_rms(full, run(coarse), 0.7 * cutoff) > 10 * PLATEAU_TOL


def test_record_stride_rule():
    assert record_stride(0.05, 2.5) == int(np.pi / (4 * 2.5 * 0.05))
    assert record_stride(1.0, 100.0) == 1
    with pytest.raises(ValueError):
        record_stride(0.05, 2.5, margin=0.5)
