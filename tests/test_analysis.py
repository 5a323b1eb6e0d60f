"""Tests of tdse1d.analysis and of the report, plot and export commands.

Each physics check names its source beside it:

* Einstein's photoelectric relation: one XUV photon gives a photoelectron of energy
  hbar*w - Ip, here within the spectral width of the pulse;
* the surface flux method (Tao and Scrinzi, New J. Phys. 14, 013021 (2012)) on a
  small box against plane-wave projection on a box that holds the whole wave packet;
* the classical photoelectron edges 2 Up and 10 Up (Paulus et al., J. Phys. B 27,
  L703 (1994), from memory) for the run's own pulse;
* the streaking shift -A_IR(t_XUV) of the drift momentum (Itatani et al., Phys. Rev.
  Lett. 88, 173903 (2002), from memory);
* the classical emission times of the three-step model (Corkum, Phys. Rev. Lett. 71,
  1994 (1993)) against the Gabor map of the quantum dipole acceleration.

The runs are small (512 points, a few thousand steps) and shared by module fixtures.
"""

import math
from pathlib import Path

import h5py
import numpy as np
import pytest
import scipy.constants as sc

from tdse1d import analysis, api
from tdse1d.io import analysis_file
from tdse1d.api import figures, results
from tdse1d.input.schema import load_input

INPUTS = Path(__file__).resolve().parent.parent / "inputs"

HYDROGEN = "[atom]\nsoftening = 1.4142135623730951\n"  # E0 = -0.5 hartree (Javanainen, Eberly, Su 1988)
XUV = ('[[laser]]\nphoton_energy = "30 eV"\npeak_intensity = "1e13 W/cm^2"\nenvelope = "gaussian"\n'
       'fwhm = "250 as"\ndelay = "{delay}"\n')
IR = '[[laser]]\nwavelength = "800 nm"\npeak_intensity = "{intensity}"\nenvelope = "sin2"\ncycles = {cycles}\n'


def _run(tmp_path_factory, name, text):
    config = load_input(f"{name}.toml", text=text)
    out = tmp_path_factory.mktemp(name) / f"{name}.h5"
    return api.run(config, out)


def _grid(points, spacing=0.2, absorber=20.0, after="1 fs", dt=0.05):
    return (f"[grid]\npoints = {points}\nspacing = {spacing}\n[absorber]\nwidth = {absorber}\n"
            f'[propagation]\nafter_pulse = "{after}"\ntime_step = {dt}\n[output]\nsnapshots = 10\n')


@pytest.fixture(scope="module")
def xuv_small(tmp_path_factory):
    """A weak XUV pulse on a small box: most photoelectrons reach the absorber.

    The flux surfaces sit at 31 bohr, where the soft-core tail (-0.03 Eh) is 5 % of
    the photoelectron energy; at 18 bohr it would be 9 %."""
    return _run(tmp_path_factory, "xuv_small", HYDROGEN + XUV.format(delay="0 fs") + _grid(512, after="0.75 fs"))


@pytest.fixture(scope="module")
def xuv_large(tmp_path_factory):
    """The same pulse on a box that holds the whole wave packet at the end."""
    return _run(tmp_path_factory, "xuv_large", HYDROGEN + XUV.format(delay="0 fs") + _grid(1024, after="0.75 fs"))


@pytest.fixture(scope="module")
def streaking(tmp_path_factory):
    """The XUV pulse at the crest of A of a weak two-cycle IR field (A peaks at the field zero)."""
    # A = -(E0/w) f sin(w t) with f(0) = 1: the crest of |A| is a quarter cycle from the centre
    quarter = 2.6685 / 4  # fs, a quarter of the 800 nm period
    text = HYDROGEN + IR.format(intensity="1e12 W/cm^2", cycles=3) + XUV.format(delay=f"{quarter} fs") + _grid(512)
    return _run(tmp_path_factory, "streaking", text)


@pytest.fixture(scope="module")
def infrared(tmp_path_factory):
    """A strong four-cycle 800 nm pulse on the soft-core hydrogen atom (Keldysh ~ 0.9)."""
    # surfaces of the flux spectrum at 162 bohr: beyond the Rydberg states' tails, whose
    # changing populations leave a background about 6 decades down at 66 bohr, at the
    # level of this run's backscattered plateau (docs/spectra.md)
    text = HYDROGEN + IR.format(intensity="1.4e14 W/cm^2", cycles=4) + _grid(1536, 0.25, 30.0, "0.5 fs", 0.05)
    outcome = _run(tmp_path_factory, "infrared", text)
    with h5py.File(outcome.path) as f:
        return outcome, analysis_file.analyse_file(f)


def _spectrum(path, method):
    with h5py.File(path) as f:
        g = f[f"spectra/photoelectron/{method}"]
        return g["momentum"][()], g["density_left"][()], g["density_right"][()]


def _xuv_numbers(outcome):
    xuv = outcome.problem.field.pulses[-1]
    ip = outcome.problem.ionization_potential
    # intensity FWHM tau of a Gaussian -> spectral intensity FWHM 4 ln 2 / tau (Fourier pair)
    width = 4 * math.log(2) / xuv.envelope.intensity_fwhm
    return xuv.omega, ip, width


def test_photoelectric_peak_at_photon_energy_minus_ip(xuv_small):
    # Einstein's photoelectric relation: E = hbar w - Ip, within the pulse's spectral width
    omega, ip, width = _xuv_numbers(xuv_small)
    p, left, right = _spectrum(xuv_small.path, "surface_flux")
    peak = analysis.peak_centroid(p, left + right)
    energy = 0.5 * peak**2
    assert abs(energy - (omega - ip)) < 0.5 * width, (energy, omega - ip, width)
    # one-photon ionization of a symmetric state is symmetric
    assert analysis.peak_centroid(p, left) == pytest.approx(analysis.peak_centroid(p, right), rel=1e-3)


def test_surface_flux_on_small_box_agrees_with_plane_waves_on_large_box(xuv_small, xuv_large):
    # surface flux method (Tao and Scrinzi 2012) vs projection on plane waves
    with h5py.File(xuv_small.path) as f:
        absorbed = float(f["ionization/absorbed"][()])
    with h5py.File(xuv_large.path) as f:
        # only the fastest few per cent reach the large box's absorber
        assert float(f["ionization/absorbed"][()]) < 0.03 * absorbed
    assert absorbed > 0.5 * xuv_small.result.ionization_probability  # the small box did absorb
    p_s, l_s, r_s = _spectrum(xuv_small.path, "surface_flux")
    p_l, l_l, r_l = _spectrum(xuv_large.path, "plane_wave")
    total_s = np.sum(l_s + r_s) * (p_s[1] - p_s[0])
    total_l = np.sum(l_l + r_l) * (p_l[1] - p_l[0])
    assert total_s == pytest.approx(total_l, rel=0.05)
    # Both methods treat the electron as free where they read it: the surface flux at
    # the surface R_s, the plane waves over the large box out to R_l. There the
    # soft-core tail -1/|x| still differs by at most 1/R_s - 1/R_l (energy
    # conservation), which moves the peak momentum by at most that over p.
    r_small = xuv_small.problem.grid.half_width - xuv_small.problem.absorber_width
    r_large = xuv_large.problem.grid.half_width - xuv_large.problem.absorber_width
    centroid = analysis.peak_centroid(p_l, r_l)
    shift = (1 / r_small - 1 / r_large) / centroid
    moved = analysis.peak_centroid(p_s, r_s) - centroid
    assert abs(moved) < shift
    # Aligned at their centroids (the tail's shift is bounded above), the lines have
    # the same shape to 10 % of the peak, on the large box's coarse axis (the
    # surface-flux axis is finer; interpolating it is accurate).
    on_coarse = np.interp(p_l, p_s - moved, r_s)
    peak = r_l > 0.1 * r_l.max()
    assert np.max(np.abs(on_coarse[peak] - r_l[peak])) < 0.10 * r_l.max()


def test_streaking_shift_is_the_vector_potential(streaking):
    # Itatani et al. 2002: p_final = +-p0 - A_IR(t_XUV); weak IR, so within 10 %
    outcome = streaking
    with h5py.File(outcome.path) as f:
        st = {k: float(v[()]) for k, v in f["streaking"].items()}
        assert all("units" in v.attrs for v in f["streaking"].values())
    a_ir = float(outcome.problem.field.pulses[0].vector_potential(np.array([st["xuv_time"]]))[0])
    assert st["vector_potential"] == pytest.approx(a_ir, rel=1e-12)
    assert abs(a_ir) > 0.08  # the XUV sits near the crest of A
    assert st["measured"] == pytest.approx(a_ir, rel=0.10)
    omega, ip, width = _xuv_numbers(outcome)
    assert abs(st["photoelectric_energy"] - (omega - ip)) < 0.5 * width


@pytest.fixture(scope="module")
def infrared_weaker(tmp_path_factory):
    """The infrared run at 1.0e14 W/cm^2: Up smaller by a factor 1.4, same pulse shape."""
    text = HYDROGEN + IR.format(intensity="1.0e14 W/cm^2", cycles=4) + _grid(768, 0.25, 30.0, "0.5 fs", 0.05)
    outcome = _run(tmp_path_factory, "infrared_weaker", text)
    with h5py.File(outcome.path) as f:
        return outcome, analysis_file.analyse_file(f)


@pytest.fixture(scope="module")
def infrared_vanishing(tmp_path_factory):
    """The infrared run at 1e6 W/cm^2: nothing but the numerical floor above the linear response.

    Recorded every step: the floor test below reads the spectrum from 4 times Ip up to pi / dt, far
    above the highest frequency a default run records for (1.5 Ip here, docs/output.md,
    recorded time axis), where the default records alias."""
    import functools
    from unittest import mock

    from tdse1d.runs import runner

    text = HYDROGEN + IR.format(intensity="1e6 W/cm^2", cycles=4) + _grid(768, 0.25, 30.0, "0.5 fs", 0.05)
    with mock.patch.object(runner, "simulate", functools.partial(runner.simulate, record_every=1)):
        outcome = _run(tmp_path_factory, "infrared_vanishing", text)
    with h5py.File(outcome.path) as f:
        return outcome, analysis_file.analyse_file(f)


@pytest.mark.xfail(strict=True, reason="measured (2026-12-03, surface-flux spectra, the edge-rule family): the "
                                       "backscattered edge reads 0.382 of its classical value at 1.4e14 W/cm^2 and "
                                       "0.425 at 1.0e14 (difference 0.043 against a band of 0.024), well inside the "
                                       "classical 10 Up edge on this short, small-box case: the reading does not "
                                       "scale with Up (earlier spectra read 1.195 and 1.317)")
def test_edges_scale_with_up_at_fixed_pulse_shape(infrared, infrared_weaker):
    # Law, not a number: for a fixed pulse shape every classical drift energy scales
    # exactly with Up (the three-step model has no other energy scale; Paulus et al.
    # 1994), so an edge in units of its classical value must not depend on the
    # intensity. Band, set before the run: each edge is read on an axis smoothed over
    # one ATI spacing hbar*w, so each reading is uncertain by hbar*w / 2; the two
    # readings together by hbar*w / 2 * (1 / E_1 + 1 / E_2) relative.
    (_, strong), (_, weak) = infrared, infrared_weaker
    w = strong.omega0
    for edge, classical_edge in (("backscattered", "max_backscattered_energy"), ("direct", "max_direct_energy")):
        e1, e2 = getattr(strong.edges, edge), getattr(weak.edges, edge)
        c1, c2 = getattr(strong.three_step, classical_edge), getattr(weak.three_step, classical_edge)
        assert math.isfinite(e1) and math.isfinite(e2), edge
        band = 0.5 * w * (1 / c1 + 1 / c2)
        print(f"{edge}: {e1 / c1:.3f} and {e2 / c2:.3f} of the classical edge, band {band:.3f}")
        assert abs(e1 / c1 - e2 / c2) <= band, edge
    # one-sided, from the rule itself: the backscattered edge is read where the spectrum
    # has fallen 1.5 decades below the plateau, which the classical plateau reaches only
    # at its end, so the reading lies at or beyond the classical edge (minus half an ATI spacing)
    assert strong.edges.backscattered >= strong.three_step.max_backscattered_energy - 0.5 * w


def test_readings_at_vanishing_intensity_are_unresolved(infrared, infrared_vanishing):
    # at 1e6 W/cm^2 nothing above the linear response is emitted: the harmonic cutoff and
    # both photoelectron edges must be reported as unresolved, never as numbers
    _, weak = infrared_vanishing
    assert math.isnan(weak.harmonic_cutoff) and weak.cutoff.reason.startswith("unresolved")
    e = weak.edges
    assert e is None or (math.isnan(e.direct) and math.isnan(e.backscattered)
                         and e.direct_reason.startswith("unresolved") and e.backscattered_reason.startswith("unresolved"))
    # the same case at 1.4e14 W/cm^2 reads all three, more than the margin above the floor
    _, strong = infrared
    assert strong.cutoff.resolved and strong.cutoff.headroom >= 1.0
    assert math.isfinite(strong.edges.direct) and math.isfinite(strong.edges.backscattered)


def test_the_vanishing_intensity_spectrum_is_the_field_companion(infrared_vanishing):
    # the companion floor of the harmonic spectrum: far above the bound-state resonances
    # the linear response of the bound electron tends to the free one, a = -E(t)
    # (Thomas-Reiche-Kuhn sum rule), so a run at vanishing intensity gives the field's own
    # spectrum there; 0.1 decade allows for the remaining bound-state dispersion
    outcome, weak = infrared_vanishing
    with h5py.File(outcome.path) as f:
        w = f["spectra/harmonic/frequency"][()]
        p = f["spectra/harmonic/power"][()]
        floor = f["spectra/harmonic/noise_floor_log10"][()]
        assert f["spectra/harmonic/noise_floor_log10"].attrs["units"] == "log10(atomic_units)"
        assert f["spectra/photoelectron/edges/noise_floor_log10"].attrs["units"] == "log10(1/hartree)"
    from tdse1d.spectra.cutoff import running_mean

    smoothed = running_mean(w, np.log10(p), weak.omega0)
    far = w >= 2.0  # hartree: four times Ip
    assert np.median(np.abs(smoothed[far] - floor[far])) < 0.1


def test_field_free_companion_is_the_vanishing_intensity_spectrum(infrared_vanishing):
    # the photoelectron floor (analysis.field_free_floor: one optical period with no field)
    # against the plane-wave spectrum of the whole run at 1e6 W/cm^2, where nothing is
    # ionized physically (a 14-photon process at ~1e-130): the same numbers wherever the
    # floor is defined, above one photon energy; 0.3 decade allows for the dephasing not
    # complete after one period (stated before the run)
    outcome, weak = infrared_vanishing
    spec = analysis.field_free_floor(outcome.problem)
    with h5py.File(outcome.path) as f:
        g = f["spectra/photoelectron/plane_wave"]
        e = g["energy"][()]
        run = g["energy_density_left"][()] + g["energy_density_right"][()]
    chosen = (e >= weak.omega0) & (e <= 0.5 * e[-1]) & (run > 0) & (spec.energy_density > 0)
    assert chosen.sum() > 20
    difference = np.log10(run[chosen]) - np.log10(spec.energy_density[chosen])
    assert np.median(np.abs(difference)) < 0.3


def _emission_null_maps(a, seeds=(0, 1, 2)):
    from dataclasses import replace

    tf = a.time_frequency
    for seed in seeds:
        rng = np.random.default_rng(seed)
        yield f"noise {seed}", replace(tf, power=rng.exponential(size=tf.power.shape))
        yield f"time-shuffled {seed}", replace(tf, power=tf.power[rng.permutation(tf.time.size)])


#: significance a map must reach to count as following a branch (chosen before the run)
EMISSION_P = 0.01


def test_emission_time_statistic_fails_on_null_maps(infrared):
    # a map without emission in it (white noise, or the real map with its time rows
    # shuffled) must not pass: its maxima hit the branch band only by chance
    outcome, a = infrared
    resolution = 1.0 / a.time_frequency.width
    for name, null in _emission_null_maps(a):
        em = analysis.emission_times(null, a.three_step, a.emission.period)
        for branch in ("short", "long"):
            agreement = analysis.branch_agreement(em, branch, frequency_resolution=resolution)
            assert agreement.p_value > EMISSION_P, (name, branch, agreement)


def test_emission_times_move_with_the_long_branch(infrared):
    # three-step model (Corkum 1993): within a half cycle the long-trajectory emission time
    # falls with photon energy, the short one rises (the attochirp). The quantum times
    # (Gabor maxima) must correlate with the long branch at one-sided p < EMISSION_P, and
    # no null map may (kept below); the short-branch statistic is not used, a null map
    # can pass it (see analysis.branch_correlation)
    outcome, a = infrared
    resolution = 1.0 / a.time_frequency.width
    real = analysis.branch_correlation(a.emission, "long", frequency_resolution=resolution)
    print(real)
    assert real.p_value < EMISSION_P
    for name, null in _emission_null_maps(a):
        em = analysis.emission_times(null, a.three_step, a.emission.period)
        agreement = analysis.branch_correlation(em, "long", frequency_resolution=resolution)
        assert agreement.p_value > EMISSION_P, (name, agreement)


@pytest.mark.xfail(strict=True, reason="measured: on this 4-cycle run the Gabor maxima hit the long branch in "
                                       "11 of 25 independent samples against 38 % by chance (p = 0.33), the short "
                                       "one in 7 (p = 0.89): the map does not beat chance")
def test_emission_times_beat_chance_on_a_classical_branch(infrared):
    # three-step model (Corkum 1993) against the Gabor map of the quantum acceleration:
    # the quantum times must lie within 0.1 cycle (the Gabor window's time resolution,
    # sigma = T/10) of one classical branch significantly more often than chance
    outcome, a = infrared
    resolution = 1.0 / a.time_frequency.width
    results = {b: analysis.branch_agreement(a.emission, b, frequency_resolution=resolution) for b in ("short", "long")}
    print(results)
    assert min(r.p_value for r in results.values()) < EMISSION_P


def test_time_frequency_map_is_stored_with_units(infrared):
    outcome, a = infrared
    with h5py.File(outcome.path) as f:
        g = f["spectra/time_frequency"]
        assert g["power"].shape == (g["time"].size, g["frequency"].size)
        missing = []
        f.visititems(lambda n, o: missing.append(n) if isinstance(o, h5py.Dataset) and "units" not in o.attrs else None)
        assert not missing
        # the stored tunnelling curve is what the report reads back
        assert 0 < float(f["classical/tunnelling_yield"][()]) <= 1
        assert a.tunnelling_yield == pytest.approx(float(f["classical/tunnelling_yield"][()]))


def test_photoelectron_edges_of_a_synthetic_spectrum():
    # exactly known shape: direct exponential fall to a flat plateau, then a steep fall
    w = 0.057
    e = np.linspace(0, 20, 4000)
    up = 0.3
    log_d = np.where(e < 2 * up, -1 - 2 * e / (2 * up), -3 - 0.1 * (e - 2 * up))
    log_d = np.where(e > 10 * up, log_d[np.argmin(abs(e - 10 * up))] - 3 * (e - 10 * up) / up, log_d)
    log_d = np.maximum(log_d, -25)
    edges = analysis.photoelectron_edges(e, 10**log_d, w)
    # beyond 10 Up the fall is 10 decades per hartree: 1.5 decades below the plateau
    # (which itself sinks by 0.24 decade towards its end) is reached within 0.15 hartree
    assert 10 * up <= edges.backscattered <= 10 * up + 0.15 + w
    assert 0.3 < edges.direct < 2 * up + w


#: short variants of the shipped examples
EXAMPLE_OVERRIDES = {
    "argon_800nm": ["laser.0.cycles=2"],
    "argon_1800nm": ["laser.0.cycles=1.5"],
    "hydrogen_streaking": ["laser.0.cycles=2", 'laser.1.delay="0.667 fs"'],
    "molecular_ion_800nm": ["laser.0.cycles=3", "laser.0.ramp_cycles=1"],
    "xuv_line_in_infrared": ["laser.0.cycles=8", 'laser.1.fwhm="3 fs"'],
}
# a coarse, small grid: these runs only feed the commands, their physics is tested above
COMMON = ["grid.points=256", "grid.spacing=0.3", "absorber.width=15", 'propagation.after_pulse="0.2 fs"',
          "output.snapshots=12", "propagation.time_step=0.08"]


@pytest.fixture(scope="module")
def example_runs(tmp_path_factory):
    runs = {}
    for name, extra in EXAMPLE_OVERRIDES.items():
        config = load_input(INPUTS / f"{name}.toml", COMMON + extra)
        runs[name] = api.run(config, tmp_path_factory.mktemp(name) / f"{name}.h5").path
    return runs


def test_every_shipped_example_is_exercised():
    # a new example must join the short variants below (the report test reads them all);
    # the two-electron examples have no one-electron report and are run by tests/test_propagate.py
    shipped = {p.stem for p in INPUTS.glob("*.toml")
               if not p.stem.startswith("scan_") and 'model = "two-electron"' not in p.read_text()}
    assert shipped == set(EXAMPLE_OVERRIDES)


@pytest.mark.parametrize("name", sorted(EXAMPLE_OVERRIDES))
def test_report_plot_export_on_every_example(example_runs, name, tmp_path):
    from tdse1d.spectra import NOISE_MARGIN

    path = example_runs[name]
    report = api.report(path)
    data = report.to_json()
    import json

    json.dumps(data, allow_nan=False)  # strict JSON: no NaN, null where a value does not apply
    quantities = {r["quantity"] for r in data["rows"]}
    assert {"ground-state energy", "ionization potential Ip", "ionization probability"} <= quantities
    # rows that fit the run: the three-step rows only for a driving field with a
    # plateau, the streaking rows only for the short XUV pulse, the dressed-line rows
    # only for the long one
    two_colour = name in ("hydrogen_streaking", "xuv_line_in_infrared")
    assert ("harmonic cutoff" in quantities) == report.analysis.three_step_applies
    if two_colour:
        assert not report.analysis.three_step_applies
    assert ("streaking shift" in quantities) == (name == "hydrogen_streaking")
    assert ("line shift in the infrared field" in quantities) == (name == "xuv_line_in_infrared")
    for row in data["rows"]:
        assert set(row) >= {"quantity", "key", "prediction", "source", "quantum", "uncertainty", "unit", "verdict",
                            "note"}
        # no verdict rests on a value below the noise floor: such a row has no value
        headroom = row["noise_headroom_decades"]
        if headroom is not None and headroom < NOISE_MARGIN:
            assert row["verdict"] in ("unresolved", None) and row["quantum"] is None, row
        if row["quantum"] is None and row["prediction"] is not None:
            assert row["verdict"] == "unresolved" and row["reason"], row
        if row["verdict"] == "unresolved":
            assert row["difference_in_uncertainties"] is None and row["reason"], row
        if row["verdict"] in ("agrees", "deviates"):
            assert row["quantum"] is not None and row["uncertainty"] is not None and row["uncertainty"] > 0
    text = report.table()
    assert "semiclassical prediction" in text and "quantum +- uncertainty" in text and "verdict" in text
    out = tmp_path / f"{name}.png"
    drawn = api.plot(path, "all", out)
    assert list(drawn.files) == list(figures.KINDS["run"])
    for what in figures.KINDS["run"]:
        figure = tmp_path / f"{name}-{what}.png"
        assert figure.stat().st_size > 20_000, what  # a drawn figure, not an empty canvas
    csv = tmp_path / f"{name}.csv"
    assert api.export(path, "harmonic", "eV", csv).path == csv
    header = csv.read_text().splitlines()[0]
    assert header == "photon_energy [eV],harmonic_order [1],power [a.u.]"
    table = np.loadtxt(csv, delimiter=",", skiprows=1)
    with h5py.File(path) as f:
        from tdse1d.units import HARTREE_EV

        assert np.allclose(table[:, 0], f["spectra/harmonic/frequency"][()] * HARTREE_EV)


def test_plot_writes_pdf_and_svg_and_rejects_other_formats(example_runs, tmp_path):
    path = example_runs["argon_800nm"]
    for suffix in (".pdf", ".svg"):
        out = tmp_path / f"fig{suffix}"
        assert api.plot(path, "photoelectron", out).paths == [out]
        assert out.stat().st_size > 5_000
    from tdse1d.input.spec import InputError

    with pytest.raises(InputError, match="format"):
        api.plot(path, "field", tmp_path / "fig.jpg")


def test_export_units_convert_consistently(example_runs, tmp_path):
    path = example_runs["argon_800nm"]
    with h5py.File(path) as f:
        names_ev, ev = results.columns(f, "photoelectron", "eV")
        names_au, au = results.columns(f, "photoelectron", "au")
        names_nm, nm = results.columns(f, "harmonic", "nm")
        _, ev_harmonic = results.columns(f, "harmonic", "eV")
    from tdse1d.units import HARTREE_EV

    assert names_ev[0] == "kinetic_energy [eV]" and names_au[0] == "kinetic_energy [hartree]"
    assert np.allclose(ev[:, 0], au[:, 0] * HARTREE_EV)
    # a density per eV times the eV width is the same probability
    assert np.allclose(ev[1:, 2] * HARTREE_EV, au[1:, 2], equal_nan=True)
    # photon wavelength: lambda E = h c = 1239.84 eV nm (CODATA via scipy.constants)
    assert names_nm[0] == "wavelength [nm]"
    hc_ev_nm = sc.h * sc.c / sc.e * 1e9
    assert np.allclose(nm[1:, 0] * ev_harmonic[1:, 0], hc_ev_nm, rtol=1e-9)
