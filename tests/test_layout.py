"""The declared layout of the result file and of summary.h5 (tdse1d/io/layout.py).

What the shipped examples actually write is checked against the table in
tests/test_regression.py (test_every_written_file_follows_the_declared_layout), on the
files the regression test runs anyway. Here: the writer refuses what is not declared,
the checker catches a planted departure (null cases), old names are still found, one
path means one unit in every kind of file, and the docs hold the generated tables.
"""

from pathlib import Path

import h5py
import numpy as np
import pytest

from tdse1d.io.layout import (ALWAYS, RENAMED, RESULT_LAYOUT, SUMMARY_LAYOUT, VARIABLE_UNIT, Entry, declared, entry,
                              find)
from tdse1d.io.layout_check import DOCUMENTS, layout_problems, with_generated_block
from tdse1d.io.result_file import write_dataset

ROOT = Path(__file__).resolve().parents[1]


def _concrete(path):
    return path.replace("{method}", "plane_wave").replace("{i}", "0").replace("{geometry}", "volume")


def _whole_file(path, table):
    """A file holding every entry the table declares for all files, written through write_dataset."""
    with h5py.File(path, "w") as f:
        for e in table:
            if not e.required:
                continue
            p = _concrete(e.path)
            if e.is_attribute:
                where, name = p.split("@")
                if where and where not in f:
                    f.create_group(where)
                (f[where] if where else f).attrs[name] = 1.0
            else:
                where, _, name = p.rpartition("/")
                units = "eV" if e.unit == VARIABLE_UNIT else None
                write_dataset(f.require_group(where), name, np.zeros(2), layout=table, units=units)


@pytest.mark.parametrize("table", [RESULT_LAYOUT, SUMMARY_LAYOUT], ids=["result", "summary"])
def test_a_whole_file_passes_and_every_planted_departure_is_caught(tmp_path, table):
    path = tmp_path / "f.h5"
    _whole_file(path, table)
    with h5py.File(path, "a") as f:
        assert layout_problems(f, table) == []
        # null cases: an undeclared dataset, an undeclared attribute, a wrong unit, a required entry gone
        f["stray"] = np.ones(3)
        f.attrs["stray_attribute"] = 1
        some = next(e for e in table if e.required and not e.is_attribute and e.unit != VARIABLE_UNIT)
        f[_concrete(some.path)].attrs["units"] = "furlong"
        gone = next(e for e in table if e.required and not e.is_attribute and e is not some)
        del f[_concrete(gone.path)]
        problems = layout_problems(f, table)
    assert "not declared: stray" in problems
    assert "not declared: @stray_attribute" in problems
    assert any(p.startswith(f"{_concrete(some.path)}: units 'furlong'") for p in problems)
    assert f"missing: {gone.path}" in problems


def test_the_writer_refuses_what_is_not_declared(tmp_path):
    with h5py.File(tmp_path / "f.h5", "w") as f:
        g = f.create_group("observables")
        ds = write_dataset(g, "dipole", np.zeros(3))
        # the unit and the description come from the table, not from the caller
        assert ds.attrs["units"] == entry("observables/dipole").unit == "bohr"
        assert ds.attrs["description"] == entry("observables/dipole").description
        with pytest.raises(KeyError, match="not declared"):
            write_dataset(g, "dipol", np.zeros(3))
        with pytest.raises(KeyError, match="not declared"):
            write_dataset(g, "momentum", np.zeros(3), colour="red")
        with pytest.raises(ValueError):
            write_dataset(g, "norm", np.zeros(3), units="1")  # the table fixes this unit
        s = f.create_group("spectra")
        with pytest.raises(KeyError, match="not declared"):  # a summary path is not a run path
            write_dataset(s, "photon_energy_eV", np.zeros(3))


def test_placeholders_and_declared():
    assert entry("/spectra/photoelectron/surface_flux/energy").unit == "hartree"
    assert entry("estimates/pulse_3@peak_field").unit == "atomic_unit_of_electric_field"
    assert entry("focal/volume/coherent", SUMMARY_LAYOUT).unit == "atomic_units"
    assert not declared("spectra/photoelectron/a/b/energy")  # a placeholder is one path component
    assert not declared("observables/dipole/extra")


def test_paths_are_declared_once_and_fully():
    for table in (RESULT_LAYOUT, SUMMARY_LAYOUT):
        paths = [e.path for e in table]
        assert len(paths) == len(set(paths))
        for e in table:
            assert e.unit and e.description and e.shape and e.when


def _quantity(path):
    return path.replace("@", "/").lstrip("/")


def _unit_conflicts(*tables):
    seen, conflicts = {}, []
    for table in tables:
        for e in table:
            q = _quantity(e.path)
            if q in seen and seen[q] != e.unit:
                conflicts.append((q, seen[q], e.unit))
            seen.setdefault(q, e.unit)
    return conflicts


def test_one_path_means_one_unit_in_every_kind_of_file():
    """A run file and summary.h5 never give the same name in two units."""
    assert _unit_conflicts(RESULT_LAYOUT, SUMMARY_LAYOUT) == []
    # null case: the summary's name before the rename (eV under the name the run file
    # uses for hartree) is caught
    old = (Entry("estimates/photon_energy", "eV", "carrier photon energy of each point", "(points,)"),)
    assert _unit_conflicts(RESULT_LAYOUT, old) == [("estimates/photon_energy", "hartree", "eV")]


def test_every_rename_leads_to_a_declared_path_and_old_names_are_read(tmp_path):
    for old, new in RENAMED.items():
        assert declared(new) or declared(new, SUMMARY_LAYOUT), new
        assert not declared(old) and not declared(old, SUMMARY_LAYOUT), old
    path = tmp_path / "old.h5"
    with h5py.File(path, "w") as f:
        f.attrs["order"] = 4
        f.create_group("spectra/harmonic").attrs["cutoff_frequency"] = 1.5
        f["spectra/photon_energy"] = np.arange(3.0)
    with h5py.File(path, "r") as f:
        assert find(f, "@splitting_order") == 4
        assert find(f, "spectra/harmonic@cutoff_energy") == 1.5
        assert find(f, "spectra/photon_energy_eV")[()].tolist() == [0.0, 1.0, 2.0]
        assert find(f, "estimates/photon_energy_eV") is None


@pytest.mark.parametrize("doc, name", sorted(DOCUMENTS.items()))
def test_the_docs_hold_the_generated_tables(doc, name):
    text = (ROOT / doc).read_text(encoding="utf-8")
    assert text == with_generated_block(text, name), f"regenerate with: python -m tdse1d.io.layout_check ({doc})"
    # null case: a hand edit inside the block is caught
    edited = text.replace("| always |", "| sometimes |", 1)
    assert edited != text and edited != with_generated_block(edited, name)


def test_every_required_entry_is_written_by_name():
    """ALWAYS entries carry no placeholder other than an axis index (so 'missing' can name them)."""
    for e in RESULT_LAYOUT:
        if e.when == ALWAYS:
            assert "{" not in e.path, e.path
