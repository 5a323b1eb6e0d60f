"""The strong-field approximation (SFA) against outside references.

Sources: Lewenstein, Balcou, Ivanov, L'Huillier and Corkum, Phys. Rev. A 49, 2117
(1994) (the dipole, the 1.32 Ip cutoff law); Corkum, Phys. Rev. Lett. 71, 1994 (1993)
and Paulus et al., J. Phys. B 27, L703 (1994) (2 Up and 10 Up; from memory). The
momentum integral is checked against a brute-force integration written here with
closed-form actions of a monochromatic field. Small grids, a second or two each.
"""

import json
import math

import numpy as np
import pytest

from tdse1d.physics.grid import Grid
from tdse1d.physics.potentials import Centre, SoftCore
from tdse1d.physics.states import bound_states
from tdse1d.semiclassical import sfa_harmonic as H
from tdse1d.semiclassical import sfa_photoelectron as P
from tdse1d.semiclassical.sfa_orbits import monochromatic_orbits
from tdse1d.spectra.cutoff import running_mean
from tdse1d.spectra.harmonic import harmonic_spectrum

OMEGA = 0.057  # 800 nm (a.u.)
PERIOD = 2 * math.pi / OMEGA


@pytest.fixture(scope="module")
def atom():
    """Soft-core hydrogen-like atom, a = sqrt(2) (Ip = 0.5 hartree in the continuum
    limit; Javanainen, Eberly and Su, Phys. Rev. A 38, 3430 (1988)), on a small grid."""
    grid = Grid(512, 0.4)
    potential = SoftCore((Centre(0.0, 1.0, math.sqrt(2.0)),))
    states = bound_states(grid, potential, count=1)
    ip = -float(states.energies[0])
    table = H.dipole_table(grid.x, states.wavefunctions[0], 8.0)
    return grid, potential, ip, table


def sin2_field(e0, cycles, dt, omega=OMEGA, second=0.0):
    """A sin^2 pulse A(t) = -(E0/w) f sin(w t) (+ a second colour at 2 w), E = -dA/dt
    analytic, sampled with dt over the pulse and one period after it."""
    half = 0.5 * cycles * 2 * math.pi / omega
    t = np.arange(-half, half + 2 * math.pi / omega, dt)
    inside = np.abs(t) < half
    f = np.where(inside, np.cos(math.pi * t / (2 * half)) ** 2, 0.0)
    df = np.where(inside, -math.pi / (2 * half) * np.sin(math.pi * t / half), 0.0)
    a = -(e0 / omega) * f * np.sin(omega * t) - (second / (2 * omega)) * f * np.sin(2 * omega * t)
    e = ((e0 / omega) * (df * np.sin(omega * t) + f * omega * np.cos(omega * t))
         + (second / (2 * omega)) * (df * np.sin(2 * omega * t) + f * 2 * omega * np.cos(2 * omega * t)))
    return t, e, a


def test_momentum_saddle_point_against_brute_force_integration(atom):
    """The momentum saddle point against the p-integral done numerically, pair by pair.

    Field A = A0 sin(w t) (monochromatic; int A and int A^2 in closed form, an
    independent route from the module's spline integrals). The action is exactly
    quadratic in p, S(p) = S(p_s) + tau (p - p_s)^2 / 2, so the p-integral of
    g(p) = d*(p + A(t)) d(p + A(t')) is sqrt(2 pi / (i tau)) [g(p_s) + g2(p_s) / (2 i tau)
    + O(tau^-2)] with g2 the second derivative: Lewenstein's leading term, which the
    module computes, plus a correction the test adds itself. Tolerance 2 % of the
    largest term: the next term is of relative size (1 / (tau v0 v1))^2 (v0, v1 the
    kinetic momenta at ionization and return, about 0.5 to 1 a.u. here), a few 1e-3 at
    tau >= 0.3 T; the brute-force p sum is spectrally accurate at this step. Nulls: the
    leading term alone (error of order 1 / (tau v0 v1), several %) fails, and so does
    the opposite sign of the action, exp(+iS). Then the module's compiled sum equals the
    sum of these terms with its own weights.
    """
    grid, _, ip, table = atom
    a0 = 0.053 / OMEGA
    dt = 0.15
    t = np.arange(0.0, 3.5 * PERIOD, dt)
    a = a0 * np.sin(OMEGA * t)
    e = -a0 * OMEGA * np.cos(OMEGA * t)
    field = H.sample_field(t, e, a)
    i = int(2.6 * PERIOD / dt)
    steps = np.arange(int(0.3 * PERIOD / dt), int(1.0 * PERIOD / dt), 7)
    leading = H.saddle_terms(field, table, ip, i, steps)

    t1, t0 = t[i], t[i] - steps * dt
    tau = t1 - t0
    int_a = -(a0 / OMEGA) * (np.cos(OMEGA * t1) - np.cos(OMEGA * t0))
    int_a2 = 0.5 * a0 ** 2 * (tau - (np.sin(2 * OMEGA * t1) - np.sin(2 * OMEGA * t0)) / (2 * OMEGA))
    e0 = -a0 * OMEGA * np.cos(OMEGA * t0)

    def g(q):
        return np.conj(table(q + a0 * np.sin(OMEGA * t1))) * table(q + a0 * np.sin(OMEGA * t0))

    p = np.linspace(-6.0, 6.0, 9601)[:, None]
    dp = float(p[1, 0] - p[0, 0])

    def brute(sign=-1):
        action = 0.5 * p ** 2 * tau + p * int_a + 0.5 * int_a2 + ip * tau
        return np.sum(g(p) * np.exp(sign * 1j * action), axis=0) * dp * e0

    ps = -int_a / tau
    s_ps = 0.5 * ps ** 2 * tau + ps * int_a + 0.5 * int_a2 + ip * tau
    h = 0.02
    g2 = (g(ps + h) - 2 * g(ps) + g(ps - h)) / h ** 2
    correction = np.sqrt(2 * np.pi / (1j * tau)) * g2 / (2j * tau) * e0 * np.exp(-1j * s_ps)
    exact = brute()
    scale = np.max(np.abs(exact))
    assert np.max(np.abs(leading + correction - exact)) < 0.02 * scale
    assert np.max(np.abs(leading - exact)) > 0.02 * scale  # null: no correction
    assert np.max(np.abs(leading + correction - brute(+1))) > 0.3 * scale  # null: exp(+iS)

    window = H.ExcursionWindow()
    out = H.sfa_dipole(field, table, ip, PERIOD, window)
    j = np.arange(1, min(i, int(math.ceil(window.reach(PERIOD) / dt))) + 1)
    full, _, _ = window.weights(j * dt, PERIOD)
    quad = np.where(j == 1, 2.5 * dt, dt)
    assert out.total[i] == pytest.approx(2 * np.imag(np.sum(quad * full * H.saddle_terms(field, table, ip, i, j))),
                                         rel=1e-9)


def test_cutoff_law_of_the_quantum_orbits():
    """Cutoff = 3.17 Up + F(Ip/Up) Ip with F near 1.32 for Ip << Up, decreasing towards 1
    as Ip/Up grows (Lewenstein et al. 1994, Eq. for the cutoff; 1.32 from the paper,
    the slow decrease from its text, from memory). The classical 3.1731 Up (maximum of
    2 (sin th - sin th0)^2, computed here) is subtracted. Tolerance +-0.03 on 1.32: the
    paper quotes two decimals, and at Ip/Up = 0.05 the first-order decrease is below
    0.01 (it is about 0.02 at Ip/Up = 1, from memory)."""
    # classical maximum of the return energy / Up, from x(theta) = 0 (three-step model)
    best = max(2 * (math.sin(_return(b)) - math.sin(b)) ** 2 for b in np.linspace(0.25, 0.35, 401))
    assert best == pytest.approx(3.17, abs=0.01)  # Corkum 1993
    factors = []
    for ratio in (0.05, 0.3, 1.0, 3.0):
        up = 1.0
        ip = ratio * up
        energies = np.linspace(ip + (best - 0.3) * up, ip + (best + 0.5) * up + 0.4 * ip, 1500)
        orbits = monochromatic_orbits(ip, 2 * math.sqrt(up), OMEGA, energies)
        factors.append((orbits.cutoff - best * up) / ip)
    assert factors[0] == pytest.approx(1.32, abs=0.03), factors
    assert all(a > b for a, b in zip(factors, factors[1:])), factors  # decreasing
    assert all(f > 1.0 for f in factors), factors  # towards 1, from above


def _return(birth):
    from scipy.optimize import brentq

    def x(th):
        return math.cos(birth) - math.cos(th) - math.sin(birth) * (th - birth)
    grid = np.linspace(birth + 1e-3, birth + 2 * math.pi, 2000)
    v = np.array([x(g) for g in grid])
    i = np.flatnonzero(np.sign(v[1:]) != np.sign(v[:-1]))[0]
    return brentq(x, grid[i], grid[i + 1], xtol=1e-14)


def flat_top_field(e0, cycles, ramp, dt, omega=OMEGA, second=0.0):
    """A(t) = -(E0/w) f sin(w t) (+ a 2 w colour), f a flat top with sin^2 ramps of
    ``ramp`` cycles, symmetric about the centre; E = -dA/dt analytic."""
    period = 2 * math.pi / omega
    length, rise = cycles * period, ramp * period
    t = np.arange(0.0, length + period, dt) - 0.5 * length
    u = np.clip(np.minimum(t + 0.5 * length, 0.5 * length - t) / rise, 0.0, 1.0)
    f = np.sin(0.5 * np.pi * u) ** 2
    side = np.where(t < 0, 1.0, -1.0)
    df = np.where((u > 0) & (u < 1), side * np.pi / (2 * rise) * np.sin(np.pi * u), 0.0)
    a = -(e0 / omega) * f * np.sin(omega * t) - (second / (2 * omega)) * f * np.sin(2 * omega * t)
    e = ((e0 / omega) * (df * np.sin(omega * t) + f * omega * np.cos(omega * t))
         + (second / (2 * omega)) * (df * np.sin(2 * omega * t) + f * 2 * omega * np.cos(2 * omega * t)))
    return t, e, a


def _spectra(atom, t, e, a):
    _, _, ip, table = atom
    out = H.sfa_dipole(H.sample_field(t, e, a), table, ip, PERIOD)
    return {name: harmonic_spectrum(t, getattr(out, name), OMEGA, "hann", form="dipole")
            for name in ("total", "short", "long")}


def _line_powers(spectrum, orders):
    """log10 of the largest power within +-0.25 order of each order."""
    return np.array([np.log10(spectrum.power[np.abs(spectrum.order - q) <= 0.25].max()) for q in orders])


def test_symmetric_pulse_gives_odd_harmonics_only(atom):
    """Inversion symmetry of atom and field (A(t + T/2) = -A(t) on the flat top of a
    symmetric many-cycle pulse) forbids even orders (common practice, e.g. Lewenstein
    1994). Threshold: the lines of a 16-cycle flat top are about 0.06 order wide and the
    Hann window's leakage one order away lies far below, so even orders stand at least
    2 decades below their odd neighbours over the plateau. Null: a weak second colour
    (2 w, 10 % of the field) breaks the symmetry and must bring the even orders within
    1 decade of the odd ones."""
    _, _, ip, _ = atom
    e0 = 0.0534  # 1e14 W/cm^2
    up = e0 ** 2 / (4 * OMEGA ** 2)
    dt = H.sfa_time_step(ip, up)
    orders = np.arange(int(ip / OMEGA) + 3, int((ip + 3.0 * up) / OMEGA))
    odd, even = orders[orders % 2 == 1], orders[orders % 2 == 0]

    def contrast(second):
        s = _spectra(atom, *flat_top_field(e0, 16, 2, dt, second=second))["total"]
        return np.mean(_line_powers(s, odd)) - np.mean(_line_powers(s, even))

    assert contrast(0.0) > 2.0
    assert contrast(0.1 * e0) < 1.0


def test_short_branch_has_the_smoother_plateau(atom):
    """The long orbits' phase changes about 20 times faster with intensity than the
    short ones' (Lewenstein et al., Phys. Rev. A 52, 4747 (1995), from memory), so
    across the envelope of a 10-cycle sin^2 pulse the half cycles' long-branch
    emissions interfere irregularly from one harmonic to the next. A law, no band:
    roughness (mean |second difference| of the odd-order line powers, log10, over the
    plateau) is lower for the short branch than for the long one, at two intensities.
    The excursion integral is linear, so short + long is the whole window (checked)."""
    _, _, ip, _ = atom
    for e0 in (0.0534, 0.0925):  # 1e14 and 3e14 W/cm^2
        up = e0 ** 2 / (4 * OMEGA ** 2)
        spectra = _spectra(atom, *sin2_field(e0, 10, H.sfa_time_step(ip, up)))
        odd = np.arange(int(ip / OMEGA) + 3, int((ip + 2.8 * up) / OMEGA)) | 1
        odd = np.unique(odd)

        def roughness(s):
            return float(np.mean(np.abs(np.diff(_line_powers(s, odd), 2))))

        assert roughness(spectra["short"]) < roughness(spectra["long"]), e0
        total = spectra["total"].amplitude
        parts = spectra["short"].amplitude + spectra["long"].amplitude
        assert np.allclose(total, parts, rtol=0, atol=1e-9 * np.max(np.abs(total)))  # round-off only


@pytest.fixture(scope="module")
def photoelectrons(atom):
    grid, potential, ip, table = atom
    e0 = 0.0925  # 3e14 W/cm^2: Keldysh parameter 0.62, the tunnelling regime of the 2 Up / 10 Up picture
    up = e0 ** 2 / (4 * OMEGA ** 2)
    t, e, a = sin2_field(e0, 4, H.sfa_time_step(ip, up))
    vt = P.potential_table(grid.x, potential.value(grid.x), 8.0)
    energy = np.linspace(0.05 * up, 14 * up, 240)
    return up, P.sfa_photoelectrons(H.sample_field(t, e, a), table, vt, ip, PERIOD, energy)


def _smoothed(up, pe, name):
    d = getattr(pe, f"{name}_left") + getattr(pe, f"{name}_right")
    s = running_mean(pe.energy, np.log10(d), OMEGA)
    return lambda x: float(np.interp(x * up, pe.energy, s))


def test_direct_electrons_fall_off_beyond_2up(photoelectrons):
    """Direct electrons end classically at 2 Up (Paulus et al. 1994, from memory);
    beyond it the SFA amplitude is exponentially small. Law: the mean slope of log10
    dP/dE over [2.5, 4] Up is more than twice that over [0.3, 1.5] Up, and above one
    decade per Up. Null: a spectrum with no edge, dP/dE = exp(-E / Up) on each side,
    must not pass."""
    up, pe = photoelectrons

    def slopes(s):
        return (s(0.3) - s(1.5)) / 1.2, (s(2.5) - s(4.0)) / 1.5

    low, high = slopes(_smoothed(up, pe, "direct"))
    assert high > 2 * low and high > 1.0, (low, high)
    null = np.exp(-pe.energy / up)
    edgeless = P.SfaPhotoelectrons(pe.energy, null, null, null, null, null, null)
    low_n, high_n = slopes(_smoothed(up, edgeless, "direct"))
    assert not (high_n > 2 * low_n and high_n > 1.0), (low_n, high_n)


def test_rescattered_electrons_extend_to_10up(photoelectrons):
    """Backscattered electrons reach 10 Up (Paulus et al. 1994, from memory). Law: the
    rescattered spectrum falls more than twice as steeply over [11, 13] Up as over
    [5, 9] Up, and stands above the direct one by more than 3 decades at 8 Up. Null:
    the direct spectrum (already falling steeply at 5 Up) must fail the first."""
    up, pe = photoelectrons

    def slopes(name):
        s = _smoothed(up, pe, name)
        return (s(5.0) - s(9.0)) / 4.0, (s(11.0) - s(13.0)) / 2.0

    plateau, beyond = slopes("rescattered")
    assert beyond > 2 * plateau and beyond > 0.5, (plateau, beyond)
    assert _smoothed(up, pe, "rescattered")(8.0) - _smoothed(up, pe, "direct")(8.0) > 3.0
    d_plateau, d_beyond = slopes("direct")
    assert not (d_beyond > 2 * d_plateau and d_beyond > 0.5), (d_plateau, d_beyond)
    # left and right kept apart: a few-cycle pulse makes them differ
    assert not np.allclose(pe.rescattered_left, pe.rescattered_right, rtol=0.1)


TINY = """
[atom]
softening = 1.4142135623730951
[[laser]]
wavelength = "800 nm"
peak_intensity = "1e14 W/cm^2"
cycles = 4
[grid]
points = 512
spacing = 0.4
"""


def test_command_prints_what_the_library_returns(tmp_path, capsys):
    """``tdse1d sfa --json`` against ``tdse1d.sfa`` (one route against the other)."""
    import tdse1d
    from tdse1d.cli import program

    path = tmp_path / "tiny.toml"
    path.write_text(TINY)
    outcome = tdse1d.sfa(str(path), rescattering=False)
    assert program.main(["sfa", str(path), "--direct-only", "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    expected = outcome.to_json()
    for key in ("cutoff", "orbit_cutoff", "direct_edge", "ionization_potential"):
        assert printed[key] == pytest.approx(expected[key], rel=1e-12, nan_ok=True), key
    assert len(repr(outcome)) <= 300 and repr(outcome).startswith("<")
    # the same atom as the run: Ip is minus the ground state on the run's grid
    assert outcome.spectra.ionization_potential == pytest.approx(-outcome.problem.states.energies[0], rel=1e-12)


def test_a_run_with_spectra_sfa_stores_the_declared_sfa_group(tmp_path):
    """``spectra.sfa = true``: the run's file holds sfa/ with every dataset declared in
    the layout (tdse1d.io.layout_check), the SFA photoelectron spectrum on the run's own
    energy axis (up to 20 Up), and an Ip equal to the run's ground state."""
    import h5py

    import tdse1d
    from tdse1d.input.schema import load_input
    from tdse1d.io.layout_check import layout_problems
    from tdse1d.analysis.sfa import sfa_readings, sfa_spectra
    from tdse1d.io.sfa_file import read_sfa, read_sfa_readings

    text = TINY.replace("cycles = 4", "cycles = 2") + (
        '[absorber]\nwidth = "15 bohr"\n[propagation]\ntime_step = 0.2\nafter_pulse = "0.2 fs"\n'
        "[output]\nsnapshots = 2\n[spectra]\nsfa = true\n")
    (tmp_path / "run.toml").write_text(text)
    outcome = tdse1d.api.run(load_input(tmp_path / "run.toml"), tmp_path / "run.h5")
    with h5py.File(outcome.path, "r") as f:
        assert layout_problems(f) == []
        sfa = read_sfa(f)
        stored = read_sfa_readings(f)
        run_energy = f["spectra/photoelectron/surface_flux/energy"][()]
        ground = f["states/energy"][0]
    assert sfa["ionization_potential"] == pytest.approx(-ground, rel=1e-12)
    e = sfa["photoelectron"]["energy"]
    up = sfa["ponderomotive_energy"]
    expected = run_energy[(run_energy > 0) & (run_energy <= 20 * up)]
    assert np.array_equal(e, expected)
    assert sfa["harmonic"]["power"].shape == sfa["harmonic"]["frequency"].shape
    assert sfa["orbits"]["emission_short"].shape[1] == sfa["orbits"]["energy"].size
    # the readings read back are those computed for the same problem
    fresh = sfa_readings(sfa_spectra(outcome.problem, energy=e))
    for name in ("cutoff", "orbit_cutoff", "direct_edge", "backscattered_edge", "crest_time"):
        assert getattr(stored, name) == pytest.approx(getattr(fresh, name), rel=1e-9, nan_ok=True), name
    assert np.allclose(stored.emission_short, fresh.emission_short, equal_nan=True)


def test_sfa_figures_of_a_run_file(tmp_path):
    """The three ladder figures are offered for a run file; without an SFA stored they
    draw the run alone (so ``tdse1d plot --what all`` works on every run)."""
    import tdse1d
    from tdse1d.input.schema import load_input

    text = TINY.replace("cycles = 4", "cycles = 1") + (
        '[absorber]\nwidth = "15 bohr"\n[propagation]\ntime_step = 0.2\nafter_pulse = "0.2 fs"\n'
        "[output]\nsnapshots = 2\n")
    (tmp_path / "run.toml").write_text(text)
    outcome = tdse1d.api.run(load_input(tmp_path / "run.toml"), tmp_path / "run.h5")
    for what in ("sfa-harmonic", "sfa-photoelectron", "sfa-time-frequency"):
        figures = tdse1d.api.plot(outcome.path, what, tmp_path / f"{what}.png")
        assert figures.files[what].stat().st_size > 1000


def test_plan_command_prints_what_sfa_scan_returns(tmp_path, capsys):
    """``tdse1d sfa PLAN --plan`` against ``tdse1d.api.strong_field.sfa_scan`` (one route against
    the other), and the cutoff grows with Up along the plan (the 3.17 Up law's sign)."""
    from tdse1d.api.strong_field import sfa_scan
    from tdse1d.cli import program

    (tmp_path / "tiny.toml").write_text(TINY)
    plan = tmp_path / "plan.toml"
    plan.write_text('base = "tiny.toml"\n[[axis]]\nkey = "laser.0.peak_intensity"\n'
                    'values = ["1e14 W/cm^2", "2e14 W/cm^2"]\n')
    scan = sfa_scan(plan, figure=tmp_path / "cutoff.png")
    assert (tmp_path / "cutoff.png").stat().st_size > 1000
    assert program.main(["sfa", str(plan), "--plan"]) == 0
    lines = capsys.readouterr().out.splitlines()[1:]
    from tdse1d import units

    for line, up, cut in zip(lines, scan.ponderomotive_energy, scan.cutoff):
        fields = line.split()
        assert float(fields[0]) == pytest.approx(up * units.HARTREE_EV, abs=1e-3)
        assert float(fields[1]) == pytest.approx(cut * units.HARTREE_EV, abs=1e-2)
    assert scan.orbit_cutoff[1] > scan.orbit_cutoff[0]
    assert len(repr(scan)) <= 300 and repr(scan).startswith("<")


def test_tdse1d_sfa_stays_the_function_after_the_command_is_imported():
    """The module of the command's function is not named ``sfa``: importing it would bind
    ``tdse1d.api.sfa`` to the module (the shadowing tests/test_architecture.py guards
    against for the layer packages)."""
    import importlib

    import tdse1d

    importlib.import_module("tdse1d.cli.sfa")
    importlib.import_module("tdse1d.api.strong_field")
    assert callable(tdse1d.sfa) and callable(tdse1d.api.sfa) and callable(tdse1d.api.sfa_scan)


def test_emission_deviation_recovers_a_planted_shift():
    """Run times planted on the long orbits shifted by 0.1 cycle read back as +0.1 for
    the long branch (exact, by construction) and not for the short one (null)."""
    import types

    from tdse1d.analysis.sfa import emission_deviation
    from tdse1d.semiclassical.sfa_orbits import pulse_orbits

    e0 = 0.0534
    t, e, a = sin2_field(e0, 6, 0.2)
    orbits = pulse_orbits(t, e, a, OMEGA, 0.5)
    energy = orbits[0].energy
    plateau = (energy > 0.6) & (energy < 0.5 + 2.5 * e0 ** 2 / (4 * OMEGA ** 2))
    freq = np.concatenate([energy[plateau] for _ in orbits])
    quantum = np.concatenate([o.emission_long[plateau] + 0.1 * PERIOD for o in orbits])
    keep = np.isfinite(quantum)
    em = types.SimpleNamespace(frequency=freq[keep], quantum=quantum[keep])
    dev = emission_deviation(em, orbits, PERIOD)
    assert dev.long == pytest.approx(0.1, abs=1e-9)
    assert abs(dev.short - 0.1) > 0.05
    assert dev.samples > 20


def test_deviating_rung_names_the_odd_one_out():
    """Intervals that overlap agree; the rung outside names itself (each case built so
    that exactly one answer is right, and NaN gives no verdict)."""
    from tdse1d.analysis.sfa import deviating_rung

    assert deviating_rung(54.93, 1.55, 55.21, 1.55, 45.78) == "classical"  # the argon readings, eV
    assert deviating_rung(1.0, 0.1, 1.0, 0.1, 1.0) == "none"
    assert deviating_rung(1.0, 0.1, 2.0, 0.1, 1.0) == "sfa"
    assert deviating_rung(2.0, 0.1, 1.0, 0.1, 1.0) == "run"
    assert deviating_rung(1.0, 0.1, 2.0, 0.1, 3.0) == "all"
    assert deviating_rung(1.5, 0.5, 1.0, 0.1, 2.0, 0.1) == "unclear"
    assert deviating_rung(math.nan, 0.1, 1.0, 0.1, 1.0) == "unknown"
