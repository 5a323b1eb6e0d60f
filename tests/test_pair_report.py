"""``estimate``, ``report``, ``plot`` and ``export`` on a two-electron input and result file.

One small run (48^2 points, 272 steps, a few seconds) is made once for the module.
Checks against what lies outside the code under test:

* conservation: the regions count the norm the absorbers took in the region it was
  taken from, so neutral + single + double = 1 at every step and radius (the initial
  norm), exact up to round-off: 272 steps of unitary factors and sums of 2304 terms
  each lose about 1e-13; the bound 1e-9 is that with a wide margin. Null: columns of
  two different radii mixed (an export that misassigns them) miss by far more. (The
  sequential columns are not held to it: their rate equations' integrator was found
  to conserve N0 + N1 + N2 only to 7.5e-6 on this pulse; the exported columns are
  checked to be the file's instead);
* the time column in fs is the file's time in a.u. times the atomic unit of time of
  CODATA (scipy.constants), to the printed digits (1e-9 relative);
* 3.17 Up against Ip2: the Corkum law with Up = E0^2 / (4 w^2) for the input's field,
  computed here;
* the verdict of the ratio row follows the rule of docs/analysis.md recomputed here
  from the exported yields (value at the reported radius, uncertainty the farthest
  other radius), with constructed records for each word: agrees, deviates, unresolved;
* the estimate's steps are the run's, its memory the runner's own estimate;
* every command on the wrong kind of file or figure answers in one line, exit 2.
"""

import io
import json
import math
from types import SimpleNamespace

import h5py
import numpy as np
import pytest
import scipy.constants as sc
from conftest import small_input, small_pair_input

from tdse1d import api
from tdse1d.analysis.pair_report import PairRecord, PairReport, pair_rows
from tdse1d.input.pair_problem import build_pair_problem
from tdse1d.input.schema import load_input
from tdse1d.runs.pair_runner import pair_memory_bytes

FIELD, OMEGA = 0.3, 1.0
INPUT = small_pair_input(field=FIELD, snapshots=3)  # photon energy OMEGA = 1 a.u.

#: atomic unit of time in fs, CODATA through scipy: hbar / E_h
AU_FS = sc.hbar / sc.physical_constants["Hartree energy"][0] * 1e15


def _cli(capsys, *args):
    """The command in this process (its imports and compiled kernels are loaded once)."""
    from tdse1d.cli import program

    capsys.readouterr()
    status = program.main([str(a) for a in args])
    out, err = capsys.readouterr()
    return SimpleNamespace(returncode=status, stdout=out, stderr=err)


def _one_line_error(done):
    lines = done.stderr.strip().splitlines()
    return done.returncode == 2 and len(lines) == 1 and "Traceback" not in done.stderr


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    base = tmp_path_factory.mktemp("pair-report")
    path = base / "he.toml"
    path.write_text(INPUT)
    problem = build_pair_problem(load_input(path))
    outcome = api.run(problem, base / "he.h5")
    return {"input": path, "file": outcome.path, "problem": problem, "base": base}


def _yields(path):
    table = api.export(path, "yields", "au")
    return table, {name.split(" [")[0]: table.data[:, k] for k, name in enumerate(table.names)}


def test_exported_yields_conserve_the_norm_and_have_units(run, capsys):
    table, cols = _yields(run["file"])
    assert table.names[0] == "time [fs]" and all(n.endswith("[1]") for n in table.names[1:])
    with h5py.File(run["file"]) as f:
        t_au = f["observables/time"][()]
        radii = f["two_electron/regions/radius"][()]
    np.testing.assert_allclose(cols["time"], t_au * AU_FS, rtol=1e-9)
    for r in radii:
        total = sum(cols[f"{kind}_R{r:g}"] for kind in ("neutral", "single_ionization", "double_ionization"))
        assert np.max(np.abs(total - 1)) < 1e-9, r
    with h5py.File(run["file"]) as f:
        for name in ("neutral", "single", "double"):
            np.testing.assert_array_equal(cols[f"sequential_{name}"], f[f"two_electron/sequential/{name}"][()])
    # null: the neutral of one radius with the ionized parts of another is not conserved
    mixed = cols["neutral_R8"] + cols["single_ionization_R15"] + cols["double_ionization_R15"]
    assert np.max(np.abs(mixed - 1)) > 1e-6
    # the CSV the command writes holds the same table
    out = run["base"] / "yields.csv"
    done = _cli(capsys, "export", run["file"], "--what", "yields", "-o", out)
    assert done.returncode == 0, done.stderr
    np.testing.assert_array_equal(np.loadtxt(out, delimiter=",", skiprows=1), np.loadtxt(
        io.StringIO(_csv(table)), delimiter=",", skiprows=1))


def _csv(table):
    buffer = io.StringIO()
    table.write(buffer)
    return buffer.getvalue()


def test_report_rows_follow_the_yields_and_the_verdict_rule(run, capsys):
    report = api.report(run["file"])
    assert isinstance(report, PairReport) and len(repr(report)) < 300
    rows = {r.key: r for r in report.rows}
    _, cols = _yields(run["file"])
    with h5py.File(run["file"]) as f:
        radii = f["two_electron/regions/radius"][()]
    ratios = np.array([cols[f"double_ionization_R{r:g}"][-1] / cols[f"single_ionization_R{r:g}"][-1] for r in radii])
    q, u = ratios[0], np.max(np.abs(ratios[1:] - ratios[0]))
    p = cols["sequential_double"][-1] / cols["sequential_single"][-1]
    row = rows["double_to_single"]
    assert row.quantum == pytest.approx(q, rel=1e-12) and row.uncertainty == pytest.approx(u, rel=1e-12)
    assert row.prediction == pytest.approx(p, rel=1e-12)
    z = (q - p) / u
    assert row.z == pytest.approx(z, rel=1e-9)
    assert row.verdict == ("agrees" if abs(z) <= 2 else "deviates")
    # 3.17 Up against the ion's Ip: Up = E0^2 / (4 w^2) of the input (Corkum 1993)
    knee = rows["return_energy"]
    assert knee.prediction == pytest.approx(3.17 * FIELD**2 / (4 * OMEGA**2), rel=1e-12)
    assert knee.quantum == pytest.approx(rows["ion_ionization_potential"].quantum) and knee.verdict == ""
    assert "below the ion's Ip2" in knee.note  # 0.071 hartree against Ip2 = 1.48
    # the command prints the table and the same rows as JSON
    done = _cli(capsys, "report", run["file"])
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == report.table().strip()  # the command prints what the library returns
    assert "double / single ionization" in done.stdout and "3.17 Up" in done.stdout
    data = json.loads(_cli(capsys, "report", run["file"], "--json").stdout)
    assert [r["key"] for r in data["rows"]] == [r.key for r in report.rows]


def _record(single, double, seq_single=0.1, seq_double=1e-3):
    """A constructed record: final single and double yields at three radii."""
    single, double = np.asarray(single, float), np.asarray(double, float)
    regions = {"neutral": np.stack([1 - single - double] * 2, axis=1),
               "single_ionization": np.stack([single] * 2, axis=1),
               "double_ionization": np.stack([double] * 2, axis=1)}
    sequential = {"neutral": np.array([1, 1 - seq_single - seq_double]), "single": np.array([0, seq_single]),
                  "double": np.array([0, seq_double])}
    return PairRecord(np.array([0.0, 1.0]), np.zeros(2), np.array([10.0, 8.0, 15.0]), regions, sequential, 0.9, 1.5)


@pytest.mark.parametrize("double, word", [
    ((1e-3, 1.05e-3, 0.95e-3), "agrees"),        # ratio 0.01 +- 5e-4, sequential 0.01
    ((1e-1, 1.05e-1, 0.95e-1), "deviates"),      # ratio 1 +- 0.05 against 0.01: the knee side
    ((1e-3, 1e-1, 1e-6), "unresolved"),          # the radii disagree by more than the ratio itself
])
def test_each_verdict_word_from_constructed_records(double, word):
    row = next(r for r in pair_rows(_record([0.1, 0.1, 0.1], double)) if r.key == "double_to_single")
    assert row.verdict == word, row


def test_plot_draws_the_pair_figures_and_refuses_others_in_one_line(run, capsys):
    out = run["base"] / "fig.png"
    figures = api.plot(run["file"], "all", out)
    assert set(figures.files) == {"yields", "momentum-map", "field", "harmonic"}
    assert all(p.stat().st_size > 1000 for p in figures.paths)
    assert _one_line_error(_cli(capsys, "plot", run["file"], "--what", "populations", "-o", run["base"] / "p.png"))


def test_export_refuses_what_the_file_cannot_give_in_one_line(run, capsys, tmp_path):
    done = _cli(capsys, "export", run["file"], "--what", "photoelectron")
    assert _one_line_error(done) and "two-electron" in done.stderr
    # null: a one-electron run has no yields of the two-electron atom
    path = tmp_path / "one.toml"
    path.write_text(small_input(cycles=1, points=256, absorber_width="10 bohr", after_pulse="0.1 fs"))
    one = api.run(path, tmp_path / "one.h5").path
    done = _cli(capsys, "export", one, "--what", "yields")
    assert _one_line_error(done) and "two-electron" in done.stderr


def test_estimate_gives_the_runs_grid_steps_and_memory(run, capsys):
    est = api.estimate(run["input"])
    problem = run["problem"]
    with h5py.File(run["file"]) as f:
        assert est.problem.time.steps == f.attrs["steps"] and est.problem.grid.points == f.attrs["grid_points"]
    assert est.memory == pair_memory_bytes(problem)  # the estimate without states counts the same states
    assert est.wall.wall > 0 and math.isfinite(est.wall.wall) and len(repr(est)) < 300
    done = _cli(capsys, "estimate", run["input"])
    assert done.returncode == 0, done.stderr
    assert "48 x 48" in done.stdout and f"{problem.time.steps}" in done.stdout and "wall time" in done.stdout
    data = json.loads(_cli(capsys, "estimate", run["input"], "--json").stdout)
    assert data["steps"] == problem.time.steps and data["memory_bytes"] == est.memory
    # 3.17 Up against Ip2: the Corkum law for the input's field; they meet where the
    # intensity (c eps0 E^2 / 2, CODATA) times 3.17 Up / I is Ip2 (Up grows as I)
    k = est.knockout
    up = FIELD**2 / (4 * OMEGA**2)
    assert k["return_energy"] == pytest.approx(3.17 * up, rel=1e-12)
    assert k["ion_ionization_potential"] == pytest.approx(problem.ion_ionization_potential, rel=1e-12)
    field_si = FIELD * sc.physical_constants["atomic unit of electric field"][0]
    peak = 0.5 * sc.c * sc.epsilon_0 * field_si**2 / 1e4  # W/cm^2
    assert k["knockout_intensity_W_cm2"] == pytest.approx(peak * k["ion_ionization_potential"] / (3.17 * up), rel=1e-9)
    assert "3.17 Up against the ion's Ip2" in done.stdout and "not possible" in done.stdout
