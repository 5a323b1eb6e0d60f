"""The commands that read result files (plot, export, report, compare) refuse a bad
file the same way: one line naming the file and what is wrong (no such file, not HDF5,
not finished, a missing dataset), exit status 2 like any bad input, no traceback."""

import shutil

import h5py
import pytest
from conftest import small_input

from tdse1d import api
from tdse1d.cli import program as cli
from tdse1d.input.schema import load_input

SMALL = small_input(cycles=1, absorber_width="15 bohr", after_pulse="0.2 fs", snapshots=3)

DEMO_CSV = "# x: photon_energy eV\n10, 1\n20, 0.5\n30, 0.01\n40, 0.001\n"


@pytest.fixture(scope="module")
def finished(tmp_path_factory):
    path = tmp_path_factory.mktemp("finished") / "r.h5"
    api.run(load_input("small.toml", text=SMALL), path)
    return path


def _commands(path, tmp_path):
    csv = tmp_path / "m.csv"
    csv.write_text(DEMO_CSV)
    return {
        "plot": ["plot", str(path), "--what", "field", "-o", str(tmp_path / "f.png")],
        "export": ["export", str(path), "-o", str(tmp_path / "s.csv")],
        "report": ["report", str(path)],
        "compare": ["compare", str(path), str(csv)],
    }


def _one_line(capsys):
    err = capsys.readouterr().err
    assert err.startswith("tdse1d: error: ") and err.count("\n") == 1 and "Traceback" not in err, err
    return err


@pytest.mark.parametrize("command", ["plot", "export", "report", "compare"])
def test_missing_file_is_no_such_file(command, tmp_path, capsys):
    argv = _commands(tmp_path / "nothing.h5", tmp_path)[command]
    assert cli.main(argv) == 2
    err = _one_line(capsys)
    assert "nothing.h5: no such file" in err


@pytest.mark.parametrize("command", ["plot", "export", "report", "compare"])
def test_not_hdf5_and_unfinished_files_are_refused(command, finished, tmp_path, capsys):
    text = tmp_path / "notes.h5"
    text.write_text("not a result")
    assert cli.main(_commands(text, tmp_path)[command]) == 2
    assert "not an HDF5 file" in _one_line(capsys)
    unfinished = tmp_path / "unfinished.h5"
    shutil.copy(finished, unfinished)
    with h5py.File(unfinished, "a") as f:
        f.attrs["complete"] = False  # as a run still writing it, or a stopped one, leaves it
    assert cli.main(_commands(unfinished, tmp_path)[command]) == 2
    assert "unfinished.h5: not a finished tdse1d result" in _one_line(capsys)
    # the null case: the finished file itself is read
    assert cli.main(_commands(finished, tmp_path)[command]) == 0, capsys.readouterr().err


@pytest.mark.parametrize("command, group", [
    ("plot", "field"), ("export", "spectra/harmonic"), ("report", "observables"), ("compare", "estimates"),
])
def test_a_file_missing_a_group_names_it(command, group, finished, tmp_path, capsys):
    damaged = tmp_path / "damaged.h5"
    shutil.copy(finished, damaged)
    with h5py.File(damaged, "a") as f:
        del f[group]
    assert cli.main(_commands(damaged, tmp_path)[command]) == 2
    err = _one_line(capsys)
    assert "damaged.h5" in err and f"'{group}" in err, err
