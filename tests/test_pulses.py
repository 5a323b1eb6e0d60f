"""Laser pulses: zero area, E = -dA/dt, documented lengths and widths, sums, tables."""

import math

import numpy as np
import pytest
from scipy.signal import hilbert

from tdse1d import units
from tdse1d.input.schema import load_input
from tdse1d.input.problem import build_field, build_problem
from tdse1d.physics.pulses import ENVELOPES, AnalyticPulse, FlatTop, Field, Gaussian, Sin2, TabulatedPulse

OMEGA = units.nm_to_omega(800.0)
PERIOD = 2 * math.pi / OMEGA
E0 = 0.05


def envelopes():
    return {
        "sin2": Sin2(10 * PERIOD),
        "gaussian": Gaussian(4 * PERIOD),
        "flat-top": FlatTop(10 * PERIOD, 2 * PERIOD),
    }


def test_every_registered_envelope_is_tested():
    assert set(envelopes()) == set(ENVELOPES)


def pulse_variants():
    # plain; with a carrier-envelope phase and a delay; with a linear chirp as well
    # (the instantaneous frequency w + b tau stays within 30 % of w)
    for name, env in envelopes().items():
        b = 0.3 * OMEGA / env.half_extent
        yield pytest.param(AnalyticPulse(env, OMEGA, E0), id=f"{name}")
        yield pytest.param(AnalyticPulse(env, OMEGA, E0, cep=1.1, delay=-300.0), id=f"{name}-cep")
        yield pytest.param(AnalyticPulse(env, OMEGA, E0, cep=-2.0, delay=150.0, chirp=b), id=f"{name}-chirp")


def sample(pulse, dt=0.01, margin=50.0):
    t = np.arange(pulse.start - margin, pulse.end + margin, dt)
    return t, pulse.electric(t), pulse.vector_potential(t)


def half_maximum_width(t, y):
    """Full width at half maximum of a single-peaked sampled curve, interpolated."""
    half = 0.5 * y.max()
    above = np.flatnonzero(y >= half)
    i, j = above[0], above[-1]
    left = np.interp(half, [y[i - 1], y[i]], [t[i - 1], t[i]])
    right = np.interp(half, [y[j + 1], y[j]], [t[j + 1], t[j]])
    return right - left


@pytest.mark.parametrize("pulse", list(pulse_variants()))
def test_zero_area_and_no_vector_potential_after(pulse):
    t, e, a = sample(pulse)
    area = np.trapezoid(e, t)
    # the Gaussian is cut where f = 1e-6 (documented), the others vanish smoothly
    tolerance = 3e-6 if isinstance(pulse.envelope, Gaussian) else 1e-9
    assert abs(area) < tolerance * E0 / OMEGA
    after = t > pulse.end
    before = t < pulse.start
    assert np.all(a[after] == 0) and np.all(a[before] == 0)
    assert np.all(e[after] == 0) and np.all(e[before] == 0)


@pytest.mark.parametrize("pulse", list(pulse_variants()))
def test_field_is_minus_the_derivative_of_the_vector_potential(pulse):
    t, e, a = sample(pulse, margin=0.0)
    numerical = -np.gradient(a, t)
    # stay two samples inside the support, where a truncated Gaussian's A jumps by 1e-6.
    # Central differences are second order except where the flat-top's f'' jumps (ramp
    # to plateau), first order there; a missing df/dtau or chirp term would be ~1e-2 E0
    inside = (t > pulse.start + 0.02) & (t < pulse.end - 0.02)
    assert np.max(np.abs(numerical[inside] - e[inside])) < 1e-5 * E0


@pytest.mark.parametrize("cep", [0.0, 0.7, math.pi / 2])
def test_cosine_convention_at_the_centre(cep):
    # E ~ E0 f cos(w tau + phi): with f'(0) = 0 the field at the centre is E0 cos(phi)
    pulse = AnalyticPulse(Sin2(6 * PERIOD), OMEGA, E0, cep=cep, delay=40.0)
    assert pulse.electric(40.0) == pytest.approx(E0 * math.cos(cep), abs=1e-14)


def test_sin2_total_length_from_cycles():
    config = load_input(
        "sin2.toml",
        text='[atom]\nsoftening = 1.0\n[[laser]]\nwavelength = "800 nm"\npeak_intensity = "1e14 W/cm^2"\n'
        'cycles = 10\ndelay = "5 fs"\n',
    )
    (pulse,) = build_field(config).pulses
    assert pulse.end - pulse.start == pytest.approx(10 * PERIOD, rel=1e-9)
    assert 0.5 * (pulse.start + pulse.end) == pytest.approx(units.fs_to_au(5.0), rel=1e-9)
    t = np.linspace(pulse.start, pulse.end, 20001)
    e = pulse.electric(t)
    # the field rises continuously from zero at the start and falls to zero at the end
    assert abs(pulse.electric(pulse.start + 1e-6)) < 1e-9 * pulse.peak_field
    assert abs(pulse.electric(pulse.end - 1e-6)) < 1e-9 * pulse.peak_field
    assert np.max(np.abs(e)) == pytest.approx(pulse.peak_field, rel=1e-4)
    assert pulse.peak_field == pytest.approx(units.intensity_to_field(1e14), rel=1e-9)


@pytest.mark.parametrize(
    "envelope, extra",
    [("gaussian", 'fwhm = "20 fs"'), ("sin2", 'fwhm = "20 fs"'), ("flat-top", "cycles = 16\nramp_cycles = 3")],
)
def test_intensity_fwhm_measured(envelope, extra):
    # FWHM of the intensity envelope |E|^2, measured on the field through its analytic
    # signal (Hilbert transform); for pulses of several cycles it agrees with the
    # envelope's f^2 to a few 1e-3
    config = load_input(
        "fwhm.toml",
        text=f'[atom]\nsoftening = 1.0\n[[laser]]\nwavelength = "800 nm"\npeak_intensity = "1e14 W/cm^2"\n'
        f'envelope = "{envelope}"\n{extra}\n',
    )
    (pulse,) = build_field(config).pulses
    t = np.arange(pulse.start - 200.0, pulse.end + 200.0, 0.05)
    measured = half_maximum_width(t, np.abs(hilbert(pulse.electric(t))) ** 2)
    assert measured == pytest.approx(pulse.envelope.intensity_fwhm, rel=5e-3)
    if envelope != "flat-top":
        assert measured == pytest.approx(units.fs_to_au(20.0), rel=5e-3)
    else:
        # sin^2 ramps: f^2 = 1/2 where sin^2(pi s / 2R) = 2^-1/2
        s_half = 2 * 3 * PERIOD / math.pi * math.asin(2**-0.25)
        assert measured == pytest.approx(16 * PERIOD - 2 * s_half, rel=5e-3)


def test_gaussian_truncation_as_documented():
    env = Gaussian(4 * PERIOD)
    assert env.value(env.half_extent * (1 - 1e-12)) == pytest.approx(Gaussian.TRUNCATION, rel=1e-6)
    assert env.half_extent == pytest.approx(3.16 * env.fwhm, rel=1e-3)


def test_pulses_add():
    ir = AnalyticPulse(Sin2(4 * PERIOD), OMEGA, 0.01)
    xuv = AnalyticPulse(Gaussian(10.0), 2.2, 0.02, cep=0.4, delay=27.0)
    total = Field([ir, xuv])
    t = np.linspace(-300.0, 300.0, 7001)
    assert np.allclose(total.electric(t), ir.electric(t) + xuv.electric(t), rtol=0, atol=1e-15)
    assert np.allclose(total.vector_potential(t), ir.vector_potential(t) + xuv.vector_potential(t), rtol=0, atol=1e-15)
    assert total.start == min(ir.start, xuv.start) and total.end == max(ir.end, xuv.end)
    assert total.omega == OMEGA


def test_tabulated_field_with_area():
    # a unipolar half-cycle pulse E0 exp(-t^2/tau^2) has area E0 tau sqrt(pi)
    tau = 20.0
    t = np.linspace(-8 * tau, 8 * tau, 2001)
    table = TabulatedPulse(t, E0 * np.exp(-((t / tau) ** 2)), omega=OMEGA, delay=10.0)
    assert table.area == pytest.approx(E0 * tau * math.sqrt(math.pi), rel=1e-8)
    assert table.start == pytest.approx(t[0] + 10.0) and table.end == pytest.approx(t[-1] + 10.0)
    # A keeps the value -area after the table; E = -dA/dt throughout
    assert table.vector_potential(table.end + 100.0) == pytest.approx(-table.area, rel=1e-12)
    tt = np.linspace(table.start, table.end, 40001)
    numerical = -np.gradient(table.vector_potential(tt), tt)
    assert np.max(np.abs(numerical[1:-1] - table.electric(tt)[1:-1])) < 1e-7 * E0
    assert table.electric(table.end + 1.0) == 0.0


def test_tabulated_copy_of_an_analytic_pulse_has_no_area():
    pulse = AnalyticPulse(Sin2(6 * PERIOD), OMEGA, E0, cep=0.5)
    t = np.linspace(pulse.start, pulse.end, 3001)
    table = TabulatedPulse(t, pulse.electric(t), omega=OMEGA)
    assert abs(table.area) < 1e-8 * E0 / OMEGA
    assert np.allclose(table.vector_potential(t), pulse.vector_potential(t), rtol=0, atol=1e-7 * E0 / OMEGA)


def test_non_zero_area_of_a_field_file_is_reported(tmp_path):
    tau_fs = 0.5
    t = np.linspace(-4, 4, 401) * tau_fs
    np.savetxt(tmp_path / "half_cycle.dat", np.column_stack([t, 0.01 * np.exp(-((t / tau_fs) ** 2))]))
    text = (
        "[atom]\nsoftening = 1.0\n[grid]\npoints = 256\nspacing = 0.4\n"
        '[[laser]]\nfield_file = "half_cycle.dat"\ntime_unit = "fs"\nfield_unit = "au"\nwavelength = "800 nm"\n'
    )
    (tmp_path / "run.toml").write_text(text)
    problem = build_problem(load_input(tmp_path / "run.toml"), with_states=False)
    (pulse,) = problem.field.pulses
    area = 0.01 * units.fs_to_au(tau_fs) * math.sqrt(math.pi)
    assert pulse.area == pytest.approx(area, rel=1e-6)
    assert any("non-zero area" in w for w in problem.warnings)
