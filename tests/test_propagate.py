"""Tests of the split-operator propagator, the runner, the result file and ``tdse1d run``.

Each check names the outside result it rests on:

* unitarity of the split-operator step and energy conservation of a time-independent
  Hamiltonian (exact); time reversibility of symmetric compositions (exact for a real
  potential: complex conjugation reverses time);
* orders of convergence of the Strang splitting (2) and of the Yoshida and Suzuki
  compositions (4) (Yoshida, Phys. Lett. A 150, 262 (1990); Suzuki, Phys. Lett. A 146,
  319 (1990));
* the spreading of a free Gaussian wave packet (textbook: Griffiths, Introduction to
  Quantum Mechanics, problem 2.22 in the 2nd edition, from memory);
* the Ehrenfest theorem, exact for a driven harmonic oscillator: <x> obeys the classical
  equation of motion (solved here with scipy.integrate.solve_ivp);
* the drift momentum of a free electron in a pulse, p = p(t0) + A(t) - A(t0) for charge
  -1 and E = -dA/dt (the simple-man model: van Linden van den Heuvell and Muller, in
  Multiphoton Processes (Cambridge, 1988); Corkum, Burnett and Brunel, Phys. Rev. Lett.
  62, 1259 (1989); from memory);
* an independent propagator: fourth-order Magnus exponentials of the same dense
  Fourier-grid Hamiltonian applied with scipy.sparse.linalg.expm_multiply (Magnus,
  Commun. Pure Appl. Math. 7, 649 (1954); the two-point fourth-order form as in Blanes,
  Casas, Oteo and Ros, Phys. Rep. 470, 151 (2009), from memory);
* gauge invariance of physical observables (exact);
* Rabi oscillations in a weak resonant field at Omega = E0 |<0|x|1>| (common practice;
  rotating-wave approximation);
* the harmonic cutoff near Ip + 3.17 Up (Krause, Schafer and Kulander, Phys. Rev. Lett.
  68, 3535 (1992); Corkum, Phys. Rev. Lett. 71, 1994 (1993)) and its quantum
  correction 1.32 Ip + 3.17 Up (Lewenstein et al., Phys. Rev. A 49, 2117 (1994)).
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import h5py
import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import curve_fit
from scipy.sparse.linalg import expm_multiply

from tdse1d import api, spectra
from tdse1d.cli import program as cli
from tdse1d.io import guarded_file, result_file
from tdse1d.input.schema import load_input, parse_input
from tdse1d.input.spec import tomllib
from tdse1d.physics.grid import Grid
from tdse1d.physics.potentials import Centre, HarmonicOscillator, Potential, SoftCore
from tdse1d.physics.propagation import SCHEMES, Propagator, Strang
from tdse1d.physics.pulses import AnalyticPulse, Field, Pulse, Sin2
from tdse1d.physics.states import bound_states, hamiltonian_matrix
from tdse1d.units import HARTREE_EV

INPUTS = Path(__file__).resolve().parent.parent / "inputs"
# run inputs (scan plans, with their ``base`` key, are inputs of another command)
EXAMPLES = sorted(p for p in INPUTS.glob("*.toml") if "atom" in tomllib.loads(p.read_text()))
FFT_EFFORT = "FFTW_ESTIMATE"  # small grids: planning must not dominate the tests
SQRT2 = math.sqrt(2.0)


class Zero(Potential):
    """V = 0: a free electron."""

    name = "zero"

    def value(self, x):
        return np.zeros_like(np.asarray(x, dtype=float))

    def gradient(self, x):
        return np.zeros_like(np.asarray(x, dtype=float))


class ContinuousWave(Pulse):
    """E(t) = E0 cos(w t) switched on at t = 0, A = -(E0/w) sin(w t) (so E = -dA/dt)."""

    def __init__(self, omega, peak_field):
        self.omega, self.peak_field = omega, peak_field
        self.start, self.end = 0.0, math.inf

    def vector_potential(self, t):
        return -(self.peak_field / self.omega) * np.sin(self.omega * np.asarray(t, dtype=float))

    def electric(self, t):
        return self.peak_field * np.cos(self.omega * np.asarray(t, dtype=float))


class Reversed:
    """The field E(t0 + t1 - t) of a field on [t0, t1]: the time-reversed drive."""

    def __init__(self, field, t0, t1):
        self.field, self.t0, self.t1 = field, t0, t1
        self.pulses = field.pulses

    def electric(self, t):
        return self.field.electric(self.t0 + self.t1 - np.asarray(t, dtype=float))

    def vector_potential(self, t):
        # E = -dA/dt holds for the reversed field with A_rev(t) = -A(t0 + t1 - t)
        return -self.field.vector_potential(self.t0 + self.t1 - np.asarray(t, dtype=float))


def soft_core_hydrogen():
    """Soft-core atom with a^2 = 2, whose ground state lies at -0.5 Hartree (Javanainen,
    Eberly and Su, Phys. Rev. A 38, 3430 (1988), from memory)."""
    return SoftCore((Centre(0.0, 1.0, SQRT2),))


def sin2_field(omega, peak_field, cycles, cep=0.0):
    return Field([AnalyticPulse(Sin2(cycles * 2 * math.pi / omega), omega, peak_field, cep=cep)])


def propagate(grid, potential, field, times, psi0, scheme="strang", gauge="length"):
    p = Propagator(grid, potential, field, times, gauge=gauge, scheme=SCHEMES[scheme], fft_effort=FFT_EFFORT)
    p.start(psi0)
    p.advance(p.steps)
    p.finish()
    return p


def l2(a, b, dx):
    return math.sqrt(float(np.sum(np.abs(a - b) ** 2) * dx))


def gaussian(x, x0, sigma, p0):
    """Normalised Gaussian packet with |psi|^2 of standard deviation sigma."""
    psi = np.exp(-((x - x0) ** 2) / (4 * sigma**2) + 1j * p0 * x)
    return psi / math.sqrt(np.sum(np.abs(psi) ** 2) * (x[1] - x[0]))


@pytest.fixture(autouse=True)
def _no_wisdom(monkeypatch):
    # command-line runs must not write FFTW wisdom into the user's cache
    monkeypatch.setenv("TDSE1D_NO_WISDOM", "1")


@pytest.fixture(scope="module")
def atom():
    grid = Grid(256, 0.4)
    pot = soft_core_hydrogen()
    return grid, pot, bound_states(grid, pot, count=3)


# ---------------------------------------------------------------- conservation laws


@pytest.mark.parametrize("scheme", sorted(SCHEMES))
def test_field_free_norm_and_energy_are_conserved(atom, scheme):
    # exact: the split-operator step is unitary and H has no time dependence
    grid, pot, states = atom
    c = np.array([0.6, 0.5j, 0.4 + 0.3j])
    psi0 = (c[:, None] * states.wavefunctions).sum(axis=0)
    psi0 /= math.sqrt(np.sum(np.abs(psi0) ** 2) * grid.spacing)
    h = hamiltonian_matrix(grid, pot)

    def energy(psi):
        return float(np.vdot(psi, h @ psi).real * grid.spacing)

    v, t = pot.value(grid.x), grid.kinetic_energy()

    def one_step(psi, dt):
        # the composition written out with numpy: prod_i V(w_i dt / 2) T(w_i dt) V(w_i dt / 2)
        for w in SCHEMES[scheme].weights:
            half = np.exp(-0.5j * w * dt * v)
            psi = half * np.fft.ifft(np.exp(-1j * w * dt * t) * np.fft.fft(half * psi))
        return psi

    e0 = energy(psi0)
    assert math.isclose(e0, float(np.abs(c) ** 2 @ states.energies / np.sum(np.abs(c) ** 2)), abs_tol=1e-12)
    errors = {}
    for dt in (0.04, 0.02):
        times = np.linspace(0.0, 40.0, int(round(40.0 / dt)) + 1)
        p = Propagator(grid, pot, Field([]), times, scheme=SCHEMES[scheme], fft_effort=FFT_EFFORT)
        p.start(psi0)
        # exactly conserved by the discrete propagation psi_n = U^n psi_0: <psi_n|U|psi_n>
        u0 = np.vdot(psi0, one_step(psi0, dt))
        drift = []
        while p.step_index < p.steps:
            p.advance(100)
            drift.append(abs(energy(p.psi) - e0))
            assert abs(np.vdot(p.psi, one_step(p.psi, dt)) - u0) * grid.spacing < 1e-10
        assert np.all(np.abs(p.observables.norm - 1.0) < 1e-10)
        errors[dt] = max(drift)
    order = SCHEMES[scheme].order
    if order == 4:
        # energy conserved to 1e-10 at dt = 0.02 a.u. by the fourth-order compositions
        assert errors[0.02] < 1e-10
    else:
        # Strang conserves a modified energy: <H> stays within O(dt^2), no secular drift
        assert errors[0.02] < 1e-6
    ratio = errors[0.04] / errors[0.02]
    assert ratio > 0.7 * 2**order


@pytest.mark.parametrize("gauge", ["length", "velocity"])
@pytest.mark.parametrize("scheme", sorted(SCHEMES))
def test_steps_are_time_reversible(atom, scheme, gauge):
    # The Propagator refuses decreasing times, so time is reversed by complex
    # conjugation: for a real potential V + x E(t), conj(psi) obeys the Schrodinger
    # equation with the field run backwards, E(t0 + t1 - t) (in the velocity gauge
    # conjugation turns p into -p, so A runs backwards with its sign flipped, which is
    # the same field). A symmetric composition S(h) satisfies S(-h) = S(h)^-1, so
    # forward, conjugate, forward with the reversed field and conjugate returns the
    # initial state to rounding (exact).
    grid, pot, states = atom
    psi0 = (states.wavefunctions[0] + 1j * states.wavefunctions[1]) / SQRT2
    field = sin2_field(0.3, 0.05, 2)
    t0, t1 = field.start, field.end
    times = np.linspace(t0, t1, 401)
    p = propagate(grid, pot, field, times, psi0, scheme, gauge)
    moved = l2(p.psi, psi0, grid.spacing)
    assert moved > 0.1  # the pulse did something
    back = propagate(grid, pot, Reversed(field, t0, t1), times, np.conj(p.psi), scheme, gauge)
    # In the velocity gauge the grid's unpaired Nyquist mode k = -pi/dx has no partner
    # +pi/dx for conjugation to map it to, so its term A k breaks the symmetry; the
    # error is of the size of that mode's amplitude (~1e-9 here) instead of rounding.
    tolerance = 1e-11 if gauge == "length" else 1e-7
    assert l2(np.conj(back.psi), psi0, grid.spacing) < tolerance


def convergence_steps(order):
    """Time steps (a.u.) of the order measurement: where the error of a composition of
    that order is in its asymptotic range on the problem below (the fourth-order ones at
    0.2 a.u. are not yet: half steps), and far above the reference's error."""
    return (0.2, 0.1, 0.05) if order <= 2 else (0.1, 0.05, 0.025)


def observed_order(scheme, atom):
    """The measured order of convergence of ``scheme`` (a SplittingScheme subclass), the
    slope of log error against log step, with the field on, length gauge."""
    grid, pot, states = atom
    field = sin2_field(0.3, 0.05, 2)
    t0, t1 = field.start, field.end

    def final(cls, dt):
        times = np.linspace(t0, t1, int(round((t1 - t0) / dt)) + 1)
        p = Propagator(grid, pot, field, times, scheme=cls, fft_effort=FFT_EFFORT)
        p.start(states.wavefunctions[0])
        p.advance(p.steps)
        return p.psi.copy()

    # reference: the five-stage fourth-order composition at a quarter of the smallest
    # fourth-order step; its error is 4^4 = 256 times below Suzuki's at 0.025 a.u.
    reference = final(SCHEMES["suzuki4"], 0.00625)
    dts = convergence_steps(scheme.order)
    errors = [l2(final(scheme, dt), reference, grid.spacing) for dt in dts]
    return float(np.polyfit(np.log(dts), np.log(errors), 1)[0]), errors


@pytest.mark.parametrize("scheme", sorted(SCHEMES))
def test_observed_order_of_convergence(atom, scheme):
    # every registered scheme shows the order it declares (2 for Strang, 4 for Yoshida
    # 1990 and Suzuki 1990); the band of 0.3 is the one this test used before it was
    # parametrised over the table, well inside the gap of 2 between the orders offered
    slope, errors = observed_order(SCHEMES[scheme], atom)
    assert abs(slope - SCHEMES[scheme].order) < 0.3, (errors, slope)


def test_order_measurement_tells_orders_apart(atom):
    # null case: a second-order scheme declared fourth order would fail the test above
    class FakeFourth(Strang):
        order = 4

    slope, _ = observed_order(FakeFourth, atom)
    assert abs(slope - FakeFourth.order) >= 0.3, slope


# ------------------------------------------------------------------ exact solutions


def test_free_gaussian_spreads_as_in_textbook():
    # sigma(t) = sigma0 sqrt(1 + (t / (2 sigma0^2))^2), <x>(t) = x0 + p0 t (Griffiths)
    grid = Grid(1024, 0.2)
    sigma0, x0, p0 = 1.0, -20.0, 1.5
    times = np.linspace(0.0, 24.0, 241)
    p = Propagator(grid, Zero(), Field([]), times, fft_effort=FFT_EFFORT)
    p.start(gaussian(grid.x, x0, sigma0, p0))
    x = grid.x
    while p.step_index < p.steps:
        p.advance(40)
        t = p.time
        d = np.abs(p.psi) ** 2 * grid.spacing
        mean = d @ x
        width = math.sqrt(d @ (x - mean) ** 2)
        assert math.isclose(mean, x0 + p0 * t, abs_tol=1e-9)
        assert math.isclose(width, sigma0 * math.sqrt(1 + (t / (2 * sigma0**2)) ** 2), rel_tol=1e-9)
    assert np.allclose(p.observables.dipole, x0 + p0 * times, atol=1e-9)


@pytest.mark.parametrize("gauge", ["length", "velocity"])
def test_driven_harmonic_oscillator_follows_newton(gauge):
    # Ehrenfest: for V = w^2 x^2 / 2 the force is linear, so <x>'' = -w^2 <x> - E(t) exactly
    w = 0.25
    grid = Grid(256, 0.2)
    pot = HarmonicOscillator(w)
    field = sin2_field(0.35, 0.04, 3)
    t0, t1 = field.start, field.end + 40.0
    times = np.linspace(t0, t1, int(round((t1 - t0) / 0.05)) + 1)
    psi0 = bound_states(grid, pot, count=1).wavefunctions[0]
    p = propagate(grid, pot, field, times, psi0, "yoshida4", gauge)
    obs = p.observables

    def newton(t, y):
        return [y[1], -(w**2) * y[0] - field.electric(t)]

    ode = solve_ivp(newton, (t0, t1), [0.0, 0.0], t_eval=times, rtol=1e-11, atol=1e-12, method="DOP853")
    x, v = ode.y
    assert np.max(np.abs(x)) > 0.5  # a real excursion
    assert np.allclose(obs.dipole, x, atol=1e-6)
    assert np.allclose(obs.momentum, v, atol=1e-6)
    assert np.allclose(obs.acceleration, -(w**2) * x - field.electric(times), atol=1e-6)
    assert np.allclose(obs.norm, 1.0, atol=1e-12)


@pytest.mark.parametrize("gauge", ["length", "velocity"])
def test_free_electron_drift_momentum(gauge):
    # simple-man model: <p>(t) = <p>(t0) + A(t) - A(t0) (charge -1, E = -dA/dt); after the
    # pulse the electron drifts with <p>(t0) - A(t0). Started mid-pulse so that A(t0) != 0.
    grid = Grid(2048, 0.25)
    omega, e0 = 0.3, 0.1
    field = sin2_field(omega, e0, 3)
    t0 = -0.5 * math.pi / omega  # a quarter cycle before the centre, where |A| is largest
    t1 = field.end + 30.0
    times = np.linspace(t0, t1, int(round((t1 - t0) / 0.05)) + 1)
    a = field.vector_potential(times)
    assert abs(a[0]) > 0.1  # the test needs A(t0) != 0
    p0 = 0.4
    psi0 = gaussian(grid.x, 0.0, 5.0, p0)
    # the state is given in the length gauge; the velocity gauge works with exp(-i A x) psi
    if gauge == "velocity":
        psi0 = psi0 * np.exp(-1j * a[0] * grid.x)
    p = propagate(grid, Zero(), field, times, psi0, "yoshida4", gauge)
    obs = p.observables
    assert np.allclose(obs.momentum, p0 + a - a[0], atol=1e-8)
    after = times > field.end
    drift = p0 - a[0]
    slope = np.polyfit(times[after], obs.dipole[after], 1)[0]
    assert math.isclose(slope, drift, rel_tol=1e-8)
    assert abs(drift - p0) > 0.1


def test_agrees_with_magnus_expm_multiply_propagator():
    # An independent propagator: fourth-order Magnus steps of H(t) = H0 + x E(t), with H0
    # the dense Fourier-grid Hamiltonian, each applied with scipy's expm_multiply.
    # Omega = -i h (H0 + x (E1 + E2)/2) - (sqrt(3)/12) h^2 [H(t2), H(t1)] at the Gauss
    # points t1,2 = t + (1/2 -+ sqrt(3)/6) h, and [H(t2), H(t1)] = (E1 - E2) [H0, x].
    grid = Grid(128, 0.4)
    pot = soft_core_hydrogen()
    psi0 = bound_states(grid, pot, count=1).wavefunctions[0].astype(complex)
    field = sin2_field(0.4, 0.06, 2)
    t0, t1 = field.start, field.end
    h0 = hamiltonian_matrix(grid, pot)
    x = grid.x
    comm = h0 * (x[None, :] - x[:, None])  # [H0, x]_ij = H0_ij (x_j - x_i)

    def magnus(h):
        n = int(round((t1 - t0) / h))
        h = (t1 - t0) / n
        psi = psi0.copy()
        gauss = np.array([0.5 - math.sqrt(3) / 6, 0.5 + math.sqrt(3) / 6])
        for t in t0 + h * np.arange(n):
            e1, e2 = field.electric(t + h * gauss)
            omega = -1j * h * (h0 + np.diag(x * 0.5 * (e1 + e2))) - (math.sqrt(3) / 12) * h**2 * (e1 - e2) * comm
            psi = expm_multiply(omega, psi, traceA=complex(np.trace(omega)))
        return psi

    reference = magnus(0.5)
    assert l2(magnus(1.0), reference, grid.spacing) < 1e-4  # the reference's own error is small
    diffs = []
    for dt in (0.1, 0.05):
        times = np.linspace(t0, t1, int(round((t1 - t0) / dt)) + 1)
        diffs.append(l2(propagate(grid, pot, field, times, psi0).psi, reference, grid.spacing))
    # the difference is the Strang splitting error: small and shrinking as dt^2
    assert diffs[0] < 1e-3
    assert 3.0 < diffs[0] / diffs[1] < 5.0, diffs


# ------------------------------------------------------------------ gauge invariance


def small_case(gauge, **propagation):
    return parse_input({
        "atom": {"softening": SQRT2},
        "laser": [{"wavelength": "800 nm", "peak_intensity": "1.5e14 W/cm^2", "envelope": "sin2", "cycles": 4}],
        "grid": {"points": 512, "spacing": 0.3},
        "propagation": {"gauge": gauge, "order": 2, "time_step": 0.1, "after_pulse": "0.3 fs", **propagation},
        "absorber": {"type": "mask", "width": 30.0},
        "output": {"snapshots": 5},
        "spectra": {"photoelectrons": "none"},
    })


def test_length_and_velocity_gauge_agree(tmp_path):
    # physical observables do not depend on the gauge (exact)
    out = {g: api.run(small_case(g), tmp_path / f"{g}.h5") for g in ("length", "velocity")}
    rl, rv = out["length"].result, out["velocity"].result
    assert rl.ionization_probability > 0.05
    assert math.isclose(rl.ionization_probability, rv.ionization_probability, rel_tol=1e-3)
    assert math.isclose(rl.absorbed, rv.absorbed, rel_tol=1e-3)
    est = out["length"].problem.pulse_estimates[0]
    order = rl.harmonic.order
    plateau = (order > 3) & (order < est.cutoff_order)
    power_l, power_v = rl.harmonic.power[plateau], rv.harmonic.power[plateau]
    assert math.isclose(power_l.sum(), power_v.sum(), rel_tol=1e-3)
    assert np.median(np.abs(np.log10(power_l / power_v))) < 1e-3
    dipole_l, dipole_v = rl.observables.dipole, rv.observables.dipole
    assert np.max(np.abs(dipole_l - dipole_v)) < 1e-3 * np.max(np.abs(dipole_l))
    # kinetic momentum: <p> in the length gauge, <p + A> in the velocity gauge
    momentum_l, momentum_v = rl.observables.momentum, rv.observables.momentum
    assert np.max(np.abs(momentum_l - momentum_v)) < 1e-3 * np.max(np.abs(momentum_l))


# ------------------------------------------------------------------ Rabi oscillations


def test_rabi_oscillation_in_weak_resonant_field():
    # two-level Rabi flopping: P0(t) = 1 - sin^2(Omega t / 2), Omega = E0 |<0|x|1>|
    # (rotating-wave approximation, common practice); E0 is small so that the
    # Bloch-Siegert and Stark shifts (~ Omega^2 / omega) are below a per cent of Omega
    grid = Grid(256, 0.4)
    pot = SoftCore((Centre(0.0, 1.0, 1.0),))
    states = bound_states(grid, pot, count=2)
    omega01 = states.energies[1] - states.energies[0]
    d01 = abs(states.wavefunctions[0] @ (grid.x * states.wavefunctions[1]) * grid.spacing)
    e0 = 0.004
    rabi = e0 * d01
    times = np.linspace(0.0, 1.3 * 2 * math.pi / rabi, 8001)
    p = Propagator(grid, pot, Field([ContinuousWave(omega01, e0)]), times, reference=states.wavefunctions[0],
                   fft_effort=FFT_EFFORT)
    p.start(states.wavefunctions[0])
    p.advance(p.steps)
    pop = p.observables.initial_population

    def model(t, amplitude, frequency):
        return 1 - amplitude * np.sin(0.5 * frequency * t) ** 2

    (amplitude, frequency), _ = curve_fit(model, times, pop, p0=(1.0, rabi))
    assert amplitude > 0.98
    assert math.isclose(frequency, rabi, rel_tol=0.01)


# --------------------------------------------------------- the argon run and its file


ARGON = INPUTS / "argon_800nm.toml"


@pytest.fixture(scope="module")
def argon(tmp_path_factory):
    """The full argon example, run once through ``tdse1d run`` (about 10 s)."""
    path = tmp_path_factory.mktemp("argon") / "argon_800nm.h5"
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("TDSE1D_NO_WISDOM", "1")
        code = cli.main(["run", str(ARGON), "-o", str(path), "--quiet"])
    return code, load_input(ARGON), path


def test_argon_example_runs(argon):
    code, _, path = argon
    assert code == 0
    assert result_file.is_complete(path)
    assert not path.with_name(path.name + guarded_file.PART_SUFFIX).exists()


@pytest.mark.xfail(strict=True, reason="measured: the cutoff reads H35.44 against the argued band H28.54 .. H34.79 "
                                       "(0.65 order beyond; the former upper bound of +5 orders was set after the result)")
def test_argon_cutoff_between_classical_and_quantum_rules(argon):
    # The plateau ends at Ip + E_ret (Krause, Schafer and Kulander 1992; Corkum 1993) or
    # 1.32 Ip + E_ret (Lewenstein et al. 1994), E_ret the largest classical return energy
    # of this pulse (3.17 Up for a long one; the run stores its own three-step value).
    # Band from the reading rule (tdse1d.spectra.read_cutoff), set before the run: the
    # reading may lie one order below the knee (it smooths over +-1 order) and up to two
    # orders beyond it (its documented bias of drop / slope orders for falls steeper
    # than about one decade per order).
    _, _, path = argon
    with result_file.read_result(path) as r:
        est = r.attrs("estimates")
        cutoff = r.attrs("spectra/harmonic")["cutoff_energy"]
        ground = r["states/energy"][0]
        e_ret = float(r["classical/max_return_energy"][()])
    ip, w = est["ionization_potential"], est["photon_energy"]
    assert math.isclose(ip, -ground, rel_tol=1e-12)
    assert math.isclose(ip * HARTREE_EV, 15.76, rel_tol=1e-6)  # the input's Ip, fitted
    print(f"cutoff H{cutoff / w:.2f}; band H{(ip + e_ret - w) / w:.2f} .. H{(1.32 * ip + e_ret + 2 * w) / w:.2f}")
    assert ip + e_ret - w <= cutoff <= 1.32 * ip + e_ret + 2 * w


CONTRACT = [
    "grid/x", "field/time", "field/electric", "field/vector_potential",
    "observables/time", "observables/dipole", "observables/momentum", "observables/acceleration",
    "observables/norm", "observables/initial_population", "observables/population_time",
    "observables/bound_population", "observables/absorbed",
    "states/energy", "states/wavefunction", "snapshots/time", "snapshots/x", "snapshots/psi",
    "spectra/harmonic/frequency", "spectra/harmonic/order", "spectra/harmonic/power",
    "ionization/probability", "ionization/absorbed", "final/psi",
]
ROOT_ATTRS = ["input", "tdse1d_version", "grid_points", "grid_spacing", "time_step", "steps", "record_stride", "gauge",
              "splitting_order",
              "absorber", "complete"]


def test_result_file_holds_the_contract(argon):
    _, config, path = argon
    with h5py.File(path, "r") as f:
        for name in CONTRACT:
            assert name in f, name
            assert isinstance(f[name], h5py.Dataset), name
            assert "units" in f[name].attrs, name
        for group in ("spectra/photoelectron/surface_flux", "spectra/photoelectron/plane_wave"):
            for name in ("momentum", "density_left", "density_right", "energy", "energy_density_left",
                         "energy_density_right"):
                assert "units" in f[group][name].attrs, (group, name)
        for name in ROOT_ATTRS:
            assert name in f.attrs, name
        assert f.attrs["complete"]
        points, steps = f.attrs["grid_points"], f.attrs["steps"]
        assert f["grid/x"].shape == (points,)
        assert np.allclose(np.diff(f["grid/x"][()]), f.attrs["grid_spacing"])
        # the per-step series hold every k-th step (docs/output.md, recorded time axis)
        k = int(f.attrs["record_stride"])
        assert f["observables/dipole"].shape == (steps // k + 1,)
        assert np.allclose(np.diff(f["observables/time"][()]), k * f.attrs["time_step"])
        assert f["snapshots/psi"].shape == (config.output.snapshots, points)
        assert f["snapshots/psi"].dtype == np.complex128
        assert np.allclose(f["snapshots/psi"][-1], f["final/psi"][()])
        # the scalars agree with the time series they summarise
        final_bound = f["observables/bound_population"][-1]
        assert f["observables/population_time"][-1] - f["observables/time"][-1] < k * f.attrs["time_step"]
        # P_ion = 1 - held - edge - beyond, the first two read off the populations at ionization/time
        ion = f["ionization"]
        row = int(np.searchsorted(f["observables/population_time"][()], ion["time"][()]))
        counted = ion["bound_held"][()] + ion["bound_edge"][()]
        assert math.isclose(counted, f["observables/bound_population"][row].sum(), rel_tol=1e-9)
        assert math.isclose(ion["probability"][()], 1 - counted - ion["bound_beyond"][()], rel_tol=1e-9)
        assert ion["probability_band"][0] <= ion["probability"][()] <= ion["probability_band"][1]
        # the last record misses the last (steps mod k) steps: the absorber only adds to it there
        if steps % k == 0:
            assert math.isclose(f["ionization/absorbed"][()], f["observables/absorbed"][-1], rel_tol=1e-9)
        else:
            assert f["ionization/absorbed"][()] >= f["observables/absorbed"][-1] - 1e-12
        assert math.isclose(f["observables/initial_population"][0], 1.0, rel_tol=1e-9)
        assert math.isclose(f["observables/initial_population"][-1], final_bound[0], rel_tol=1e-6)
        # the stored field obeys E = -dA/dt to the accuracy of a centred difference over
        # the recorded spacing D: (D w)^2 / 6 of the amplitude, with the margin of 7 the
        # check had at D = 0.05 a.u. (1e-5 against 1.4e-6)
        t, e, a = f["field/time"][()], f["field/electric"][()], f["field/vector_potential"][()]
        spacing, w = t[1] - t[0], f["estimates"].attrs["photon_energy"]
        bound = max(1e-5, 7 * (spacing * w) ** 2 / 6)
        assert np.allclose(-np.gradient(a, t)[1:-1], e[1:-1], atol=bound * np.max(np.abs(e)))
        # Up = E0^2 / (4 w^2) (common practice)
        est = f["estimates"].attrs
        assert np.isclose(est["ponderomotive_energy"], est["peak_field"] ** 2 / (4 * est["photon_energy"] ** 2))
        # the resolved input re-parses to the same run
        again = parse_input(tomllib.loads(f.attrs["input"]), base_dir=INPUTS)
    for section in ("atom", "lasers", "grid", "propagation", "absorber", "output", "spectra"):
        assert getattr(again, section) == getattr(config, section), section


def test_reread_file_reproduces_spectrum(argon):
    _, _, path = argon
    with result_file.read_result(path) as r:
        omega0 = r.attrs("estimates")["photon_energy"]
        window = r.attrs("spectra/harmonic")["window"]
        spec = spectra.harmonic_spectrum(r["observables/time"], r["observables/acceleration"], omega0, window=window)
        assert np.array_equal(spec.frequency, r["spectra/harmonic/frequency"])
        assert np.allclose(spec.power, r["spectra/harmonic/power"], rtol=1e-12, atol=0)
        # ionization as 1 - bound population and as absorbed norm: close once the pulse is over;
        # the absorber also empties the bound states the box cannot hold, so the absorbed
        # norm may exceed P_ion by up to their population
        prob, absorbed = float(r["ionization/probability"]), float(r["ionization/absorbed"])
        unheld = float(r["ionization/bound_unheld"])
        assert 0 < absorbed <= prob + unheld and prob < 1 and math.isclose(prob, absorbed, rel_tol=0.05)
        assert math.isclose(absorbed, 1 - r["observables/norm"][-1], rel_tol=1e-9)


def test_interrupted_run_leaves_no_finished_file(tmp_path):
    # the run writes NAME.h5.part and renames it only when complete (docs/output.md)
    problem_config = small_case("length")
    path = tmp_path / "stopped.h5"

    def stop(step, steps):
        if step > steps // 3:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        api.run(problem_config, path, progress=stop)
    assert not path.exists()
    assert not path.with_name(path.name + guarded_file.PART_SUFFIX).exists()
    assert not result_file.is_complete(path)
    with pytest.raises(ValueError, match="not a finished"):
        result_file.read_result(path)
    # an earlier result of the same name survives an interrupted rerun untouched (it must
    # be a tdse1d result: any other file is never written over, docs/output.md)
    api.run(problem_config, path)
    earlier = path.read_bytes()
    with pytest.raises(KeyboardInterrupt):
        api.run(problem_config, path, progress=stop)
    assert path.read_bytes() == earlier
    assert not path.with_name(path.name + guarded_file.PART_SUFFIX).exists()


# ------------------------------------------------------------------ the command line


SHORTER = {
    # fewer cycles and less field-free time keep the command-line runs quick
    "argon_1800nm.toml": ["laser.0.cycles=1", "propagation.time_step=0.05", 'propagation.after_pulse="0.3 fs"',
                          "output.snapshots=4"],
    "argon_800nm.toml": None,  # run in full by the ``argon`` fixture
    "hydrogen_streaking.toml": ["laser.0.cycles=1", 'laser.1.delay="0 fs"', 'propagation.after_pulse="0.5 fs"',
                                "output.snapshots=4"],
    "molecular_ion_800nm.toml": ["laser.0.cycles=2", "laser.0.ramp_cycles=0.5", 'propagation.after_pulse="0.5 fs"',
                                 "output.snapshots=4"],
    "xuv_line_in_infrared.toml": ["laser.0.cycles=6", 'laser.1.fwhm="2 fs"', "grid.points=512", "grid.spacing=0.3",
                                  "propagation.time_step=0.1", 'propagation.after_pulse="0.3 fs"',
                                  "output.snapshots=4"],
    "helium_780nm.toml": ["laser.0.cycles=0.2", "grid.points=96", "grid.spacing=0.4", 'absorber.width="3 bohr"',
                          'propagation.after_pulse="1 au"', "output.snapshots=2"],
}


def test_every_example_is_covered():
    assert {p.name for p in EXAMPLES} == set(SHORTER)


@pytest.mark.parametrize("example", [p for p in EXAMPLES if SHORTER.get(p.name)], ids=lambda p: p.stem)
def test_run_command_on_examples(example, tmp_path, capsys):
    out = tmp_path / "out.h5"
    argv = ["run", str(example), "-o", str(out), "--quiet"]
    for s in SHORTER[example.name]:
        argv += ["--set", s]
    assert cli.main(argv) == 0
    assert result_file.is_complete(out)
    assert not out.with_name(out.name + guarded_file.PART_SUFFIX).exists()
    captured = capsys.readouterr()
    assert captured.out == ""


def test_run_command_reports_numerical_failure(tmp_path, capsys, monkeypatch):
    # A unitary step cannot make the norm grow, so a failure is injected: the state is
    # spoiled after the first chunk and the propagator's own check must catch it.
    advance = Propagator.advance

    def spoiled(self, count):
        taken = advance(self, count)
        if self.step_index > 0:
            self.psi[self.grid.points // 2] = np.nan
        return taken

    monkeypatch.setattr(Propagator, "advance", spoiled)
    out = tmp_path / "bad.h5"
    example = INPUTS / "molecular_ion_800nm.toml"
    code = cli.main(["run", str(example), "-o", str(out), "--quiet",
                     *[a for s in SHORTER[example.name] for a in ("--set", s)]])
    assert code == 1
    err = capsys.readouterr().err
    assert "numerical failure" in err and "non-finite" in err
    where = re.search(r"at step (\d+), t = (\S+) a\.u\.", err)
    assert where and int(where.group(1)) > 0 and math.isfinite(float(where.group(2)))
    assert not out.exists() and not result_file.is_complete(out)
    assert not out.with_name(out.name + guarded_file.PART_SUFFIX).exists()
