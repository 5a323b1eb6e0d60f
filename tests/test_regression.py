"""Results do not move when the code is restructured.

The reference (tests/regression/reference.npz) holds the fingerprints of the shipped
examples, shortened, and of a two-point scan summary, written by
``python -m tests.regression.fingerprint``. A change that leaves the physics alone
(moving modules, renaming internals, new layers) must reproduce every number to
RTOL = 1e-12 of the larger of its magnitude and 1 (the round-off of unitary steps;
common practice; see tests/regression/fingerprint.py). A change that means to move results regenerates the reference in its
own commit and says why.
"""

import numpy as np
import pytest
from regression.fingerprint import REFERENCE, differences, fingerprint, run_cases


@pytest.fixture(scope="module")
def workdir(tmp_path_factory):
    return tmp_path_factory.mktemp("regression")


@pytest.fixture(scope="module")
def current(workdir):
    return run_cases(workdir)


def test_results_equal_the_stored_reference(current):
    with np.load(REFERENCE) as ref:
        reference = {k: ref[k] for k in ref.files}
    problems = differences(reference, current)
    assert not problems, "\n".join(problems[:40])


def test_a_moved_result_is_detected(current):
    """The null case: a change of 1e-9 a.u. in one observable, or a dataset gone, is caught."""
    with np.load(REFERENCE) as ref:
        reference = {k: ref[k] for k in ref.files}
    key = next(k for k in reference if k.endswith("observables/acceleration#strided"))
    moved = dict(current)
    moved[key] = moved[key] + 1e-9
    assert any(key in p for p in differences(reference, moved))
    gone = {k: v for k, v in current.items() if k != key}
    assert any("missing now" in p for p in differences(reference, gone))


def test_fingerprint_keeps_what_it_promises(tmp_path):
    import h5py

    path = tmp_path / "f.h5"
    with h5py.File(path, "w") as f:
        f["a"] = np.arange(10.0)
        f["big"] = np.arange(10_000.0)
        f["snapshots/psi"] = np.ones(3)
        f.attrs["x"] = 2.5
        f.attrs["host"] = 7
        f.attrs["name"] = "text"
    fp = fingerprint(path)
    assert set(fp) == {"a", "big#strided", "big#sum", "@x"}
    assert fp["big#sum"][2] == 10_000
    assert fp["big#sum"][0] == pytest.approx(np.arange(10_000.0).sum())


def test_every_written_file_follows_the_declared_layout(current, workdir):
    """The shipped examples (shortened), the scan's point files and its summary hold
    exactly what tdse1d.io.layout declares: every dataset and attribute declared, with
    the declared unit, and every entry declared for all files present."""
    import h5py

    from tdse1d.io.layout import RESULT_LAYOUT, SUMMARY_LAYOUT
    from tdse1d.io.layout_check import layout_problems

    files = sorted(workdir.rglob("*.h5"))
    assert len(files) >= 4 + 2 + 1  # four examples, two scan points, one summary
    for path in files:
        with h5py.File(path, "r") as f:
            layout = SUMMARY_LAYOUT if f.attrs.get("kind") == "scan-summary" else RESULT_LAYOUT
            assert layout_problems(f, layout) == [], path.name
