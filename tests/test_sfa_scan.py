"""SFA scans on the scan machinery (plan key ``rungs``): the points' SFA run as Dask tasks
of a local cluster, the summary's ``/sfa`` group, the cutoff-against-Up figure.

Physics reference: the SFA cutoff law Ip F(Ip/Up) + 3.17 Up of Lewenstein et al., Phys.
Rev. A 49, 2117 (1994), with F between 1 and 1.32 (1.32 for Ip << Up, decreasing towards
1 as Ip/Up grows: the paper's text, from memory). A few seconds each on 2 cores.
"""

import math

import h5py
import numpy as np
import pytest

from tdse1d import units
from tdse1d.input.spec import InputError
from tdse1d.scans.plan import PlanError, load_plan

#: a soft-core atom with a = sqrt(2) (Ip = 0.5 hartree; Javanainen, Eberly and Su, Phys.
#: Rev. A 38, 3430 (1988)) in a flat-top pulse: on the plateau every half cycle has the
#: pulse's peak Up, so the law at the peak Up applies without an envelope correction
FLAT_TOP = """
[atom]
softening = 1.4142135623730951
[[laser]]
wavelength = "800 nm"
peak_intensity = "1e14 W/cm^2"
envelope = "flat-top"
cycles = 6
ramp_cycles = 1
[grid]
points = 512
spacing = 0.4
[output]
snapshots = 0
"""

INTENSITIES = ["1e14 W/cm^2", "1.5e14 W/cm^2", "2e14 W/cm^2"]

#: a 2-cycle pulse and a coarse time step: a run of a fraction of a second (the machinery, not physics)
SHORT = """
[atom]
softening = 1.4142135623730951
[[laser]]
wavelength = "800 nm"
peak_intensity = "1e14 W/cm^2"
cycles = 2
[grid]
points = 512
spacing = 0.4
[propagation]
time_step = 0.2
after_pulse = 0
[output]
snapshots = 0
"""


def _plan(tmp_path, rungs='["sfa"]', name="plan.toml"):
    (tmp_path / "atom.toml").write_text(FLAT_TOP)
    plan = tmp_path / name
    plan.write_text(f'base = "atom.toml"\nrungs = {rungs}\n[[axis]]\nkey = "laser.0.peak_intensity"\n'
                    f'values = {INTENSITIES!r}\n'.replace("'", '"'))
    return plan


@pytest.fixture(scope="module")
def sfa_scan(tmp_path_factory):
    """The SFA intensity scan run by ``tdse1d.scan`` on a local cluster of 2 workers."""
    import tdse1d

    tmp = tmp_path_factory.mktemp("sfa_scan")
    outcome = tdse1d.scan(_plan(tmp), tmp / "scan", workers=2)
    return tmp, outcome


def within_law(summary, up_ev=None):
    """For each point: does the SFA cutoff read off the spectrum lie in the band about the
    law Ip F(Ip/Up) + 3.17 Up with 1 <= F <= 1.32 (Lewenstein 1994)?

    Band, argued before the scan was first run: at most one harmonic order below
    Ip + 3.17 Up, at most 4 orders above 1.32 Ip + 3.17 Up. Below: the knee of the SFA
    spectrum of a flat top is the quantum-orbit branch point, which the reading rule
    never places before (it returns q_k + drop/s, docs/spectra.md) except through its
    smoothing over +-1 order. Above: that +1 order, plus drop/s = 1.5/s orders with a
    fall beyond the cutoff of s >= 0.5 decade per order (the SFA's exponential fall
    beyond the branch point is steeper than that: common practice, no source), so 3
    orders more. ``up_ev`` replaces the summary's Up (the null case)."""
    g = summary["sfa"]
    ip, cutoff, w = g["ionization_potential_eV"][()], g["cutoff_energy_eV"][()], g["photon_energy_eV"][()]
    up = g["ponderomotive_energy_eV"][()] if up_ev is None else np.asarray(up_ev)
    low = ip + 3.17 * up - 1 * w
    high = 1.32 * ip + 3.17 * up + 4 * w
    return (cutoff >= low) & (cutoff <= high)


def test_sfa_scan_summary_follows_the_cutoff_law(sfa_scan):
    tmp, outcome = sfa_scan
    assert outcome.missing == () and sorted(outcome.execution.done) == [0, 1, 2]
    points = sorted((tmp / "scan" / "points").glob("*.sfa.h5"))
    assert len(points) == 3 and not list((tmp / "scan" / "points").glob("????????????????.h5"))  # no run files
    with h5py.File(outcome.summary.path, "r") as f:
        g = f["sfa"]
        assert g["complete"][()].all() and g["resolved"][()].all()
        # Up = E0^2 / (4 w^2) with I = c eps0 E0^2 / 2 (CODATA through tdse1d.units), 800 nm
        omega = units.nm_to_omega(800.0)
        for intensity, up in zip(INTENSITIES, g["ponderomotive_energy_eV"][()]):
            e0 = math.sqrt(units.to_atomic(intensity, "intensity"))
            assert up == pytest.approx(e0**2 / (4 * omega**2) * units.HARTREE_EV, rel=1e-9)
        assert g["wavelength_nm"][()] == pytest.approx([800.0] * 3, rel=1e-9)
        assert g["peak_intensity_W_cm2"][()] == pytest.approx([1e14, 1.5e14, 2e14], rel=1e-9)
        # the law of the summary lies in Lewenstein's bracket, F between 1 and 1.32
        ip, up, law = g["ionization_potential_eV"][()], g["ponderomotive_energy_eV"][()], g["law_eV"][()]
        factor = (law - 3.17 * up) / ip
        assert np.all((factor > 1.0) & (factor < 1.33)), factor
        # the cutoffs read off the SFA spectra follow it
        assert within_law(f).all(), (g["cutoff_energy_eV"][()], law)
        # null case: Up with the wrong factor, E0^2 / (2 w^2), puts every point out of the band
        assert not within_law(f, up_ev=2 * up).any()
        # the cutoff grows with Up by about 3.17 per Up (the law's slope; +-1 order at each end
        # of the Up range spread over it)
        slope = np.polyfit(up, g["cutoff_energy_eV"][()], 1)[0]
        assert abs(slope - 3.17) <= 2 * g["photon_energy_eV"][0] / np.ptp(up) + 0.1, slope


def test_cutoff_ladder_figure_of_an_sfa_summary_and_beside_another(sfa_scan, tmp_path):
    """``tdse1d plot SUMMARY --what cutoff-ladder`` (one route) and ``--beside`` (two
    summaries in one figure) against the library function (the other)."""
    import tdse1d
    from tdse1d.cli import program

    tmp, outcome = sfa_scan
    figures = tdse1d.plot(outcome.summary.path, "cutoff-ladder", tmp_path / "ladder.png",
                          beside=[outcome.summary.path])
    assert figures.files["cutoff-ladder"].stat().st_size > 1000
    assert program.main(["plot", str(outcome.summary.path), "--what", "cutoff-ladder", "-o",
                         str(tmp_path / "cli.png"), "--beside", str(outcome.summary.path)]) == 0
    assert (tmp_path / "cli.png").stat().st_size > 1000
    with pytest.raises(InputError, match="--beside"):
        tdse1d.plot(outcome.summary.path, "map", tmp_path / "map.png", beside=[outcome.summary.path])


def test_a_job_array_task_runs_the_sfa_rung_and_a_rerun_skips_it(sfa_scan, tmp_path):
    """``tdse1d scan PLAN --point K`` computes point K at each rung the plan asks for, in
    this process; ``--gather`` then summarises a partial scan; a finished point is not
    computed again."""
    import tdse1d

    tmp, outcome = sfa_scan
    again = tdse1d.scan(tmp / "plan.toml", tmp / "scan", point=1)
    assert again.execution.skipped == [1] and not again.execution.done
    plan = _plan(tmp_path)
    task = tdse1d.scan(plan, tmp_path / "array", point=2)
    assert task.execution.done == [2] and task.execution.ok
    assert task.execution.records[2]["rung"] == "sfa"
    gathered = tdse1d.scan(plan, tmp_path / "array", gather=True)
    assert gathered.missing == (0, 1)
    with h5py.File(gathered.summary.path, "r") as f, h5py.File(outcome.summary.path, "r") as g:
        assert list(f["sfa/complete"][()]) == [False, False, True]
        # the same input gives the same SFA, whichever path ran it (Dask worker or this process)
        assert f["sfa/cutoff_energy_eV"][2] == g["sfa/cutoff_energy_eV"][2]
        assert np.isnan(f["sfa/cutoff_energy_eV"][0])
    # the outcome names each point's file at the plan's rung, and refuses a rung the plan has not
    assert task.result(2, "sfa").name.endswith(".sfa.h5") and task.result(2, "sfa").is_file()
    with pytest.raises(InputError, match="not 'run'"):
        task.result(2)


def test_rungs_key_is_checked_with_the_plan(tmp_path):
    assert load_plan(_plan(tmp_path, '["run", "sfa"]')).rungs == ("run", "sfa")
    assert load_plan(_plan(tmp_path, '"sfa"')).points[0].rungs == ("sfa",)
    with pytest.raises(PlanError, match="unknown rung 'classical'"):
        load_plan(_plan(tmp_path, '["classical"]'))
    with pytest.raises(PlanError, match="rungs: must be"):
        load_plan(_plan(tmp_path, "[]"))


def test_run_and_sfa_rungs_of_one_plan_in_one_directory(tmp_path):
    """The SFA added to a directory that holds the plan's runs: the finished runs are
    skipped, each point gets its SFA file beside its run file, and one summary holds both
    rungs, which the cutoff-ladder figure draws as two series. Through the job-array path
    (``--point K`` then ``--gather``), in this process."""
    import tdse1d
    from tdse1d.plots.scan_figures import ladder_series
    from tdse1d.scans.directory import ScanDirectory

    (tmp_path / "atom.toml").write_text(SHORT)
    text = 'base = "atom.toml"\n{rungs}[[axis]]\nkey = "laser.0.peak_intensity"\nvalues = ["1e14 W/cm^2"]\n'
    runs, both = tmp_path / "runs.toml", tmp_path / "both.toml"
    runs.write_text(text.format(rungs=""))
    both.write_text(text.format(rungs='rungs = ["run", "sfa"]\n'))
    directory = tmp_path / "scan"
    assert tdse1d.scan(runs, directory, point=0).execution.done == [0]
    run_file = ScanDirectory(directory).result(load_plan(runs).points[0])
    stamp = run_file.stat().st_mtime_ns
    task = tdse1d.scan(both, directory, point=0)
    assert task.execution.done == [0] and task.execution.records[0]["rung"] == "sfa"
    assert run_file.stat().st_mtime_ns == stamp  # the run was not computed again
    summary = tdse1d.scan(both, directory, gather=True)
    assert summary.missing == ()
    with h5py.File(summary.summary.path, "r") as f:
        assert f["points/complete"][()].all() and f["sfa/complete"][()].all()
        # both rungs see the same pulse: the same Up, to round-off
        assert f["sfa/ponderomotive_energy_eV"][()] == pytest.approx(f["estimates/ponderomotive_energy_eV"][()],
                                                                      rel=1e-12)
        series, _ = ladder_series(f)
        assert [s[0] for s in series] == ["time-dependent runs", "SFA"]


def test_a_damaged_or_foreign_sfa_file_is_not_taken_for_a_finished_point(sfa_scan, tmp_path):
    """A truncated SFA file, or the SFA file of another input, is no finished point: it is
    deleted and the point redone (null cases of the check that skips finished points)."""
    import shutil

    from tdse1d.scans.directory import ScanDirectory, sfa_result_matches

    tmp, outcome = sfa_scan
    plan = load_plan(tmp / "plan.toml")
    source = ScanDirectory(tmp / "scan")
    good = source.result(plan.points[0], "sfa")
    assert sfa_result_matches(good, plan.points[0].hash)
    assert not sfa_result_matches(good, plan.points[1].hash)  # another input
    directory = ScanDirectory(tmp_path / "copy")
    directory.points.mkdir(parents=True)
    target = directory.result(plan.points[0], "sfa")
    target.write_bytes(good.read_bytes()[: good.stat().st_size // 2])  # truncated
    assert directory.state(plan.points[0], "sfa") == "todo" and not target.exists()
    shutil.copy(source.result(plan.points[1], "sfa"), target)  # the file of point 1 under point 0's name
    assert directory.state(plan.points[0]) == "todo" and not target.exists()
