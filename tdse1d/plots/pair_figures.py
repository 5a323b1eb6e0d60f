"""Figures of a run of the two-electron atom (``tdse1d plot`` on its result file).

:data:`FIGURES` maps a figure name to a function of the open result file (and a
cache) returning a matplotlib Figure, as :mod:`tdse1d.plots.scan_figures` does for a
scan summary; the numbers come from :func:`tdse1d.io.pair_result_file.read_pair_record`:

* ``yields``: the neutral atom, single and double ionization through the run at the
  reported region radius, the band over the other radii, and the sequential estimate;
* ``momentum-map``: the correlated momenta (p1, p2) of the double-ionization part at
  the end, with the diagonals and the largest drift momentum of an electron freed at
  rest, 2 sqrt(Up) = max |A(t)| (the simple-man's model; Corkum, Phys. Rev. Lett. 71,
  1994 (1993));
* ``field`` and ``harmonic`` (the spectrum of the total dipole acceleration, with
  Ip1 + 3.17 Up marked).
"""

from __future__ import annotations

import math

import numpy as np
from matplotlib.colors import LogNorm

from ..semiclassical.estimates import CUTOFF_UP
from . import run_figures
from .run_figures import _figure, _fs

__all__ = ["FIGURES", "yields_figure", "momentum_map_figure"]

#: decades of |psi(p1, p2)|^2 below its maximum the map shows
LOG_RANGE_MOMENTA = 5.0


def _record(f, cache):
    if "record" not in cache:
        from ..io.pair_result_file import read_pair_record

        cache["record"] = read_pair_record(f)
    return cache["record"]


def yields_figure(time, radii, regions, sequential=None, electric=None):
    """The yields through a run.

    Parameters
    ----------
    time : ndarray, shape (S+1,)
        Times (a.u.).
    radii : ndarray, shape (R,)
        Radii of the regions (bohr), the reported one first.
    regions : dict of str to ndarray, shape (R, S+1)
        ``neutral``, ``single_ionization``, ``double_ionization``.
    sequential : dict of str to ndarray, shape (S+1,), optional
        ``single`` and ``double`` of the sequential estimate.
    electric : ndarray, shape (S+1,), optional
        The field (a.u.), drawn below.

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig, axes = _figure(2 if electric is not None else 1, height=6.5 if electric is not None else None)
    ax = axes[0]
    t = _fs(time)
    colours = {"neutral": "tab:green", "single_ionization": "tab:blue", "double_ionization": "tab:red"}
    floor = np.inf
    for kind, colour in colours.items():
        values = np.asarray(regions[kind])
        label = kind.replace("_", " ")
        ax.plot(t, values[0], color=colour, label=f"{label} (R = {radii[0]:g} bohr)")
        if len(radii) > 1:
            ax.fill_between(t, values.min(axis=0), values.max(axis=0), color=colour, alpha=0.2, linewidth=0)
        positive = values[0][values[0] > 0]
        if positive.size:
            floor = min(floor, positive.max() * 1e-8)
    if sequential is not None:
        ax.plot(t, sequential["single"], "--", color="tab:blue", label="single, sequential estimate")
        ax.plot(t, sequential["double"], "--", color="tab:red", label="double, sequential estimate")
    ax.set_yscale("log")
    if math.isfinite(floor):
        ax.set_ylim(floor, 2.0)  # probabilities: at most 1
    ax.set_ylabel("probability")
    others = ", ".join(f"{r:g}" for r in radii[1:])
    ax.set_title("yields of the two-electron atom" + (f" (bands: R = {others} bohr)" if others else ""))
    ax.legend(fontsize=8, frameon=False)
    if electric is not None:
        axes[1].plot(t, electric, color="black", linewidth=0.8)
        axes[1].set_ylabel("E(t) (a.u.)")
    axes[-1].set_xlabel("time (fs)")
    return fig


def momentum_map_figure(momenta, distribution, ponderomotive_energy=math.nan):
    """The correlated momenta of the double-ionization part.

    Parameters
    ----------
    momenta : ndarray, shape (N,)
        Momentum axis of each electron (a.u.).
    distribution : ndarray, shape (N, N)
        |psi(p1, p2)|^2 (a.u.), axis 0 = p1.
    ponderomotive_energy : float
        Up (hartree): the lines |p| = 2 sqrt(Up) are drawn when finite.

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig, (ax,) = _figure(1, height=5.5)
    d = np.asarray(distribution, dtype=float)
    top = float(d.max()) if d.size else 0.0
    if not top > 0:
        ax.text(0.5, 0.5, "no double ionization in the map", ha="center", va="center", transform=ax.transAxes)
        return fig
    shown = np.where(d > 0, d, np.nan)
    mesh = ax.pcolormesh(momenta, momenta, shown.T, norm=LogNorm(top * 10**-LOG_RANGE_MOMENTA, top),
                         shading="nearest", cmap="viridis")
    fig.colorbar(mesh, ax=ax, label="|psi(p1, p2)|^2 (a.u.)")
    lim = float(np.max(np.abs(momenta)))
    ax.plot([-lim, lim], [-lim, lim], color="white", linewidth=0.5, alpha=0.6)
    ax.plot([-lim, lim], [lim, -lim], color="white", linewidth=0.5, alpha=0.6)
    if math.isfinite(ponderomotive_energy) and ponderomotive_energy > 0:
        p = 2 * math.sqrt(ponderomotive_energy)
        for v in (-p, p):
            ax.axvline(v, color="white", linestyle="--", linewidth=0.8)
            ax.axhline(v, color="white", linestyle="--", linewidth=0.8)
        ax.plot([], [], color="black", linestyle="--", label="|p| = 2 sqrt(Up)")
        ax.legend(fontsize=8, frameon=False, loc="upper left")
    ax.set_xlabel("p1 (a.u.)")
    ax.set_ylabel("p2 (a.u.)")
    ax.set_aspect("equal")
    ax.set_title("correlated momenta of the double-ionization part")
    return fig


def _yields(f, cache):
    r = _record(f, cache)
    return yields_figure(r.time, r.radii, r.regions, r.sequential, r.electric)


def _momentum_map(f, cache):
    r = _record(f, cache)
    return momentum_map_figure(r.momenta, r.momentum_map, r.ponderomotive_energy)


def _field(f, cache):
    return run_figures.field_figure(f["field/time"][()], f["field/electric"][()], f["field/vector_potential"][()])


def _harmonic(f, cache):
    r = _record(f, cache)
    g = f["spectra/harmonic"]
    cutoffs = []
    if math.isfinite(r.ponderomotive_energy):
        cutoffs.append(("Ip1 + 3.17 Up", r.ionization_potential + CUTOFF_UP * r.ponderomotive_energy))
    return run_figures.harmonic_figure(g["frequency"][()], g["power"][()], r.omega0, cutoffs)


#: figure name -> function(open result file, cache) -> Figure
FIGURES = {"yields": _yields, "momentum-map": _momentum_map, "field": _field, "harmonic": _harmonic}
