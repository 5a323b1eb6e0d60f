"""``summary.h5`` of a scan: per-point spectra on one photon-energy grid, cutoffs, yields, fit.

:func:`write_summary` reads the finished point files of a :class:`~tdse1d.scans.plan.ScanPlan`
and writes ``SCAN_DIR/summary.h5`` (root attribute ``kind = "scan-summary"``); the
layout is listed in ``docs/scans.md``. Points without a finished file are kept as rows
of NaN with ``/points/complete`` False, so a partial scan can be looked at. The SFA
rung of the points (plan key ``rungs``), when asked for or present, goes to ``/sfa``
(:mod:`tdse1d.scans.sfa_summary`).

The fit of the cutoff energy read off each spectrum against Up (least squares, points
with a resolved cutoff only) is set beside the semiclassical law ``Ip + 3.17 Up``
(Krause, Schafer and Kulander, Phys. Rev. Lett. 68, 3535 (1992); Corkum, Phys. Rev.
Lett. 71, 1994 (1993)) and the quantum-corrected intercept ``1.32 Ip`` (Lewenstein et
al., Phys. Rev. A 49, 2117 (1994)).
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass
from pathlib import Path

import h5py
import numpy as np

from .. import __version__, units
from ..semiclassical.estimates import CUTOFF_UP, LEWENSTEIN_IP
from ..io.guarded_file import new_hdf5
from ..io.analysis_file import ionization_band
from ..io.layout import SUMMARY_LAYOUT, find, group_of, path as layout_path
from ..io.result_file import write_dataset

__all__ = ["write_summary", "Summary", "common_energy_grid", "photoelectron_cutoff", "cutoff_fit", "SUMMARY_KIND"]

SUMMARY_KIND = "scan-summary"
#: the common grid reaches this multiple of the largest semiclassical cutoff
GRID_REACH = 2.0
#: and has at most this many energies
MAX_GRID = 20000


@dataclass
class Summary:
    """Where the summary went and the cutoff-vs-Up fit (None with fewer than 2 usable points)."""

    path: Path
    fit: dict | None


@dataclass
class _PointData:
    energy_ev: np.ndarray
    power: np.ndarray
    amplitude: np.ndarray
    attrs: dict


def _read_point(path) -> _PointData:
    from ..spectra.harmonic import harmonic_spectrum

    with h5py.File(path, "r") as f:
        h = f[group_of("spectra/harmonic@window")]
        est = dict(f[group_of("estimates@photon_energy")].attrs)
        omega0 = float(est.get("photon_energy", 1.0))
        # the complex amplitude is not stored: recompute it as the run did
        spec = harmonic_spectrum(f[layout_path("observables/time")][()], f[layout_path("observables/acceleration")][()], omega0,
                                 window=str(h.attrs.get("window", "hann")))
        attrs = {
            "estimates": est,
            "cutoff_energy": float(_or_nan(find(f, "spectra/harmonic@cutoff_energy"))),
            "cutoff_resolved": bool(h.attrs.get("cutoff_resolved", False)),
            "ionization": float(f[layout_path("ionization/probability")][()]),
            # its band and whether the box converged it (NaN and False for a file without them)
            "ionization_band": ionization_band(f[group_of("ionization/probability_band")]) or (math.nan, math.nan),
            "ionization_converged": bool(f[group_of("ionization@converged")].attrs.get("converged", False)),
            "photoelectron": photoelectron_cutoff(f, omega0),
            # edges read off by the run's own analysis, when it stored them
            "direct_edge": _scalar(f, layout_path("spectra/photoelectron/edges/direct")),
            "backscattered_edge": _scalar(f, layout_path("spectra/photoelectron/edges/backscattered")),
            "tunnelling": _last(f, layout_path("classical/tunnelling/probability")),
            "pair": _pair_yields(f),
        }
        stored_w, stored = f[layout_path("spectra/harmonic/frequency")][()], f[layout_path("spectra/harmonic/power")][()]
    if stored.shape != spec.power.shape or not np.allclose(stored, spec.power, rtol=1e-8, atol=0):
        # the run computed its spectrum differently: keep its power, no phase
        return _PointData(stored_w * units.HARTREE_EV, stored, np.full(stored.shape, np.nan + 0j), attrs)
    return _PointData(spec.frequency * units.HARTREE_EV, spec.power, spec.amplitude, attrs)


def _pair_yields(f) -> dict | None:
    """Single and double ionization of a two-electron run with its sequential estimate
    (None for a one-electron run)."""
    if "two_electron/regions" not in f:
        return None
    g = f["two_electron"]
    seq = g["sequential"] if "sequential" in g else None
    ratio = g["ratio"].attrs
    return {"single": float(g["regions/single_ionization"][0, -1]), "double": float(g["regions/double_ionization"][0, -1]),
            "ratio": float(ratio["quantum"]), "ratio_low": float(ratio["quantum_low"]),
            "ratio_high": float(ratio["quantum_high"]),
            "sequential_single": float(seq["single"][-1]) if seq is not None else math.nan,
            "sequential_double": float(seq["double"][-1]) if seq is not None else math.nan}


def _or_nan(value) -> float:
    return math.nan if value is None else float(value)


def _scalar(f, key) -> float:
    return float(f[key][()]) if key in f else math.nan


def _last(f, key) -> float:
    return float(f[key][-1]) if key in f and f[key].size else math.nan


def photoelectron_cutoff(f: h5py.File, omega0: float) -> float:
    """Highest photoelectron energy of the spectrum's last plateau (Hartree), NaN if none.

    A cutoff stored by the run (attribute ``cutoff_energy`` of a
    ``/spectra/photoelectron/<method>`` group) is used as is. Otherwise a rough rule
    of ours: :func:`tdse1d.spectra.read_cutoff` applied to the energy density summed over
    both directions, from the surface flux (or, in older files, mask) method if there, else from the plane-wave projection,
    with the plateau region starting at half a photon energy and a drop of 2 decades.
    """
    from ..spectra.cutoff import read_cutoff

    from ..analysis.run_analysis import PHOTOELECTRON_METHOD_ORDER

    for method in PHOTOELECTRON_METHOD_ORDER:
        key = group_of("spectra/photoelectron/{method}/energy", method=method)
        if key not in f:
            continue
        g = f[key]
        if "cutoff_energy" in g.attrs:
            return float(g.attrs["cutoff_energy"])
        energy = g["energy"][()]
        density = g["energy_density_left"][()] + g["energy_density_right"][()]
        keep = np.isfinite(density) & (density >= 0)
        energy, density = energy[keep], density[keep]
        order = np.argsort(energy)
        energy, density = energy[order], density[order]
        unique = np.concatenate(([True], np.diff(energy) > 0))
        try:
            return float(read_cutoff(energy[unique], density[unique], omega0, 1e-12, start_orders=0.5, drop=2.0).frequency)
        except ValueError:
            return math.nan
    return math.nan


def common_energy_grid(steps_ev, tops_ev, reach_ev) -> np.ndarray:
    """Photon energies (eV) from 0 with the finest of the points' steps, up to ``reach_ev``
    but not beyond the lowest Nyquist energy among the points."""
    step = float(np.min(steps_ev))
    top = min(float(reach_ev), float(np.min(tops_ev)))
    n = min(int(math.floor(top / step)) + 1, MAX_GRID)
    return np.linspace(0.0, (n - 1) * step if n < MAX_GRID else top, n)


def cutoff_fit(up_ev, cutoff_ev, ip_ev) -> dict | None:
    """Least-squares line ``cutoff = slope * Up + intercept`` (eV) over the finite points.

    Returns None with fewer than two distinct Up values. The semiclassical reference is
    slope 3.17 and intercept Ip (Krause, Schafer and Kulander 1992), or 1.32 Ip
    (Lewenstein et al. 1994).
    """
    from scipy.stats import linregress

    up, cut = np.asarray(up_ev, float), np.asarray(cutoff_ev, float)
    ok = np.isfinite(up) & np.isfinite(cut)
    if ok.sum() < 2 or np.ptp(up[ok]) == 0:
        return None
    if ok.sum() == 2:
        slope = (cut[ok][1] - cut[ok][0]) / (up[ok][1] - up[ok][0])
        fit = dict(slope=float(slope), intercept_ev=float(cut[ok][0] - slope * up[ok][0]),
                   slope_stderr=math.nan, intercept_stderr=math.nan)
    else:
        r = linregress(up[ok], cut[ok])
        fit = dict(slope=float(r.slope), intercept_ev=float(r.intercept), slope_stderr=float(r.stderr),
                   intercept_stderr=float(r.intercept_stderr))
    ip = float(np.nanmean(np.asarray(ip_ev, float)[ok]))
    fit.update(points=int(ok.sum()), ip_ev=ip, reference_slope=CUTOFF_UP,
               reference_intercept_ev=ip, lewenstein_intercept_ev=LEWENSTEIN_IP * ip)
    return fit



def write_summary(plan, directory) -> Summary:
    """Assemble ``summary.h5`` in the scan directory from its finished point files.

    Parameters
    ----------
    plan : tdse1d.scans.plan.ScanPlan
    directory : path
        The scan directory.

    Returns
    -------
    Summary
    """
    from .directory import ScanDirectory

    sd = ScanDirectory(directory)
    n = len(plan.points)
    data: list[_PointData | None] = []
    records = []
    for p in plan.points:
        path = sd.result(p)
        data.append(_read_point(path) if sd.state(p, "run") == "done" else None)
        try:
            records.append(json.loads(sd.record(p).read_text(encoding="utf-8")))
        except (OSError, ValueError):
            records.append({})
    present = [d for d in data if d is not None]

    def column(get):
        return np.array([get(d, r) if d is not None else math.nan for d, r in zip(data, records)], float)

    ev = units.HARTREE_EV
    est = lambda name: column(lambda d, r: d.attrs["estimates"].get(name, math.nan) * ev)  # noqa: E731
    up_ev, ip_ev = est("ponderomotive_energy"), est("ionization_potential")
    cutoff_ev = column(lambda d, r: d.attrs["cutoff_energy"] * ev)
    resolved = np.array([bool(d.attrs["cutoff_resolved"]) if d is not None else False for d in data])

    if present:  # the runs' spectra on one grid (none in a scan of the SFA alone)
        steps = [d.energy_ev[1] - d.energy_ev[0] for d in present]
        tops = [d.energy_ev[-1] for d in present]
        reach = GRID_REACH * float(np.nanmax(est("cutoff_energy")))
        energy = common_energy_grid(steps, tops, reach)
    else:
        energy = np.zeros(0)
    power = np.full((n, energy.size), np.nan)
    amplitude = np.full((n, energy.size), np.nan + 0j)
    for k, d in enumerate(data):
        if d is not None:
            power[k] = np.interp(energy, d.energy_ev, d.power)
            amplitude[k] = np.interp(energy, d.energy_ev, d.amplitude.real) + 1j * np.interp(
                energy, d.energy_ev, d.amplitude.imag)
    fit = cutoff_fit(up_ev[resolved], cutoff_ev[resolved], ip_ev[resolved])

    tmp = sd.summary.with_name(f"{sd.summary.name}.{os.getpid()}.tmp")
    with new_hdf5(tmp) as f:  # a full disk: one OSError, tmp removed, the earlier summary kept
        f.attrs["kind"] = SUMMARY_KIND
        f.attrs["complete"] = True  # a finished file (written under a temporary name, then renamed)
        f.attrs["tdse1d_version"] = __version__
        f.attrs["plan"] = plan.text
        f.attrs["plan_source"] = plan.source
        f.attrs["plan_identity"] = plan.identity
        f.attrs["mode"] = plan.mode
        f.attrs["shape"] = np.array(plan.shape, dtype=np.int64)
        f.attrs["points"] = n
        f.attrs["complete_points"] = len(present)
        axes = f.create_group("axes")
        axes.attrs["count"] = len(plan.axes)
        for i, a in enumerate(plan.axes):
            g = axes.create_group(str(i))
            g.attrs["key"] = a.key
            g.attrs["unit"] = a.unit
            write_dataset(g, "values", a.display(), units=a.unit or "atomic_units", layout=SUMMARY_LAYOUT)
            write_dataset(g, "values_au", np.array(a.atomic, float), layout=SUMMARY_LAYOUT)
            write_dataset(g, "labels", np.array([str(v) for v in a.values], dtype=h5py.string_dtype()), layout=SUMMARY_LAYOUT)
        pts = f.create_group("points")
        write_dataset(pts, "hash", np.array([p.hash for p in plan.points], dtype=h5py.string_dtype()), layout=SUMMARY_LAYOUT)
        write_dataset(pts, "index", np.arange(n), layout=SUMMARY_LAYOUT)
        write_dataset(pts, "grid_index", np.array([p.grid_index for p in plan.points], dtype=np.int64).reshape(n, -1), layout=SUMMARY_LAYOUT)
        write_dataset(pts, "values_au", np.array([[a.atomic[i] for a, i in zip(plan.axes, p.grid_index)]
                                        for p in plan.points], float).reshape(n, -1), layout=SUMMARY_LAYOUT)
        write_dataset(pts, "complete", np.array([d is not None for d in data]), layout=SUMMARY_LAYOUT)
        write_dataset(pts, "cost", np.array([p.cost for p in plan.points]), layout=SUMMARY_LAYOUT)
        write_dataset(pts, "run_seconds", column(lambda d, r: r.get("seconds", math.nan)), layout=SUMMARY_LAYOUT)
        sp = f.create_group("spectra")
        write_dataset(sp, "photon_energy_eV", energy, layout=SUMMARY_LAYOUT)
        write_dataset(sp, "power", power, layout=SUMMARY_LAYOUT)
        write_dataset(sp, "amplitude", amplitude, layout=SUMMARY_LAYOUT)
        c = f.create_group("cutoff")
        write_dataset(c, "cutoff_energy_eV", cutoff_ev, layout=SUMMARY_LAYOUT)
        write_dataset(c, "resolved", resolved, layout=SUMMARY_LAYOUT)
        write_dataset(c, "semiclassical_eV", est("cutoff_energy"), layout=SUMMARY_LAYOUT)
        write_dataset(c, "lewenstein_eV", est("cutoff_energy_lewenstein"), layout=SUMMARY_LAYOUT)
        e = f.create_group("estimates")
        write_dataset(e, "ponderomotive_energy_eV", up_ev, layout=SUMMARY_LAYOUT)
        write_dataset(e, "ionization_potential_eV", ip_ev, layout=SUMMARY_LAYOUT)
        write_dataset(e, "keldysh_parameter", column(lambda d, r: d.attrs["estimates"].get("keldysh_parameter", math.nan)), layout=SUMMARY_LAYOUT)
        write_dataset(e, "peak_intensity_W_cm2", column(lambda d, r: d.attrs["estimates"].get("peak_intensity_W_cm2", math.nan)), layout=SUMMARY_LAYOUT)
        write_dataset(e, "photon_energy_eV", est("photon_energy"), layout=SUMMARY_LAYOUT)
        ion = f.create_group("ionization")
        write_dataset(ion, "probability", column(lambda d, r: d.attrs["ionization"]), layout=SUMMARY_LAYOUT)
        write_dataset(ion, "probability_band", np.array([d.attrs["ionization_band"] if d is not None else
                                                         (math.nan, math.nan) for d in data], float).reshape(n, 2),
                      layout=SUMMARY_LAYOUT)
        write_dataset(ion, "converged", np.array([bool(d is not None and d.attrs["ionization_converged"])
                                                  for d in data]), layout=SUMMARY_LAYOUT)
        write_dataset(ion, "tunnelling_yield", column(lambda d, r: d.attrs["tunnelling"] if math.isfinite(
            d.attrs["tunnelling"]) else r.get("tunnelling_yield", math.nan)), layout=SUMMARY_LAYOUT)
        pe = f.create_group("photoelectron")
        write_dataset(pe, "cutoff_energy_eV", column(lambda d, r: d.attrs["photoelectron"] * ev), layout=SUMMARY_LAYOUT)
        write_dataset(pe, "direct_edge_eV", column(lambda d, r: d.attrs["direct_edge"] * ev), layout=SUMMARY_LAYOUT)
        write_dataset(pe, "backscattered_edge_eV", column(lambda d, r: d.attrs["backscattered_edge"] * ev), layout=SUMMARY_LAYOUT)
        write_dataset(pe, "direct_drift_eV", est("direct_drift_energy"), layout=SUMMARY_LAYOUT)
        write_dataset(pe, "backscattered_drift_eV", est("backscattered_drift_energy"), layout=SUMMARY_LAYOUT)
        g = f.create_group("fit")
        g.attrs["description"] = ("least-squares line cutoff = slope * Up + intercept (eV) over points with a "
                                  "resolved cutoff; semiclassical: slope 3.17, intercept Ip (or 1.32 Ip)")
        for k, v in (fit or {}).items():
            g.attrs[k] = v
        if any(d.attrs.get("pair") for d in present):  # a scan of the two-electron atom: the knee
            knee = f.create_group("knee")
            for name in ("single", "double", "ratio", "ratio_low", "ratio_high", "sequential_single",
                         "sequential_double"):
                write_dataset(knee, name, column(lambda d, r, name=name: (d.attrs["pair"] or {}).get(name, math.nan)),
                              layout=SUMMARY_LAYOUT)
            write_dataset(knee, "peak_intensity_W_cm2", column(
                lambda d, r: d.attrs["estimates"].get("peak_intensity_W_cm2", math.nan)), layout=SUMMARY_LAYOUT)
        _write_focal(f, plan, energy, power, amplitude)
        if "sfa" in plan.rungs or any(sd.state(p, "sfa") == "done" for p in plan.points):
            from .sfa_summary import write_sfa_group

            write_sfa_group(f, plan, sd)
    os.replace(tmp, sd.summary)
    return Summary(sd.summary, fit)


def _write_focal(f, plan, energy, power, amplitude):
    """Focal-volume averages when the plan scans one intensity axis (see :mod:`tdse1d.scans.focal`)."""
    from .focal import GEOMETRIES, focal_average

    if len(plan.axes) != 1 or not plan.axes[0].key.endswith("peak_intensity"):
        return
    intensity = np.array(plan.axes[0].atomic, float)
    ok = np.isfinite(power).all(axis=1) if power.size else np.zeros(0, bool)
    if ok.sum() < 2:
        return
    g = f.create_group("focal")
    g.attrs["peak_intensity_au"] = float(intensity[ok].max())
    g.attrs["description"] = ("averages over the peak intensities of a Gaussian focus whose peak is the "
                              "largest scanned intensity; see docs/scans.md")
    for name in GEOMETRIES:
        sub = g.create_group(name)
        inc = focal_average(intensity[ok], power[ok], geometry=name)
        coh = focal_average(intensity[ok], amplitude[ok], geometry=name, coherent=True)
        write_dataset(sub, "incoherent", inc, layout=SUMMARY_LAYOUT)
        write_dataset(sub, "coherent", coh, layout=SUMMARY_LAYOUT)
