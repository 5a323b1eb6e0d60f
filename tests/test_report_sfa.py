"""The report's SFA column: the values stored under ``sfa/`` of a run with
``spectra.sfa = true`` beside each row (read back here independently with h5py), no SFA
column for a file without them, the command's JSON against the library's rows, and
which rung deviates on constructed numbers whose answer is known.

Sources beside each check:

* the three-step model (Corkum, Phys. Rev. Lett. 71, 1994 (1993)) and the quantum
  orbits of the strong-field approximation (Lewenstein et al., Phys. Rev. A 49, 2117
  (1994)): on the plateau the short trajectories return before the long ones, and every
  return born in a half cycle falls within one optical cycle after that half cycle's
  crest (births lie between the crest and a quarter cycle after it, returns less than
  one cycle after the crest; from memory, common practice).
"""

import json
import math
import shutil
from types import SimpleNamespace

import h5py
import numpy as np
import pytest

from tdse1d import api
from tdse1d.analysis.report import Row
from tdse1d.analysis.report_sfa import ORBIT_SOURCE, with_sfa
from tdse1d.analysis.sfa import SfaReadings
from tdse1d.input.schema import load_input
from tdse1d.spectra.reading import Reading, cutoff_family

# a 2-cycle 800 nm pulse at 1e14 W/cm^2 on a soft-core hydrogen-like atom: the quiver
# amplitude E0 / w^2 ~ 16 bohr fits the 102-bohr box inside its 15-bohr absorber; a
# step of 0.2 a.u. resolves the cutoff photon (~1.4 hartree: 0.28 rad per step)
TINY = """
[atom]
softening = 1.4142135623730951
[[laser]]
wavelength = "800 nm"
peak_intensity = "1e14 W/cm^2"
cycles = 2
[grid]
points = 256
spacing = 0.4
[absorber]
width = "15 bohr"
[propagation]
time_step = 0.2
after_pulse = "0.2 fs"
[output]
snapshots = 2
[spectra]
sfa = true
"""


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """The run with SFA, and a copy with ``sfa/`` removed: the same run without SFA."""
    folder = tmp_path_factory.mktemp("sfa_report")
    (folder / "run.toml").write_text(TINY)
    with_sfa_file = api.run(load_input(folder / "run.toml"), folder / "run.h5").path
    without = folder / "no_sfa.h5"
    shutil.copy(with_sfa_file, without)
    with h5py.File(without, "r+") as f:
        del f["sfa"]
    return with_sfa_file, without


def _stored(path):
    """The SFA readings as stored, read with h5py alone (hartree)."""
    with h5py.File(path, "r") as f:
        g = f["sfa"]
        k = int(np.argmax(g["orbits/ponderomotive_energy"][()]))
        return {"cutoff": float(g["harmonic/cutoff_energy"][()]),
                "cutoff_uncertainty": float(g["harmonic/cutoff_uncertainty"][()]),
                "orbit_cutoff": float(g["orbits/cutoff"][()][k]),
                "direct_edge": float(g["photoelectron/direct_edge"][()]),
                "backscattered_edge": float(g["photoelectron/backscattered_edge"][()])}


def _stored_family(path):
    """The cutoff family on the SFA harmonic spectrum as stored, read with h5py alone."""
    with h5py.File(path, "r") as f:
        g = f["sfa"]
        ip, up, w0 = (float(g.attrs[k]) for k in ("ionization_potential", "ponderomotive_energy", "photon_energy"))
        w, p = g["harmonic/frequency"][()], g["harmonic/power"][()]
    keep = (w > 0) & (w <= 2 * (1.32 * ip + 3.17 * up) + 10 * w0)
    return cutoff_family(w[keep], p[keep], w0, ip)


def test_sfa_column_holds_the_values_stored_in_the_file(files):
    path, _ = files
    stored = _stored(path)
    table = api.report(path).rows
    cutoffs = [r for r in table if r.key == "harmonic_cutoff"]
    assert len(cutoffs) == 4, "three laws and the quantum-orbit row"
    # the run's cutoff in these rows is read by the family of rules, so the SFA's beside
    # it is the same family read off the stored SFA spectrum (up to the reach of
    # docs/sfa.md, 2 (1.32 Ip + 3.17 Up) + 10 photon energies), not the stored single rule
    family = _stored_family(path)
    for r in cutoffs:
        if family.resolved:
            assert r.sfa == family.value and r.sfa_uncertainty == family.uncertainty
        else:
            assert math.isnan(r.sfa) and r.sfa_reason == family.reason
    orbit = next(r for r in cutoffs if r.source == ORBIT_SOURCE)
    assert orbit.prediction == pytest.approx(stored["orbit_cutoff"], rel=1e-12)
    assert orbit.rung == ""  # its prediction is itself an SFA number, not the classical rung
    for key in ("direct_edge", "backscattered_edge"):
        rows = [r for r in table if r.key == key]
        assert len(rows) == 2
        for r in rows:
            if math.isfinite(stored[key]):
                assert r.sfa == pytest.approx(stored[key], rel=1e-12), key
            else:
                assert math.isnan(r.sfa) and r.sfa_reason, key
    # rows the SFA does not speak to keep an empty column
    ion = next(r for r in table if r.key == "ionization_probability")
    assert math.isnan(ion.sfa) and ion.rung == ""


def test_sfa_emission_times_lie_in_the_rows_frame(files):
    """Short returns before long, both within one cycle after the crest (module
    docstring): a value in absolute time, or a branch swap, fails."""
    path, _ = files
    report = api.report(path)
    rows = {r.key: r for r in report.rows}
    short, long_ = rows["emission_time_short"], rows["emission_time_long"]
    s, l_ = short.sfa / short.period, long_.sfa / long_.period
    assert 0.0 < s < l_ < 1.0, (s, l_)
    # each within the scale of the quantum orbits' departure from the classical ones, the
    # imaginary part of the ionization time, sqrt(2 Ip) / E0 (1.0 / 0.053 a.u. = 0.17 cycle here)
    a = report.analysis
    tunnel = math.sqrt(2 * a.ionization_potential) / a.peak_field / short.period
    assert 0.1 < tunnel < 0.3  # the scale named above, for this pulse
    assert abs(s - short.prediction / short.period) < tunnel
    assert abs(l_ - long_.prediction / long_.period) < tunnel
    # a rung is named where the run's row has a value; a row left unresolved (too few or
    # random-looking quantum times on the branch) has none to compare: "unknown"
    for row in (short, long_):
        if math.isfinite(row.quantum):
            assert row.rung in ("none", "classical", "sfa", "run", "all", "unclear")
        else:
            assert row.verdict == "unresolved" and row.rung == "unknown"


def test_sfa_emission_time_is_counted_from_its_half_cycles_crest():
    """Constructed orbits of two half cycles with crests at 100 and 155 a.u. returning
    40 and 70 a.u. after them (short, long); the run's classical times sit near the second
    half cycle's orbits: the value is 40 (70) a.u., never the absolute time or the other
    half cycle's."""
    from tdse1d.analysis.report_sfa import sfa_emission_after_crest

    period = 110.0
    energy = np.linspace(1.0, 2.0, 11)
    crest = np.array([100.0, 155.0])
    orbits = {"energy": energy, "crest_time": crest,
              "emission_short": np.tile(crest[:, None] + 40.0, (1, energy.size)),
              "emission_long": np.tile(crest[:, None] + 70.0, (1, energy.size))}
    emission = SimpleNamespace(frequency=np.array([1.2, 1.5, 1.8]), short=np.full(3, 198.0),
                               long=np.full(3, 221.0))
    assert sfa_emission_after_crest(emission, orbits, "short", period) == pytest.approx(40.0)
    assert sfa_emission_after_crest(emission, orbits, "long", period) == pytest.approx(70.0)
    # outside the orbits' energies nothing is compared
    far = SimpleNamespace(frequency=np.array([3.0]), short=np.array([198.0]), long=np.array([221.0]))
    assert math.isnan(sfa_emission_after_crest(far, orbits, "short", period))


def test_a_file_without_sfa_reports_as_before(files):
    """The same run without ``sfa/``: no SFA column, SFA keys null, no quantum-orbit row,
    and every other field of every row as in the file with SFA."""
    with_file, without = files
    plain = api.report(without)
    assert plain.sfa is None and plain.orbits is None
    data = plain.to_json()
    assert data["sfa_column"] is False
    assert all(r["sfa"] is None and r["sfa_uncertainty"] is None and r["deviating_rung"] is None
               for r in data["rows"])
    text = plain.table()
    assert "SFA" not in text.splitlines()[1] and "deviating rung" not in text
    full = api.report(with_file)
    assert full.to_json()["sfa_column"] is True and "SFA +- uncertainty" in full.table()
    kept = [r for r in full.rows if r.source != ORBIT_SOURCE]
    assert len(kept) == len(plain.rows) == len(full.rows) - 1
    fields = ("quantity", "key", "source", "verdict", "unit")
    for a, b in zip(kept, plain.rows):
        assert [getattr(a, n) for n in fields] == [getattr(b, n) for n in fields]
        for n in ("prediction", "quantum", "uncertainty"):
            assert getattr(a, n) == pytest.approx(getattr(b, n), rel=1e-12, nan_ok=True), (a.quantity, n)
        assert math.isnan(b.sfa) and b.rung == ""


def test_command_json_and_library_rows_agree(files, capsys):
    from tdse1d.cli import program

    path, _ = files
    assert program.main(["report", str(path), "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)["rows"]
    table = api.report(path).rows
    assert len(printed) == len(table)
    for p, r in zip(printed, table):
        for key, value in (("sfa", r.sfa), ("sfa_uncertainty", r.sfa_uncertainty)):
            if math.isfinite(value):
                assert p[key] == pytest.approx(value, rel=1e-12), (r.quantity, key)
            else:
                assert p[key] is None
        assert p["deviating_rung"] == (r.rung or None)
        assert p["sfa_reason"] == (r.sfa_reason or None)


# ------------------------------------------------------- the rung on constructed numbers


def _row(source, quantum, uncertainty, prediction, key="harmonic_cutoff"):
    return Row("harmonic cutoff", key, prediction, source, quantum, uncertainty, "hartree", "agrees")


def _readings(cutoff, u, reason=""):
    return SfaReadings(cutoff, u, math.nan, math.nan, math.nan, np.zeros(0), np.zeros(0), np.zeros(0),
                       math.nan, reason)


ANALYSIS = SimpleNamespace(omega0=0.057, emission=None)


# half widths are 2 u (the verdict's band): run 2u, SFA 2u_sfa, classical 0
@pytest.mark.parametrize("run, u, sfa, u_sfa, classical, expected", [
    # run and SFA agree within the row's combined uncertainty (0.4 <= 0.5 + 0.1); the
    # classical value is 0.6 > 0.5 from the run
    (1.4, 0.25, 1.0, 0.05, 2.0, "classical"),
    # the same numbers with the reading part alone (0.1) as the run's width: no two agree
    (1.4, 0.1, 1.0, 0.05, 2.0, "all"),
    (1.0, 0.1, 2.0, 0.05, 1.05, "sfa"),
    (3.0, 0.1, 1.0, 0.05, 1.02, "run"),
    (1.0, 0.1, 1.02, 0.05, 1.05, "none"),
    # the run 1.5 u from the classical value (the verdict: agrees) and on the SFA value,
    # the two models 6 SFA widths apart: the run cannot tell them apart. With a 1 u band
    # the rung would name the classical model while the row's verdict says it agrees
    (1.3, 0.2, 1.3, 0.05, 1.6, "unclear"),
    (math.nan, 0.1, 1.0, 0.05, 1.0, "unknown"),
])
def test_rung_from_the_rows_combined_uncertainty_and_the_sfa_width(run, u, sfa, u_sfa, classical, expected):
    row = _row("three-step model, this pulse", run, u, classical)
    (out,) = with_sfa([row], ANALYSIS, _readings(sfa, u_sfa))
    assert out.rung == expected
    assert out.sfa == sfa and out.sfa_uncertainty == u_sfa


def test_rows_whose_prediction_is_not_classical_get_no_rung():
    table = [_row("1.32 Ip + 3.17 Up", 1.4, 0.25, 2.0), _row(ORBIT_SOURCE, 1.4, 0.25, 2.0),
             _row("quasi-static WKB tunnelling", 0.1, 0.01, 0.2, key="ionization_probability")]
    out = with_sfa(table, ANALYSIS, _readings(1.0, 0.05))
    assert [r.rung for r in out] == ["", "", ""]
    assert out[0].sfa == 1.0 and math.isnan(out[2].sfa)


def test_unread_sfa_cutoff_is_a_reason_not_a_value():
    row = _row("Ip + 3.17 Up", 1.4, 0.5, 2.0)
    (out,) = with_sfa([row], ANALYSIS, _readings(math.nan, 0.057, "below the noise floor"))
    assert math.isnan(out.sfa) and math.isnan(out.sfa_uncertainty)
    assert out.sfa_reason == "below the noise floor" and out.rung == "unknown"


def test_the_cutoff_rows_take_the_sfa_family_reading_where_there_is_one():
    # the single rule says 1.0 +- 0.05, the family 1.2 +- 0.1: the row shows the family,
    # the reading the run's own cutoff in the row is made with; and the rung follows it
    # (run 1.25 +- 0.05 agrees with the family's 1.2 within 2 (0.05 + 0.1), not with 1.0)
    family = Reading(1.2, 1.1, 1.3, {"a": 1.1, "b": 1.3}, 0.0)
    readings = SfaReadings(1.0, 0.05, math.nan, math.nan, math.nan, np.zeros(0), np.zeros(0), np.zeros(0),
                           math.nan, "", family)
    (out,) = with_sfa([_row("three-step model, this pulse", 1.25, 0.05, 2.0)], ANALYSIS, readings)
    assert out.sfa == 1.2 and out.sfa_uncertainty == family.uncertainty
    assert out.rung == "classical"
    # the null: the same readings without the family fall back to the single rule
    (old,) = with_sfa([_row("three-step model, this pulse", 1.25, 0.05, 2.0)], ANALYSIS,
                      _readings(1.0, 0.05))
    assert old.sfa == 1.0 and old.rung != "classical"


def test_without_sfa_the_rows_are_untouched():
    row = _row("Ip + 3.17 Up", 1.4, 0.5, 2.0)
    assert with_sfa([row], ANALYSIS, None) == [row]
