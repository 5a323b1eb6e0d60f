"""Tests of tdse1d.spectra against exact results.

References used below: Fourier transforms of Gaussians and Parseval's theorem (exact);
the Gabor transform of a linear chirp has its ridge exactly at the instantaneous
frequency (Gaussian integral, derived in the test); harmonic-oscillator eigenfunctions (Hermite functions) are exact bound states.
"""

import math

import numpy as np
import pytest
import scipy.constants as sc
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.special import eval_hermite

from tdse1d import spectra
from tdse1d.spectra.harmonic import DIPOLE_FORMS, dipole_forms, harmonic_spectrum
from tdse1d.spectra.photoelectron import SPLITS, plane_wave_spectrum, project_out_bound
from tdse1d.spectra.windows import WINDOWS, Tukey
from tdse1d.spectra.time_frequency import default_gabor_width, gabor_transform
from tdse1d.spectra.cutoff import read_cutoff

OMEGA0 = 0.057  # 800 nm in a.u. (common practice)


# --------------------------------------------------------------------------- harmonics


def test_windows_follow_contract():
    assert {"hann", "blackman", "tukey", "none"} <= set(WINDOWS)
    for name, cls in WINDOWS.items():
        for n in (7, 64):
            w = cls().weights(n)
            assert w.shape == (n,), name
            assert np.all(w >= 0) and np.all(w <= 1), name
            # samples w(j/n) of a shape symmetric about u = 1/2
            assert np.allclose(w[1:], w[1:][::-1]), name
            if n % 2 == 0:
                assert np.isclose(w[n // 2], 1.0), name
    # 10 % taper: 5 % of the record at each end is below 1, the rest is flat
    w = Tukey().weights(1000)
    assert np.all(w[60:-60] == 1.0) and w[10] < 1.0
    with pytest.raises(ValueError, match="taper"):
        Tukey(1.5)


def test_gaussian_pulse_matches_analytic_transform():
    # f = exp(-t^2/(2 tau^2)) cos(W t) has the exact Fourier integral
    # tau sqrt(2 pi)/2 [exp(-(w-W)^2 tau^2/2) + exp(-(w+W)^2 tau^2/2)], real because f is
    # even about t = 0: this checks the dt scaling and the phase reference t = 0.
    tau, big_w = 40.0, 0.6
    t = np.arange(-400.0, 400.0, 0.25)
    f = np.exp(-(t**2) / (2 * tau**2)) * np.cos(big_w * t)
    spec = harmonic_spectrum(t, f, OMEGA0, window="none")
    w = spec.frequency
    exact = tau * math.sqrt(2 * math.pi) / 2 * (
        np.exp(-((w - big_w) ** 2) * tau**2 / 2) + np.exp(-((w + big_w) ** 2) * tau**2 / 2)
    )
    assert np.max(np.abs(spec.amplitude - exact)) < 1e-9 * exact.max()
    assert np.allclose(spec.order, w / OMEGA0)
    assert np.allclose(spec.power, np.abs(spec.amplitude) ** 2)
    assert np.allclose(spec.photon_energy_ev, w * sc.physical_constants["Hartree energy in eV"][0])
    assert w[0] == 0 and np.isclose(w[-1], np.pi / 0.25)


def test_power_does_not_depend_on_sampling_step():
    t_end = 20 * 2 * np.pi / OMEGA0
    spectra_by_step = []
    for n in (4000, 10000):
        t = np.linspace(0, t_end, n, endpoint=False)
        a = np.sin(np.pi * t / t_end) ** 2 * (np.cos(OMEGA0 * t) + 0.1 * np.cos(7 * OMEGA0 * t))
        spectra_by_step.append(harmonic_spectrum(t, a, OMEGA0))
    coarse, fine = spectra_by_step
    k = coarse.frequency.size - 1  # common frequencies: the record length is the same
    assert np.allclose(coarse.frequency, fine.frequency[: k + 1])
    assert np.allclose(coarse.power[:k], fine.power[:k], rtol=1e-9, atol=1e-12 * coarse.power.max())


@settings(max_examples=20, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n=st.integers(8, 300))
def test_parseval(seed, n):
    # int |f|^2 dt = (1/pi) int_0^inf |F|^2 dw for real f, in its exact discrete form
    rng = np.random.default_rng(seed)
    dt = rng.uniform(0.01, 2.0)
    t = rng.uniform(-50, 50) + dt * np.arange(n)
    f = rng.standard_normal(n)
    spec = harmonic_spectrum(t, f, 1.0, window="none")
    weight = np.full(spec.frequency.size, 2.0)
    weight[0] = 1.0
    if n % 2 == 0:
        weight[-1] = 1.0
    dw = 2 * np.pi / (n * dt)
    assert np.isclose(np.sum(weight * spec.power) * dw / (2 * np.pi), np.sum(f**2) * dt)


def test_zero_padding_interpolates_without_changing_bins():
    t = np.linspace(0, 500, 800, endpoint=False)
    a = np.cos(0.3 * t) * np.exp(-(((t - 250) / 80) ** 2))
    plain = harmonic_spectrum(t, a, OMEGA0)
    padded = harmonic_spectrum(t, a, OMEGA0, pad_factor=4)
    assert np.allclose(padded.frequency[::4], plain.frequency)
    assert np.allclose(padded.amplitude[::4], plain.amplitude, atol=1e-12)


def test_three_dipole_forms_agree_for_exact_derivatives():
    # d(t) = g(t) sum_q c_q cos(q w0 t) with a Gaussian g vanishing at the record ends;
    # velocity and acceleration are its exact derivatives.
    tau = 3 * 2 * np.pi / OMEGA0
    t = np.arange(-6 * tau, 6 * tau, 0.5)
    g = np.exp(-(t**2) / (2 * tau**2))
    g1 = -t / tau**2 * g
    g2 = (t**2 / tau**4 - 1 / tau**2) * g
    d = v = a = 0.0
    for q, c in ((1, 1.0), (3, 1e-2), (9, 1e-3), (15, 1e-4)):
        w = q * OMEGA0
        cos, sin = np.cos(w * t), np.sin(w * t)
        d = d + c * g * cos
        v = v + c * (g1 * cos - w * g * sin)
        a = a + c * (g2 * cos - 2 * w * g1 * sin - w**2 * g * cos)
    forms = dipole_forms(t, OMEGA0, dipole=d, velocity=v, acceleration=a, window="none")
    assert set(forms) == set(DIPOLE_FORMS)
    ref = forms["acceleration"]
    lines = [np.argmin(np.abs(ref.order - q)) for q in (1, 3, 9, 15)]
    for name in ("dipole", "velocity"):
        assert np.allclose(forms[name].amplitude[lines], ref.amplitude[lines], rtol=1e-8)
    with pytest.raises(ValueError, match="at least one"):
        dipole_forms(t, OMEGA0)


def test_harmonic_spectrum_checks_its_arguments():
    t = np.linspace(0, 10, 50)
    with pytest.raises(ValueError, match="uniformly spaced"):
        harmonic_spectrum(t**2, t, OMEGA0)
    with pytest.raises(ValueError, match="unknown window"):
        harmonic_spectrum(t, t, OMEGA0, window="gauss")
    with pytest.raises(ValueError, match="unknown form"):
        harmonic_spectrum(t, t, OMEGA0, form="position")
    with pytest.raises(ValueError, match="shape"):
        harmonic_spectrum(t, t[:-1], OMEGA0)
    with pytest.raises(ValueError, match="real"):
        harmonic_spectrum(t, t * 1j, OMEGA0)
    with pytest.raises(ValueError, match="pad_factor"):
        harmonic_spectrum(t, t, OMEGA0, pad_factor=1.5)


# --------------------------------------------------------------------------- cutoff


def synthetic_hhg_signal(cutoff_order, slope, seed, dip=None):
    """Odd-harmonic comb: plateau with +-0.6 decade scatter, then `slope` decades/order.

    Built in the time domain (12-cycle sin^2 pulse, white noise 1e-7) so that the
    spectrum has the finite line widths, leakage and noise floor of a real one.
    """
    rng = np.random.default_rng(seed)
    period = 2 * np.pi / OMEGA0
    t = np.arange(0, 12 * period, 0.2)
    a = np.zeros_like(t)
    for q in range(1, 121, 2):
        log_power = rng.uniform(-0.6, 0.6) - slope * max(q - cutoff_order, 0)
        if dip is not None and dip[0] <= q <= dip[1]:
            log_power -= 3.0
        a += 10 ** (log_power / 2) * np.cos(q * OMEGA0 * t + rng.uniform(0, 2 * np.pi))
    a = a * np.sin(np.pi * t / t[-1]) ** 2 + 1e-7 * rng.standard_normal(t.size)
    return harmonic_spectrum(t, a, OMEGA0)


@pytest.mark.parametrize("slope", [1.0, 2.0, 4.0])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_cutoff_of_synthetic_plateau(slope, seed):
    cutoff_order, ip = 41, 0.5
    spec = synthetic_hhg_signal(cutoff_order, slope, seed)
    est = read_cutoff(spec.frequency, spec.power, OMEGA0, ip, max_frequency=150 * OMEGA0)
    assert est.resolved
    # the documented bias: about drop / slope orders beyond the knee
    assert abs(est.order - (cutoff_order + 1.5 / slope)) <= 1.0
    if slope >= 2:
        assert abs(est.order - cutoff_order) <= 2.0
    assert np.isclose(est.frequency, est.order * OMEGA0)
    assert est.plateau_start >= ip + 2 * OMEGA0
    # the documented fixed point: the level is the median over the plateau it defines
    plateau = (spec.frequency >= est.plateau_start) & (spec.frequency <= est.frequency)
    assert np.isclose(est.plateau_log10, np.median(est.smoothed_log10[plateau]))


def test_cutoff_ignores_a_deep_dip_in_the_plateau():
    spec = synthetic_hhg_signal(41, 2.0, 0, dip=(23, 27))
    est = read_cutoff(spec.frequency, spec.power, OMEGA0, 0.5, max_frequency=150 * OMEGA0)
    assert abs(est.order - 41) <= 2.0


def test_cutoff_beyond_the_data_is_flagged():
    spec = synthetic_hhg_signal(200, 2.0, 0)
    est = read_cutoff(spec.frequency, spec.power, OMEGA0, 0.5, max_frequency=100 * OMEGA0)
    assert not est.resolved
    with pytest.raises(ValueError, match="no spectrum between"):
        read_cutoff(spec.frequency, spec.power, OMEGA0, 0.5, max_frequency=0.5)
    with pytest.raises(ValueError, match="increasing"):
        read_cutoff(spec.frequency[::-1], spec.power, OMEGA0, 0.5)


# --------------------------------------------------------------------------- Gabor


def test_gabor_of_a_cosine_has_the_analytic_peak():
    big_w, sigma = 1.0, 15.0
    t = np.arange(0, 600, 0.1)
    freqs = np.linspace(0.8, 1.2, 81)
    times, w, power = gabor_transform(t, np.cos(big_w * t), freqs, width=sigma, times=[200, 300])
    assert power.shape == (2, 81) and np.allclose(times, [200, 300])
    # |int cos(W t) exp(-(t-t')^2/(2 s^2)) exp(-i w t) dt|^2 at w = W: (s sqrt(2 pi)/2)^2,
    # the counter-rotating term being exp(-2 W^2 s^2) smaller
    peak = np.pi * sigma**2 / 2
    assert np.allclose(power[:, 40], peak, rtol=1e-9)
    exact = peak * np.exp(-((w - big_w) ** 2) * sigma**2)
    assert np.allclose(power, exact[None, :], rtol=1e-7, atol=1e-12 * peak)


def test_gabor_ridge_follows_a_linear_chirp():
    # For s = cos(w0 t + b t^2/2) the Gaussian integral gives |G(t', w)|^2 as a Gaussian in
    # w centred exactly at the instantaneous frequency w0 + b t'.
    w0, b, sigma = 0.5, 5e-4, 20.0
    t = np.arange(0, 2000, 0.2)
    freqs = np.arange(0.3, 1.7, 0.005)
    times, _, power = gabor_transform(t, np.cos(w0 * t + 0.5 * b * t**2), freqs, width=sigma)
    assert np.all(np.diff(times) > 0) and np.isclose(times[1] - times[0], sigma / 4, atol=0.2)
    inside = (times > 4 * sigma) & (times < t[-1] - 4 * sigma)
    ridge = freqs[np.argmax(power[inside], axis=1)]
    assert np.max(np.abs(ridge - (w0 + b * times[inside]))) <= 0.005 + 1e-9


def test_gabor_chunking_does_not_change_the_result():
    rng = np.random.default_rng(3)
    t = np.arange(0, 300, 0.3)
    s = rng.standard_normal(t.size) + 1j * rng.standard_normal(t.size)
    freqs = np.linspace(0, 3, 37)
    _, _, big = gabor_transform(t, s, freqs, omega0=OMEGA0 * 20)
    _, _, small = gabor_transform(t, s, freqs, omega0=OMEGA0 * 20, max_bytes=20000)
    assert np.allclose(big, small, rtol=1e-12)


def test_gabor_default_width_and_arguments():
    assert np.isclose(default_gabor_width(OMEGA0), 2 * np.pi / OMEGA0 / 10)
    t = np.arange(0, 100, 0.5)
    with pytest.raises(ValueError, match="omega0"):
        gabor_transform(t, np.cos(t), [1.0])
    with pytest.raises(ValueError, match="inside the record"):
        gabor_transform(t, np.cos(t), [1.0], width=5.0, times=[150.0])


# --------------------------------------------------------------------------- photoelectrons


def gaussian_packet(x, x0, p0, width):
    """Normalised Gaussian; |phi(p)|^2 = sqrt(2 width^2/pi) exp(-2 width^2 (p-p0)^2)."""
    return (2 * np.pi * width**2) ** -0.25 * np.exp(-((x - x0) ** 2) / (4 * width**2) + 1j * p0 * x)


def gaussian_momentum_density(p, p0, width):
    return np.sqrt(2 * width**2 / np.pi) * np.exp(-2 * width**2 * (p - p0) ** 2)


def centred_grid(n, dx):
    return (np.arange(n) - n // 2) * dx


def test_plane_wave_spectrum_of_a_gaussian_packet():
    x = centred_grid(1024, 0.2)
    p0, width = 1.2, 3.0
    spec = plane_wave_spectrum(x, 0.7 * gaussian_packet(x, -20.0, p0, width))
    p = spec.momentum
    assert np.isclose(spec.momentum_step, 2 * np.pi / (1024 * 0.2))
    assert np.isclose(spec.norm, 0.49, rtol=1e-12)
    exact = 0.49 * gaussian_momentum_density(p, p0, width)
    exact[0] *= 0.5  # p = 0 is shared between the two sides
    assert np.allclose(spec.density_right, exact, atol=1e-14)
    exact_left = 0.49 * gaussian_momentum_density(-p, p0, width)  # the tail at p < 0
    exact_left[0] *= 0.5
    assert np.allclose(spec.density_left, exact_left, atol=1e-14)
    mean_p = np.sum(p * (spec.density_right - spec.density_left)) * spec.momentum_step / spec.norm
    assert np.isclose(mean_p, p0, rtol=1e-10)
    # dP/dE = dP/dp / p, normalised over energy too
    assert np.isnan(spec.energy_density_right[0])
    assert np.allclose(spec.energy_density_right[1:] * p[1:], spec.density_right[1:])
    assert np.isclose(np.trapezoid(spec.energy_density[1:], spec.energy[1:]), 0.49, rtol=1e-6)
    assert np.allclose(spec.energy, p**2 / 2)


def test_left_and_right_electrons_by_momentum_and_by_position():
    # two packets that left the ion in opposite directions a long field-free time ago
    x = centred_grid(2048, 0.25)
    psi = np.sqrt(0.3) * gaussian_packet(x, -150.0, -1.0, 4.0) + np.sqrt(0.7) * gaussian_packet(
        x, 150.0, 1.5, 4.0
    )
    for split in SPLITS:
        spec = plane_wave_spectrum(x, psi, split=split)
        dp = spec.momentum_step
        assert spec.split == split
        assert np.isclose(np.sum(spec.density_left) * dp, 0.3, rtol=1e-9)
        assert np.isclose(np.sum(spec.density_right) * dp, 0.7, rtol=1e-9)
        assert np.allclose(
            spec.density_right, 0.7 * gaussian_momentum_density(spec.momentum, 1.5, 4.0), atol=1e-10
        )


def test_momentum_split_keeps_the_whole_norm_on_odd_grids():
    rng = np.random.default_rng(1)
    for n in (63, 64):
        x = centred_grid(n, 0.3)
        psi = rng.standard_normal(n) + 1j * rng.standard_normal(n)
        for split in SPLITS:
            spec = plane_wave_spectrum(x, psi, split=split)
            assert np.isclose(spec.norm, np.sum(np.abs(psi) ** 2) * 0.3, rtol=1e-12)


def oscillator_states(x, count):
    """Exact harmonic-oscillator eigenfunctions (omega = 1) on the grid."""
    return np.array(
        [
            np.exp(-(x**2) / 2)
            * eval_hermite(n, x)
            / math.sqrt(2.0**n * math.factorial(n) * math.sqrt(math.pi))
            for n in range(count)
        ]
    )


def test_project_out_bound_removes_exactly_the_bound_components():
    x = centred_grid(1024, 0.1)
    dx = 0.1
    states = oscillator_states(x, 3)
    continuum = gaussian_packet(x, 25.0, 2.0, 2.0)  # far from the well: orthogonal to 1e-30
    psi = 0.6 * states[0] + 0.5j * states[2] + 0.6 * continuum
    out = project_out_bound(psi, states, dx)
    assert np.allclose(states.conj() @ out * dx, 0, atol=1e-13)
    assert np.allclose(out, 0.6 * continuum, atol=1e-12)
    assert np.allclose(project_out_bound(out, states, dx), out, atol=1e-14)
    assert np.allclose(project_out_bound(psi, states[0], dx), psi - 0.6 * states[0], atol=1e-12)
    with pytest.raises(ValueError, match="orthonormal"):
        project_out_bound(psi, 2 * states, dx)
    with pytest.raises(ValueError, match="shape"):
        project_out_bound(psi, states[:, :-1], dx)


def test_module_has_no_io():
    import inspect

    source = inspect.getsource(spectra)
    for word in ("print(", "open(", "h5py", "np.save", "np.load"):
        assert word not in source


# ------------------------------------------------------- noise floor of the cutoff reading


def _plateau_with_floor(floor_log10, cutoff_order=41, plateau_log10=-2.0, seed=0):
    """Odd-harmonic comb with a flat plateau, a fall of 2 decades per order beyond the
    cutoff, and white noise of known level added on the whole axis."""
    w = np.arange(1, 4000) * (OMEGA0 / 20)  # 20 samples per order, up to ~200 orders
    q = w / OMEGA0
    comb = np.exp(-0.5 * ((q - 2 * np.round((q - 1) / 2) - 1) / 0.15) ** 2)
    level = plateau_log10 - 2.0 * np.maximum(q - cutoff_order, 0)
    noise = 10.0**floor_log10 * np.random.default_rng(seed).exponential(size=w.size)
    return w, 10.0**level * comb + noise


def test_cutoff_read_above_a_known_floor_is_resolved():
    # plateau 10 decades above the floor: the knee (order 41) is read, to within the
    # documented bias of drop / slope = 0.75 order plus one order of smoothing
    w, p = _plateau_with_floor(-12.0)
    est = read_cutoff(w, p, OMEGA0, 0.5)
    assert est.resolved and est.reason == ""
    assert abs(est.order - 41.75) <= 1.0
    # the estimated floor is the known one: median of log10 of exponential noise is
    # log10(ln 2) = -0.16 decade below its mean
    assert est.noise_floor_log10 == pytest.approx(-12.0 + math.log10(math.log(2)), abs=0.1)


@pytest.mark.parametrize("floor_log10", [-3.0, -1.0])
def test_cutoff_read_near_or_under_the_floor_is_unresolved(floor_log10):
    # the floor raised to 1 decade under, or above, the plateau: a 1.5-decade drop
    # cannot be seen, so no number is given
    w, p = _plateau_with_floor(floor_log10)
    est = read_cutoff(w, p, OMEGA0, 0.5)
    assert not est.resolved
    assert math.isnan(est.frequency) and math.isnan(est.order)
    assert est.reason.startswith(("unresolved (within", "unresolved (at or below")) and "noise floor" in est.reason


def test_companion_floor_makes_a_reading_in_leakage_unresolved():
    # a weak plateau sitting on a power-law leakage tail that dominates the far end
    # less than the plateau: read against the tail itself (the companion), the knee
    # stands under 1 decade above it, so it is unresolved; 8 decades weaker tail: read
    w = np.arange(1, 4000) * (OMEGA0 / 20)
    tail = 1e-6 * (w / OMEGA0) ** -5.0
    plateau = np.where(w / OMEGA0 < 41, 1e-13, 1e-18)
    assert read_cutoff(w, plateau + 1e-8 * tail, OMEGA0, 0.5, noise=1e-8 * tail).resolved
    est = read_cutoff(w, plateau + tail, OMEGA0, 0.5, noise=tail)
    assert not est.resolved and math.isnan(est.frequency)
