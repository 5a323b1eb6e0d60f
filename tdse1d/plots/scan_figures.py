"""Figures of a scan summary (``summary.h5``, root attribute ``kind = "scan-summary"``).

:data:`FIGURES` maps a figure name to a function of the open summary file (and the
plot command's cache) returning a matplotlib Figure; ``tdse1d plot summary.h5`` finds
it through the command's table of file kinds. Styling follows :mod:`tdse1d.plots.run_figures`.

``map``
    Harmonic spectrum (log colour, each row normalised to its maximum) against photon
    energy and the scanned parameter, with the semiclassical cutoff Ip + 3.17 Up drawn
    over it and the cutoffs read off the spectra as markers.
``knee``
    A scan of the two-electron atom: single and double ionization against the scanned
    parameter, with the sequential estimate of each (independent tunnelling of the
    atom, then the ion), and the double-to-single ratio with its spread over the region
    radii against the sequential one (the "knee": Walker et al., Phys. Rev. Lett. 73,
    1227 (1994), from memory, for the measured effect).
``cutoff-fit``
    Cutoff read off each spectrum against Up, the least-squares line through them, and
    the semiclassical lines Ip + 3.17 Up (Krause, Schafer and Kulander, Phys. Rev. Lett.
    68, 3535 (1992)) and 1.32 Ip + 3.17 Up (Lewenstein et al., Phys. Rev. A 49, 2117
    (1994)).
``cutoff-ladder``
    Cutoff against Up for the rungs a summary holds: the time-dependent runs (read off
    their spectra) and the SFA (``/sfa``: read off the SFA spectra), with the classical
    line Ip + 3.17 Up and the SFA law Ip F(Ip/Up) + 3.17 Up; the points of the summaries
    given with ``tdse1d plot --beside`` (cache key ``"beside"``) are drawn too.
"""

from __future__ import annotations

import numpy as np
from matplotlib.colors import LogNorm

from .. import units
from ..io.layout import find
from ..semiclassical.estimates import CUTOFF_UP, LEWENSTEIN_IP
from .run_figures import DENSITY_CMAP, LOG_RANGE_SPECTROGRAM, _figure
from .sfa_figures import cutoff_against_up_figure

__all__ = ["FIGURES", "map_figure", "cutoff_fit_figure", "knee_figure", "cutoff_ladder_figure", "ladder_series"]


def _scan_axis(f):
    """The values to draw the points against: the first axis for a one-axis or zip scan,
    else the point index."""
    n = int(f.attrs["points"])
    axes = f["axes"]
    if int(axes.attrs["count"]) == 1 or str(f.attrs["mode"]) == "zip":
        g = axes["0"]
        values = g["values"][()]
        if np.all(np.isfinite(values)):
            unit = str(g.attrs["unit"])
            return values, f"{g.attrs['key']}" + (f" ({unit})" if unit else "")
    return np.arange(n, dtype=float), "scan point"


def _edges(values):
    """Cell edges around (possibly unevenly spaced) centres, for pcolormesh."""
    v = np.asarray(values, float)
    if v.size == 1:
        return np.array([v[0] - 0.5, v[0] + 0.5])
    mid = 0.5 * (v[1:] + v[:-1])
    return np.concatenate(([v[0] - (mid[0] - v[0])], mid, [v[-1] + (v[-1] - mid[-1])]))


def map_figure(f, cache=None):
    """Spectrum versus photon energy and the scanned parameter, with the cutoff lines."""
    energy = find(f, "spectra/photon_energy_eV")[()]
    power = f["spectra/power"][()]
    values, label = _scan_axis(f)
    if energy.size == 0 or not np.isfinite(power).any():
        fig, (ax,) = _figure(1)
        ax.text(0.5, 0.5, "no finished point in this summary", ha="center", va="center", transform=ax.transAxes)
        return fig
    order = np.argsort(values)
    values, power = values[order], power[order]
    peak = np.nanmax(power, axis=1, keepdims=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        rel = power / peak
    floor = 10.0 ** -LOG_RANGE_SPECTROGRAM
    fig, (ax,) = _figure(1, height=4.5)
    mesh = ax.pcolormesh(_edges(energy), _edges(values), np.clip(np.nan_to_num(rel, nan=floor), floor, 1.0),
                         norm=LogNorm(floor, 1.0), cmap=DENSITY_CMAP, shading="flat", rasterized=True)
    fig.colorbar(mesh, ax=ax, label="power / row maximum")
    semi = find(f, "cutoff/semiclassical_eV")[()][order]
    read = find(f, "cutoff/cutoff_energy_eV")[()][order]
    resolved = f["cutoff/resolved"][()][order]
    ax.plot(semi, values, color="white", lw=1.4, label="Ip + 3.17 Up")
    ax.plot(read[resolved], values[resolved], "o", mfc="none", mec="tab:red", ms=6, label="read off the spectrum")
    ax.set_xlabel("photon energy (eV)")
    ax.set_ylabel(label)
    top = np.nanmax(semi) * 1.6 if np.any(np.isfinite(semi)) else energy[-1]
    ax.set_xlim(0, min(energy[-1], top))
    ax.legend(loc="lower right", fontsize=8, framealpha=0.6)
    return fig


def cutoff_fit_figure(f, cache=None):
    """Cutoff read off each spectrum against Up, with the fitted and semiclassical lines."""
    up = find(f, "estimates/ponderomotive_energy_eV")[()]
    read = find(f, "cutoff/cutoff_energy_eV")[()]
    resolved = f["cutoff/resolved"][()]
    ips = find(f, "estimates/ionization_potential_eV")[()]
    ip = float(np.nanmean(ips)) if np.any(np.isfinite(ips)) else np.nan  # NaN: a scan of the SFA alone
    fig, (ax,) = _figure(1)
    ax.plot(up[resolved], read[resolved], "o", color="black", label="read off the spectrum")
    if np.any(~resolved):
        ax.plot(up[~resolved], read[~resolved], "x", color="grey", label="not resolved (not fitted)")
    finite = np.isfinite(up)
    u = np.linspace(0.0, np.max(up[finite]) * 1.1 if finite.any() else 1.0, 50)
    ax.plot(u, ip + CUTOFF_UP * u, "--", color="tab:blue", label=f"Ip + {CUTOFF_UP} Up")
    ax.plot(u, LEWENSTEIN_IP * ip + CUTOFF_UP * u, ":", color="tab:blue", label=f"{LEWENSTEIN_IP} Ip + {CUTOFF_UP} Up")
    fit = dict(f["fit"].attrs)
    if "slope" in fit:
        ax.plot(u, fit["intercept_ev"] + fit["slope"] * u, "-", color="tab:red",
                label=f"fit: {fit['slope']:.2f} Up + {fit['intercept_ev']:.1f} eV")
    ax.set_xlabel("Up (eV)")
    ax.set_ylabel("cutoff photon energy (eV)")
    ax.legend(fontsize=8, frameon=False)
    return fig


def knee_figure(f, cache=None):
    """Single and double ionization, and their ratio, against the scanned parameter, with
    the sequential estimate (a scan of the two-electron atom)."""
    if "knee" not in f:
        fig, (ax,) = _figure(1)
        ax.text(0.5, 0.5, "not a scan of the two-electron atom", ha="center", va="center", transform=ax.transAxes)
        return fig
    k = f["knee"]
    values, label = _scan_axis(f)
    order = np.argsort(values)
    v = values[order]
    fig, (top, bottom) = _figure(2, height=6.5)
    for name, seq, colour, text in (("single", "sequential_single", "tab:blue", "single"),
                                    ("double", "sequential_double", "tab:red", "double")):
        top.plot(v, k[name][()][order], "o-", color=colour, label=f"{text} ionization (TDSE)")
        top.plot(v, k[seq][()][order], "--", color=colour, label=f"{text}, sequential estimate")
    top.set_yscale("log")
    top.set_ylabel("probability")
    top.legend(fontsize=8, frameon=False)
    ratio = k["ratio"][()][order]
    low, high = k["ratio_low"][()][order], k["ratio_high"][()][order]
    bottom.errorbar(v, ratio, yerr=[np.clip(ratio - low, 0, None), np.clip(high - ratio, 0, None)], fmt="o-",
                    color="black", capsize=3, label="double / single (TDSE; bars: region radii)")
    seq = k["sequential_double"][()][order] / k["sequential_single"][()][order]
    bottom.plot(v, seq, "--", color="grey", label="sequential estimate")
    bottom.set_yscale("log")
    bottom.set_ylabel("double / single")
    bottom.set_xlabel(label)
    bottom.legend(fontsize=8, frameon=False)
    for ax in (top, bottom):
        if np.all(v > 0) and v[-1] / v[0] > 5:
            ax.set_xscale("log")
    return fig


def ladder_series(f, tag=""):
    """The cutoff-against-Up series of one summary, as :func:`cutoff_against_up_figure`
    takes them (label, Up, cutoff, half width; hartree), and its Ips (hartree).

    The runs' cutoffs (resolved ones) get one photon energy as half width, the reading
    rule's +-1 order (docs/sfa.md); the SFA's carry theirs (``/sfa/cutoff_uncertainty_eV``).
    """
    ev = units.HARTREE_EV
    series, ips = [], []
    up = find(f, "estimates/ponderomotive_energy_eV")[()] / ev
    cutoff = find(f, "cutoff/cutoff_energy_eV")[()] / ev
    if np.any(np.isfinite(cutoff)):
        cutoff = np.where(f["cutoff/resolved"][()], cutoff, np.nan)
        series.append((f"time-dependent runs{tag}", up, cutoff, find(f, "estimates/photon_energy_eV")[()] / ev))
        ips.append(find(f, "estimates/ionization_potential_eV")[()] / ev)
    if "sfa" in f and np.any(f["sfa/complete"][()]):
        g = f["sfa"]
        cutoff = np.where(g["resolved"][()], g["cutoff_energy_eV"][()], np.nan) / ev
        series.append((f"SFA{tag}", g["ponderomotive_energy_eV"][()] / ev, cutoff, g["cutoff_uncertainty_eV"][()] / ev))
        ips.append(g["ionization_potential_eV"][()] / ev)
    return series, (np.concatenate(ips) if ips else np.zeros(0))


def cutoff_ladder_figure(f, cache=None):
    """Cutoff against Up for the runs and the SFA of this summary (and of the summaries
    in ``cache["beside"]``), with Ip + 3.17 Up and Ip F(Ip/Up) + 3.17 Up."""
    others = list((cache or {}).get("beside", ()))
    series, ips = ladder_series(f, "" if not others else f" ({_name(f)})")
    for other in others:
        more, more_ips = ladder_series(other, f" ({_name(other)})")
        series += more
        ips = np.concatenate([ips, more_ips])
    if not series:
        fig, (ax,) = _figure(1)
        ax.text(0.5, 0.5, "no finished point in this summary", ha="center", va="center", transform=ax.transAxes)
        return fig
    return cutoff_against_up_figure(series, float(np.nanmedian(ips)) if np.any(np.isfinite(ips)) else np.nan)


def _name(f) -> str:
    """A summary's short name: its scan directory."""
    from pathlib import Path

    return Path(f.filename).resolve().parent.name


#: figure name -> function(open summary file, cache) -> Figure
FIGURES = {"map": map_figure, "cutoff-fit": cutoff_fit_figure, "knee": knee_figure,
           "cutoff-ladder": cutoff_ladder_figure}
