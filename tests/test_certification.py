"""Certified runs: the spread of each quantity across companion runs, the flags, and
the datasets in the result file.

The spread logic is checked on constructed analyses whose answers are known by
construction (exact arithmetic); the end-to-end run uses a tiny grid (seconds).
"""

import math
from pathlib import Path

import h5py
import numpy as np
import pytest

from tdse1d.analysis import EmissionTimes, PhotoelectronEdges, PonderomotiveShift, RunAnalysis, StreakingShift
from tdse1d.analysis.certification import (PARAMETER_ADVICE, QUANTITIES, QUANTITY_UNITS, Tolerance,
                                           certify_quantities, quantities, richardson_factor, tolerances)
from tdse1d.spectra.cutoff import CutoffEstimate

OMEGA = 0.057  # 800 nm photon (hartree)
UP = 0.35


def _analysis(**changes):
    """A RunAnalysis with known readings: cutoff 2.0, P_ion 0.1, edges 0.7 and 3.5 hartree."""
    cut = CutoffEstimate(2.0, 2.0 / OMEGA, -3.0, 0.6, np.zeros(1), True)
    # rows: quantum - short = 1, 2, 3 (nearer short), quantum - long = -0.5, +1.5 (nearer long)
    emission = EmissionTimes(half_cycle=np.arange(5), frequency=np.full(5, 1.0),
                             quantum=np.array([11.0, 12.0, 13.0, 19.5, 21.5]),
                             short=np.array([10.0, 10.0, 10.0, 0.0, 0.0]),
                             long=np.array([40.0, 40.0, 40.0, 20.0, 20.0]), period=2 * math.pi / OMEGA)
    base = dict(
        ground_state_energy=-0.58, ionization_potential=0.58, omega0=OMEGA, ponderomotive_energy=UP,
        keldysh_parameter=0.9, barrier_suppression_field=0.08, peak_field=0.067, three_step=None,
        trajectories=None, tunnelling_time=np.zeros(0), tunnelling_probability=np.zeros(0),
        ionization_probability=0.1, harmonic_cutoff=2.0, time_frequency=None, emission=emission,
        photoelectron_method="surface_flux",
        edges=PhotoelectronEdges(0.7, 3.5, -4.0, -2.0, np.zeros(1)),
        ponderomotive=PonderomotiveShift(True, "", 0.33, UP), streaking=None, cutoff=cut,
    )
    base.update(changes)
    return RunAnalysis(**base)


# ------------------------------------------------------------------ quantities


def _row(key, quantum, **kw):
    from tdse1d.analysis.report import Row

    return Row(key.replace("_", " "), key, 1.0, "test", quantum, math.nan, "hartree", "", **kw)


def test_quantum_values_are_the_values_the_rows_show():
    from tdse1d.analysis.report import quantum_values

    table = [_row("harmonic_cutoff", 2.0), _row("harmonic_cutoff", 2.0), _row("direct_edge", 0.7),
             _row("backscattered_edge", math.nan, reason="below the noise floor")]
    assert quantum_values(table) == {"harmonic_cutoff": 2.0, "direct_edge": 0.7}
    # the null: two rows of one key showing different numbers have no single value to certify
    with pytest.raises(ValueError, match="two values"):
        quantum_values([_row("harmonic_cutoff", 2.0), _row("harmonic_cutoff", 2.1)])


def test_every_report_key_has_a_unit_and_a_tolerance():
    # the keys of every row the report can build (the source of the report's rows)
    import re

    import tdse1d.analysis.report as report

    source = Path(report.__file__).read_text()
    keys = set(re.findall(r'b\.add\([^,]+,\s*f?"([a-z_{}]+)"', source))
    keys = {k for k in keys if "{" not in k} | {"sideband_below", "sideband_above", "emission_time_short",
                                                  "emission_time_long"}
    assert keys <= set(QUANTITIES), keys - set(QUANTITIES)
    assert set(QUANTITY_UNITS) == set(QUANTITIES) and set(tolerances(_analysis())) == set(QUANTITIES)


def test_tolerances_follow_the_run_scales():
    # each tolerance scales with the physical scale it is argued from (docstring of tolerances)
    t1, t2 = tolerances(_analysis()), tolerances(_analysis(omega0=2 * OMEGA, ponderomotive_energy=2 * UP,
                                                           ionization_probability=0.2))
    assert t1["harmonic_cutoff"].value == OMEGA and t2["harmonic_cutoff"].value == 2 * OMEGA
    assert t2["direct_edge"].value == pytest.approx(2 * t1["direct_edge"].value)
    assert t2["emission_time_short"].value == pytest.approx(t1["emission_time_short"].value / 2)
    assert t2["ionization_probability"].value == pytest.approx(2 * t1["ionization_probability"].value)
    assert all(t.reason for t in t1.values()) and set(t1) == set(QUANTITIES)


# ------------------------------------------------------------------ the spread


def _tol(**values):
    return {k: Tolerance(v, "test") for k, v in values.items()}


def test_richardson_factor_recovers_the_limit_of_a_power_law():
    # exact: q(h) = q_inf + C h^p sampled at h and h / r; the main run's error is
    # factor x (q(h/r) - q(h)) in magnitude
    for r, p in ((2.0, 1.0), (2.0, 2.0), (1.5, 4.0), (3.0, 0.5)):
        q = lambda h: 0.138 + 0.7 * h**p
        h = 0.3
        assert richardson_factor(r, p) * abs(q(h / r) - q(h)) == pytest.approx(abs(q(h) - 0.138), rel=1e-12)
    assert richardson_factor(2.0, math.inf) == 1.0 and richardson_factor(2.0, 1.0) == 2.0
    with pytest.raises(ValueError):
        richardson_factor(1.0, 2.0)


def test_spread_is_the_largest_move_and_names_the_parameter_beyond_tolerance():
    main = {"ionization_probability": 0.161, "harmonic_cutoff": 2.0}
    companions = [("time step", {"ionization_probability": 0.1612, "harmonic_cutoff": 2.01}, 1.0),
                  ("grid spacing", {"ionization_probability": 0.1609, "harmonic_cutoff": 1.98}, 1.0),
                  ("box", {"ionization_probability": 0.137, "harmonic_cutoff": 2.005}, 1.0)]
    out = certify_quantities(main, companions, _tol(ionization_probability=0.003, harmonic_cutoff=0.057))
    p = out["ionization_probability"]
    assert p.uncertainty == pytest.approx(0.024, abs=1e-12)
    assert not p.converged and p.note == "not converged: " + PARAMETER_ADVICE["box"]
    assert p.note.startswith("not converged: enlarge box")
    assert "time step" not in p.note and "grid spacing" not in p.note
    # covers every companion value by construction
    assert all(abs(v - p.value) <= p.uncertainty for v in p.companion_values)
    c = out["harmonic_cutoff"]
    assert c.uncertainty == pytest.approx(0.02, abs=1e-12) and c.converged and c.note == ""


def test_the_error_factor_scales_the_move_not_the_flag():
    # a first-order box error: q(L) = 0.138 + 0.0467 (100 / L); the main run at L = 100, the
    # companion at 200: the bare move 0.0233 falls short of the converged 0.138, twice it covers it
    main = {"ionization_probability": 0.138 + 0.0467}
    box = {"ionization_probability": 0.138 + 0.0467 / 2}
    bare = certify_quantities(main, [("box", box, 1.0)], _tol(ionization_probability=0.003))
    scaled = certify_quantities(main, [("box", box, richardson_factor(2.0, 1.0))], _tol(ionization_probability=0.003))
    q0, q1 = bare["ionization_probability"], scaled["ionization_probability"]
    assert abs(q0.value - 0.138) > q0.uncertainty  # the bare move does not cover the limit
    assert abs(q1.value - 0.138) <= q1.uncertainty + 1e-15
    assert q0.note == q1.note and not q1.converged  # the flag is the bare move's
    # a move below the tolerance stays converged whatever the factor
    small = certify_quantities(main, [("box", {"ionization_probability": main["ionization_probability"] - 0.002},
                                       2.0)], _tol(ionization_probability=0.003))["ionization_probability"]
    assert small.converged and small.uncertainty == pytest.approx(0.004)


def test_two_parameters_beyond_tolerance_are_both_named():
    out = certify_quantities({"direct_edge": 0.7}, [("time step", {"direct_edge": 0.8}, 1.0),
                                                    ("grid spacing", {"direct_edge": 0.7}, 1.0),
                                                    ("box", {"direct_edge": 0.55}, 1.0)], _tol(direct_edge=0.035))
    q = out["direct_edge"]
    assert q.note == f"not converged: {PARAMETER_ADVICE['time step']}; {PARAMETER_ADVICE['box']}"
    assert q.uncertainty == pytest.approx(0.15)


def test_null_identical_companions_give_zero_spread_and_converged():
    main = {"harmonic_cutoff": 2.0, "ionization_probability": 0.1, "direct_edge": 0.7, "line_shift": -0.33}
    tol = tolerances(_analysis())
    out = certify_quantities(main, [(p, dict(main), 2.0) for p in PARAMETER_ADVICE], tol)
    assert set(out) == set(main)
    assert all(q.uncertainty == 0.0 and q.converged and q.note == "" for q in out.values())


def test_a_companion_that_loses_a_reading_is_flagged():
    out = certify_quantities({"harmonic_cutoff": 2.0}, [("time step", {"harmonic_cutoff": 2.0}, 1.0),
                                                        ("box", {}, 2.0)], _tol(harmonic_cutoff=0.057))
    q = out["harmonic_cutoff"]
    assert not q.converged and "box companion could not read it" in q.note and q.uncertainty == 0.0
    assert math.isnan(q.companion_values[1])


# ------------------------------------------------------------------ end to end

# three cycles, not two: the spectrum of a two-cycle pulse has no plateau ending in a
# faster fall that every cutoff rule reads (its 1-decade readings spread over 25-37 eV and
# the two-line fit finds no knee), and the certified values below must include a cutoff
TINY = """
[atom]
ionization_potential = "15.76 eV"

[[laser]]
wavelength = "800 nm"
peak_intensity = "1e14 W/cm^2"
cycles = 3

[grid]
spacing = 0.4
points = 512

[propagation]
time_step = 0.2
after_pulse = "0.5 fs"

[output]
snapshots = 2
"""


@pytest.fixture(scope="module")
def certified(tmp_path_factory):
    from tdse1d import api

    folder = tmp_path_factory.mktemp("certify")
    inp = folder / "tiny.toml"
    inp.write_text(TINY)
    done = api.certify(inp, folder / "tiny.h5", keep_companions=True, workers=2)
    return inp, done


def test_end_to_end_certified_run_writes_and_reads_back(certified):
    from tdse1d.io.certification_file import read_certification, read_numerical_uncertainties
    from tdse1d.io.layout_check import layout_problems

    inp, done = certified
    spreads, notes = read_numerical_uncertainties(done.path)
    assert spreads == {k: q.uncertainty for k, q in done.quantities.items() if math.isfinite(q.uncertainty)}
    assert notes == done.not_converged
    assert "ionization_probability" in spreads and spreads["ionization_probability"] >= 0
    stored = read_certification(done.path)
    with h5py.File(done.path, "r") as f:
        assert layout_problems(f) == []
        assert f["certification/ionization_probability/value"][()] == f["ionization/probability"][()]
        assert f["certification/ground_state_energy/uncertainty"].attrs["units"] == "hartree"
        names = [n.decode() for n in f["certification/companions/name"][()]]
    assert names == ["time_step", "grid_spacing", "box"]
    with h5py.File(done.path, "r") as f:
        factors = f["certification/companions/error_factor"][()]
    assert list(factors) == [1.0, 1.0, 2.0]  # order 2 -> 4 at the same step, spectral grid, first-order box
    for key, q in stored.items():
        assert q["unit"] == QUANTITY_UNITS[key]
        assert q["uncertainty"] == pytest.approx(np.nanmax(factors * np.abs(q["companion_values"] - q["value"])))
    # the kept companions are result files of the refined inputs
    for name in names:
        with h5py.File(done.kept / f"{name}.h5", "r") as f:
            assert f.attrs["complete"]
    with h5py.File(done.kept / "box.h5", "r") as f:
        assert f.attrs["grid_points"] == 1024 and f.attrs["absorber_width"] == pytest.approx(
            2 * h5py.File(done.path, "r").attrs["absorber_width"])
    assert len(repr(done)) < 300


def test_certified_values_are_the_report_s_quantum_values(certified):
    """One reading, one place: each stored /certification/{key}/value is the number the
    report shows for that key (the quantum value, or for a row not converged the middle
    of the range it shows instead), read here from the file and from ``tdse1d.report``;
    a quantity the report does not show has no certification (the null: a value read by
    another rule, or a quantity with no row, would fail this)."""
    from tdse1d import api

    inp, done = certified
    shown = {}
    for r in api.report(done.path).rows:
        if "." in r.key:  # a derived spectrum's reading (tdse1d.spectra.derived): read off, not compared
            continue
        if r.unconverged_range:
            value = 0.5 * (r.unconverged_range[0] + r.unconverged_range[1])
        else:
            value = r.quantum
        if math.isfinite(value):
            shown.setdefault(r.key, []).append(value)
    with h5py.File(done.path, "r") as f:
        stored = {k: f[f"certification/{k}/value"][()] for k in f["certification"] if k != "companions"}
    assert set(stored) == set(shown), (set(stored) ^ set(shown))
    assert "harmonic_cutoff" in stored and "ionization_probability" in stored
    for key, value in stored.items():
        # the middle of value +- u is the value to rounding: 1e-12 relative
        assert all(v == pytest.approx(value, rel=1e-12, abs=1e-15) for v in shown[key]), key
    for absent in ("streaking_shift", "line_shift", "sideband_below", "sideband_above"):
        assert absent not in stored  # a harmonic run shows no XUV rows


def test_reader_gives_empty_dicts_for_an_uncertified_file(tmp_path):
    from tdse1d import api
    from tdse1d.io.certification_file import read_numerical_uncertainties

    inp = tmp_path / "tiny.toml"
    inp.write_text(TINY)
    out = api.run(inp, tmp_path / "plain.h5")
    assert read_numerical_uncertainties(out.path) == ({}, {})


def test_command_line_certify_prints_the_library_table(tmp_path, capsys, monkeypatch):
    from tdse1d.cli import program as cli
    from tdse1d.io.certification_file import read_certification

    monkeypatch.chdir(tmp_path)
    inp = tmp_path / "tiny.toml"
    inp.write_text(TINY + "\n[certification]\nenabled = true\n")
    assert cli.main(["run", str(inp), "-o", "c.h5"]) == 0
    out = capsys.readouterr().out
    assert "certified by 3 companion runs" in out and "ionization probability" in out
    assert read_certification(tmp_path / "c.h5")
    # companions not kept: only the result is left
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.h5", "tiny.toml"]


def test_the_report_of_a_certified_file_carries_its_numerical_uncertainties(certified):
    """The report reads the certification the file holds: each row of a certified quantity
    has that spread as its numerical part; an uncertified run of the same input has none
    (the null: the rows would be the same if the report ignored the certification)."""
    from tdse1d import api

    inp, done = certified
    report = api.report(done.path)
    assert report.numerical == {k: q.uncertainty for k, q in done.quantities.items() if math.isfinite(q.uncertainty)}
    rows = [r for r in report.rows if r.key in report.numerical]
    assert rows, "no row of a certified quantity"
    for r in rows:
        assert dict(r.parts)["numerical"] == pytest.approx(report.numerical[r.key])
    plain = api.report(api.run(inp, inp.with_name("plain-for-report.h5")).path)
    assert plain.numerical == {} and all(math.isnan(dict(r.parts).get("numerical", math.nan)) for r in plain.rows)


def test_command_line_refuses_what_a_certified_run_does_not_take(tmp_path, capsys, monkeypatch):
    from tdse1d.cli import program as cli

    monkeypatch.chdir(tmp_path)
    inp = tmp_path / "tiny.toml"
    inp.write_text(TINY)
    assert cli.main(["run", str(inp), "--certify", "--strict", "-o", "c.h5"]) == 1
    err = capsys.readouterr().err
    assert err.startswith("tdse1d: error: ") and "--strict" in err and err.count("\n") == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["tiny.toml"]


def test_the_run_s_own_convergence_flag_of_p_ion_makes_its_row_unresolved(tmp_path):
    """A run whose bound-state count says P_ion is not converged in the box (the file's
    /ionization@converged) reports no value but the range, whether certified or not; the
    same file with the flag set reports the value (the null)."""
    import shutil

    from tdse1d import api

    inp = tmp_path / "tiny.toml"
    inp.write_text(TINY)
    out = api.run(inp, tmp_path / "plain.h5").path
    flagged = tmp_path / "flagged.h5"
    shutil.copy(out, flagged)
    for path, converged in ((out, True), (flagged, False)):
        with h5py.File(path, "r+") as f:
            f["ionization"].attrs["converged"] = converged
    ion = {p: next(r for r in api.report(p).rows if r.key == "ionization_probability") for p in (out, flagged)}
    assert "enlarge the box" not in ion[out].reason and math.isfinite(ion[out].quantum)
    assert ion[flagged].verdict == "unresolved" and math.isnan(ion[flagged].quantum)
    assert "enlarge the box" in ion[flagged].reason and len(ion[flagged].unconverged_range) == 2
