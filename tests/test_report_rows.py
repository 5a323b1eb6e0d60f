"""The report's rows on small runs: the ponderomotive shift of an XUV line inside an
infrared pulse and its sidebands, the classical model of a two-colour run, and the
emission-time rows.

Sources beside each check:

* the photoelectron line of an XUV photon absorbed inside an infrared pulse moves down
  by the infrared Up, with sidebands one infrared photon apart (the electron leaves the
  pulse without regaining its quiver energy; for a flat-top pulse the mean quiver
  energy is Up: Della Picca et al., arXiv:1512.05715; ATI peaks shifted by the
  ponderomotive potential: Freeman et al., Phys. Rev. Lett. 59, 1092 (1987), from
  memory); Up = e^2 E0^2 / (4 m w^2) and I = c eps0 E0^2 / 2 with CODATA constants
  from scipy.constants;
* the three-step model (Corkum, Phys. Rev. Lett. 71, 1994 (1993)): the cutoff
  trajectory is born about 17 degrees (0.05 cycle) after a field crest, and the short
  trajectories return before the long ones.
"""

import math
from pathlib import Path

import numpy as np
import pytest
import scipy.constants as sc

from tdse1d import api
from tdse1d.input.schema import load_input
from tdse1d.semiclassical import three_step

INPUTS = Path(__file__).resolve().parent.parent / "inputs"
# the shipped example on a coarse grid: 512 points of 0.3 bohr hold the line's momenta
# (p < 1.2 a.u. << pi / 0.3), a step of 0.1 a.u. resolves the 0.74-hartree XUV photon
# (0.07 rad per step); the pulses are the example's (a 16 fs XUV line in a 30-cycle
# flat-top 800 nm pulse at 2e13 W/cm^2)
DRESSED = ["grid.points=512", "grid.spacing=0.3", "absorber.width=20", "propagation.time_step=0.1",
           'propagation.after_pulse="0.5 fs"', "output.snapshots=2"]


def _up_ev(intensity_w_cm2, wavelength_nm):
    """Ponderomotive energy (eV) from CODATA: I = c eps0 E0^2 / 2, Up = e^2 E0^2 / (4 m w^2)."""
    e0 = math.sqrt(2 * intensity_w_cm2 * 1e4 / (sc.c * sc.epsilon_0))
    omega = 2 * math.pi * sc.c / (wavelength_nm * 1e-9)
    return sc.e**2 * e0**2 / (4 * sc.m_e * omega**2) / sc.e


def _rows(path):
    return {(r.quantity): r for r in api.report(path).rows}


@pytest.fixture(scope="module")
def dressed(tmp_path_factory):
    config = load_input(INPUTS / "xuv_line_in_infrared.toml", DRESSED)
    return api.run(config, tmp_path_factory.mktemp("dressed") / "dressed.h5").path


@pytest.fixture(scope="module")
def undressed(tmp_path_factory):
    # the null: the same XUV line with the infrared field 7 orders weaker (Up ~ 1e-7 eV)
    config = load_input(INPUTS / "xuv_line_in_infrared.toml", DRESSED + ['laser.0.peak_intensity="2e6 W/cm^2"'])
    return api.run(config, tmp_path_factory.mktemp("undressed") / "undressed.h5").path


def test_xuv_line_moves_down_by_up_with_sidebands_one_photon_apart(dressed):
    rows = _rows(dressed)
    up = _up_ev(2e13, 800.0) / (sc.physical_constants["Hartree energy in eV"][0])
    photon = sc.h * sc.c / 800e-9 / sc.physical_constants["Hartree energy"][0]
    shift = rows["line shift in the infrared field"]
    assert shift.prediction == pytest.approx(-up, rel=1e-3)   # -Up of the flat top, from its A(t)
    # tolerance 10 % of Up, set before the run: energy conservation places the line only
    # within the XUV pulse's bandwidth (rms 0.05 eV = 4 % of Up for 16 fs), and the
    # ground state's own AC Stark shift moves Ip by a few per cent of Up in this atom
    assert shift.quantum == pytest.approx(-up, rel=0.10)
    # sidebands one infrared photon from the main line, within 0.1 eV: twice the rms
    # bandwidth, the most the energy dependence of the transition can pull a line
    ev = 1 / sc.physical_constants["Hartree energy in eV"][0]
    for side in ("below", "above"):
        spacing = rows[f"sideband {side} the line"]
        assert spacing.quantum == pytest.approx(photon, abs=0.1 * ev), side
    assert shift.verdict in ("agrees", "deviates") and math.isfinite(shift.z)


def test_without_the_infrared_field_the_line_stays_and_has_no_sidebands(undressed):
    # the null case: a reading that always returned -Up, or found sidebands anywhere,
    # fails here
    rows = _rows(undressed)
    shift = rows["line shift in the infrared field"]
    ev = 1 / sc.physical_constants["Hartree energy in eV"][0]
    assert abs(shift.quantum) < 0.05 * ev   # within the rms bandwidth of the line
    assert shift.verdict == "unresolved"    # an effect of 1e-7 eV is below any uncertainty
    assert rows["sideband below the line"].verdict == "unresolved"
    assert rows["sideband above the line"].verdict == "unresolved"


@pytest.fixture(scope="module")
def streaking_run(tmp_path_factory):
    config = load_input(INPUTS / "hydrogen_streaking.toml",
                        ["grid.points=256", "grid.spacing=0.3", "absorber.width=15", "propagation.time_step=0.08",
                         'propagation.after_pulse="0.2 fs"', "output.snapshots=2", "laser.0.cycles=2",
                         'laser.1.delay="0.667 fs"'])
    return api.run(config, tmp_path_factory.mktemp("streak") / "streak.h5")


def test_two_colour_run_takes_the_classical_model_of_the_infrared_field_alone(streaking_run):
    report = api.report(streaking_run.path)
    a = report.analysis
    t = np.asarray(streaking_run.result.observables.time)
    ir = streaking_run.problem.field.pulses[0]
    assert ir.omega < a.ionization_potential          # the driving field, below Ip
    expected = three_step.summary(three_step.trajectories(t, ir.electric(t), ir.vector_potential(t)),
                                  a.ionization_potential)
    assert a.three_step.max_return_energy == pytest.approx(expected.max_return_energy, rel=1e-9)
    # with the XUV field in it the model returned electrons with far more energy
    full = three_step.summary(three_step.trajectories(t, np.asarray(streaking_run.result.observables.electric),
                                                      np.asarray(streaking_run.result.observables.vector_potential)),
                              a.ionization_potential)
    assert full.max_return_energy > 1.2 * expected.max_return_energy
    quantities = {r.quantity for r in report.rows}
    # no harmonic row: the weak infrared field has no plateau, and the spectrum above Ip
    # is the XUV pulse's own
    assert "harmonic cutoff" not in quantities and not a.three_step_applies
    assert {"photoelectric line", "streaking shift"} <= quantities


@pytest.fixture(scope="module")
def argon_run(tmp_path_factory):
    config = load_input(INPUTS / "argon_800nm.toml",
                        ["grid.points=256", "grid.spacing=0.3", "absorber.width=15", "propagation.time_step=0.08",
                         'propagation.after_pulse="0.2 fs"', "output.snapshots=2", "laser.0.cycles=3"])
    return api.run(config, tmp_path_factory.mktemp("argon") / "argon.h5").path


def test_emission_time_rows_give_times_after_the_field_crest(argon_run):
    from tdse1d.analysis.readings import field_crests
    from tdse1d.units import au_to_fs

    report = api.report(argon_run)
    a = report.analysis
    rows = {r.key: r for r in report.rows}
    short, long = rows["emission_time_short"], rows["emission_time_long"]
    period = 2 * math.pi / a.omega0
    # the short trajectories return before the long ones, both within the cycle after
    # the crest they were born near (three-step model)
    assert 0.25 * period < short.prediction < long.prediction < 1.25 * period
    # each branch row carries the quantum times assigned to its own branch: a median with
    # its spread, or unresolved with the reason (too few times, or no more concentrated
    # than times at random: tests/test_emission_branches.py)
    for row in (short, long):
        if math.isfinite(row.quantum):
            assert math.isfinite(row.spread) and row.spread > 0 and row.verdict in ("agrees", "deviates")
        else:
            assert row.verdict == "unresolved" and "branch" in row.reason
    # the crests found are field extrema, and the cutoff trajectory is born just after one
    with __import__("h5py").File(argon_run) as f:
        t, e = f["field/time"][()], f["field/electric"][()]
    crests = field_crests(t, e, a.three_step, period)
    crests = crests[np.isfinite(crests)]
    for c in crests:
        i = int(np.searchsorted(t, c))
        assert abs(e[i]) >= abs(e[i - 1]) and abs(e[i]) >= abs(e[i + 1])
    birth = a.three_step.cutoff_birth_time
    after = (birth - crests[crests <= birth + 0.1 * period]) / period
    assert after.size and 0.0 <= after.min() < 0.1    # 17 degrees = 0.047 cycle (Corkum 1993)
    text = report.table()
    assert "emission time, short branch" in text and "fs" in text and "+0.000" not in text
    assert f"{au_to_fs(short.prediction):.3f} fs" in text


def test_figures_show_the_predictions_and_the_uncertainty_bands(argon_run):
    import h5py

    from tdse1d.api import figures

    def legend_texts(fig):
        return [t.get_text() for ax in fig.axes if ax.get_legend() for t in ax.get_legend().get_texts()]

    report = api.report(argon_run)
    rows = [r for r in report.rows if r.key == "harmonic_cutoff"]
    with h5py.File(argon_run) as f:
        cache = {}
        harmonic = legend_texts(figures._harmonic(f, cache))
        photo = legend_texts(figures._photoelectron(f, cache))
        tf = legend_texts(figures._time_frequency(f, cache))
    # one line per prediction of the report, and the quantum value +- u as a band
    assert all(any(t.startswith(r.source) for t in harmonic) for r in rows)
    if math.isfinite(rows[0].quantum):
        assert any(t.startswith("read off +- u") for t in harmonic)
    assert any(t.startswith("direct edge: 2 Up") for t in photo)
    # the map's band is the long-branch row's median +- u, drawn when that row has a value
    long = next(r for r in report.rows if r.key == "emission_time_long")
    assert any("median +- u" in t for t in tf) == math.isfinite(long.quantum)


ATI = """[atom]
softening = 1.4142135623730951
[[laser]]
wavelength = "800 nm"
peak_intensity = "2e13 W/cm^2"
envelope = "flat-top"
cycles = 12
ramp_cycles = 2
[grid]
points = 1024
spacing = 0.3
[absorber]
width = 20
[propagation]
time_step = 0.1
after_pulse = "0.5 fs"
[output]
snapshots = 2
"""


def test_ati_comb_moves_down_by_up_when_up_is_below_the_photon(tmp_path, argon_run):
    # the same law for the infrared field alone: ATI peaks at n hbar w - Ip - Up
    # (Freeman et al. 1987, from memory; Della Picca et al., arXiv:1512.05715), read
    # while Up (1.19 eV) is below the photon (1.55 eV)
    outcome = api.run(load_input("ati.toml", text=ATI), tmp_path / "ati.h5")
    rows = {r.quantity: r for r in api.report(outcome.path).rows}
    up = _up_ev(2e13, 800.0) / sc.physical_constants["Hartree energy in eV"][0]
    comb = rows["ATI comb shift"]
    # 10 % of Up, as for the XUV line: the ground state's AC Stark shift, and lines
    # born on the ramps where Up is lower, move the comb by a few per cent of Up
    assert comb.quantum == pytest.approx(-up, rel=0.10)
    # at 1.6e14 W/cm^2 Up is 6 photons: the comb fixes no shift and no row is given
    assert "ATI comb shift" not in {r.quantity for r in api.report(argon_run).rows}
