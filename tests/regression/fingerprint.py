"""Fingerprints of result files, for the regression test of a redesign.

A fingerprint holds every numeric dataset and numeric attribute of a result file,
except the wavefunction snapshots (large, and equal whenever the per-step series
are): arrays of up to ``MAX_KEPT`` values whole, larger ones as an evenly strided
subsample plus the sum and the sum of squares of the whole array. Two results are
"unchanged" when every entry agrees to ``RTOL`` of the larger of its largest
magnitude and 1 (probabilities, norms and populations are of order one; the
round-off of a run's tens of thousands of unitary steps is about 1e-13 absolute, and
FFTW plans chosen by measurement differ from one run to the next at that level).

``python -m tests.regression.fingerprint`` (from the repository root) reruns the
cases and rewrites the stored reference; do that only in a commit that says why
results moved.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np

#: arrays longer than this are kept as a strided subsample and two sums
MAX_KEPT = 1024
#: agreement asked of a restructuring that leaves the physics alone (see above)
RTOL = 1e-12
#: groups that are not results: snapshots are big and follow from the series
SKIPPED = ("snapshots",)
#: attributes that describe the run's circumstances, not its result
VOLATILE_ATTRS = ("wall_time", "created", "host", "pid", "version", "elapsed", "start_time", "token")
#: entries that are round-off by construction (the median of a spectrum's numerical
#: noise, a log10 of values near 1e-30) or timings: compared by presence only
ROUND_OFF_KEYS = ("noise_floor_log10", "headroom", "seconds", "wall")
#: numbers read off a spectrum or map (the place of a maximum, a knee, a level): the
#: reading divides the round-off of the values by a curvature or slope and so
#: amplifies it (seen: 4e-12 relative on emission times read off a Gabor map); they
#: are held to READING_RTOL of their own magnitude, still far below any change of
#: the physics (a reading that moves moves by 1e-6 or more)
READING_KEYS = ("emission", "edges", "cutoff", "plateau", "streaking", "ponderomotive")
READING_RTOL = 1e-9

HERE = Path(__file__).resolve().parent
REFERENCE = HERE / "reference.npz"
ROOT = HERE.parents[1]

#: the shipped examples, shortened (every code path of the full run, a fraction of its cost)
CASES = {
    "argon_800nm": ["laser.0.cycles=3", "output.snapshots=2"],
    "argon_1800nm": ["laser.0.cycles=2", "output.snapshots=2"],
    "hydrogen_streaking": ["output.snapshots=2"],
    "molecular_ion_800nm": ["laser.0.cycles=5", "output.snapshots=2"],
}


def _numeric(value) -> np.ndarray | None:
    a = np.asarray(value)
    if a.dtype.kind in "biufc":
        return a
    return None


def fingerprint(path) -> dict[str, np.ndarray]:
    """Key -> array for every numeric dataset and attribute of an HDF5 file."""
    import h5py

    out: dict[str, np.ndarray] = {}

    def add(key, a):
        a = np.asarray(a)
        if a.dtype.kind == "b":
            a = a.astype(np.int8)
        flat = a.ravel()
        if flat.size > MAX_KEPT:
            stride = -(-flat.size // MAX_KEPT)
            out[key + "#strided"] = flat[::stride].copy()
            out[key + "#sum"] = np.array([flat.sum(), (np.abs(flat) ** 2).sum(), flat.size])
        else:
            out[key] = flat.copy()

    with h5py.File(path, "r") as f:
        def visit(name, obj):
            if any(name == s or name.startswith(s + "/") for s in SKIPPED):
                return
            for k, v in obj.attrs.items():
                a = _numeric(v)
                if a is not None and k not in VOLATILE_ATTRS:
                    add(f"{name}@{k}", a)
            if isinstance(obj, h5py.Dataset):
                a = _numeric(obj[()])
                if a is not None:
                    add(name, a)

        for k, v in f.attrs.items():
            a = _numeric(v)
            if a is not None and k not in VOLATILE_ATTRS:
                add(f"@{k}", a)
        f.visititems(visit)
    return out


def differences(reference: dict, current: dict, rtol: float = RTOL) -> list[str]:
    """What moved: keys missing on either side, and entries beyond ``rtol``."""
    problems = [f"missing now: {k}" for k in sorted(set(reference) - set(current))]
    problems += [f"new: {k}" for k in sorted(set(current) - set(reference))]
    for k in sorted(set(reference) & set(current)):
        a, b = np.asarray(reference[k]), np.asarray(current[k])
        if a.shape != b.shape:
            problems.append(f"{k}: shape {a.shape} -> {b.shape}")
            continue
        finite = np.isfinite(a) & np.isfinite(b) if a.dtype.kind in "fc" else np.ones(a.shape, bool)
        if a.dtype.kind in "fc" and not np.array_equal(np.isfinite(a), np.isfinite(b)):
            problems.append(f"{k}: non-finite entries differ")
            continue
        if any(word in k for word in ROUND_OFF_KEYS):
            continue
        scale = max(float(np.max(np.abs(a[finite]), initial=0.0)), 1.0)
        tolerance = rtol
        if any(word in k for word in READING_KEYS):
            tolerance = READING_RTOL
        if k.endswith("#sum"):  # a sum of n entries, each allowed rtol x max(|entry|, 1)
            scale = float(a[2].real) * max(math.sqrt(abs(a[1])), 1.0)  # a complex series' sums are complex
        worst = float(np.max(np.abs(a[finite] - b[finite]), initial=0.0))
        if worst > tolerance * scale:
            problems.append(f"{k}: max difference {worst:.3g} against {tolerance:g} x {scale:.3g}")
    return problems


#: a two-point intensity scan of the argon example (its summary.h5), points run in-process
SCAN_PLAN = """
base = "{base}"
mode = "grid"
[set]
"laser.0.cycles" = 2
"output.snapshots" = 0
[[axis]]
key = "laser.0.peak_intensity"
values = ["1.0e14 W/cm^2", "1.6e14 W/cm^2"]
"""


def run_scan_summary(workdir) -> Path:
    """Run the two points of :data:`SCAN_PLAN` one by one and write the summary."""
    from tdse1d.scans.execute import run_one
    from tdse1d.scans.plan import load_plan
    from tdse1d.scans.summary import write_summary

    workdir = Path(workdir)
    plan_path = workdir / "plan.toml"
    plan_path.write_text(SCAN_PLAN.format(base=(ROOT / "inputs" / "argon_800nm.toml").as_posix()))
    plan = load_plan(plan_path)
    for index in range(len(plan.points)):
        report = run_one(plan, workdir / "scan", index)
        assert report.ok, report.failed
    return write_summary(plan, workdir / "scan").path


def run_cases(workdir) -> dict[str, np.ndarray]:
    """Run every case into ``workdir`` and return the joined fingerprint.

    FFTW plans are chosen by the estimate planner here, not by timing: plans measured
    on a loaded machine differ from one run to the next, and so does their round-off
    (seen: 2e-12 in the norm of the 1800 nm case). FFTW lets any wisdom it holds
    override the estimate, so the process's wisdom is forgotten first and no stored
    wisdom is loaded (the scan worker reads the cache under XDG_CACHE_HOME)."""
    import functools
    import os
    import tempfile
    from unittest import mock

    import pyfftw

    from tdse1d.runs import runner

    planned = functools.partial(runner.simulate, fft_effort="FFTW_ESTIMATE")
    saved = pyfftw.export_wisdom()
    pyfftw.forget_wisdom()
    try:
        with tempfile.TemporaryDirectory() as cache, mock.patch.dict(os.environ, {"XDG_CACHE_HOME": cache}), \
                mock.patch.object(runner, "simulate", planned):
            return _run_cases(workdir)
    finally:
        pyfftw.forget_wisdom()
        pyfftw.import_wisdom(saved)


def _run_cases(workdir) -> dict[str, np.ndarray]:
    from tdse1d import api

    workdir = Path(workdir)
    joined = {}
    for name, overrides in CASES.items():
        out = workdir / f"{name}.h5"
        api.run(ROOT / "inputs" / f"{name}.toml", out, overrides=overrides)
        joined.update({f"{name}:{k}": v for k, v in fingerprint(out).items()})
    summary = run_scan_summary(workdir)
    joined.update({f"scan_summary:{k}": v for k, v in fingerprint(summary).items()})
    return joined


def main() -> int:
    import tempfile

    with tempfile.TemporaryDirectory() as d:
        joined = run_cases(d)
    np.savez_compressed(REFERENCE, **joined)
    print(f"wrote {REFERENCE.relative_to(ROOT)}: {len(joined)} entries, {REFERENCE.stat().st_size / 1e6:.2f} MB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
