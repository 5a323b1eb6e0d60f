"""Figures of one run, as matplotlib Figures (nothing here reads or writes files).

Each function takes arrays (atomic units) and returns a :class:`matplotlib.figure.Figure`;
the caller saves or shows it. Times are drawn in fs, energies in eV, with the harmonic
order on a secondary axis where it helps. Colour maps are matplotlib's perceptually
uniform ones (viridis for densities, magma for spectrograms); the styling is plain
and sized for a one-column figure in a paper.
"""

from __future__ import annotations

import math

import numpy as np
from matplotlib.colors import LogNorm
from matplotlib.figure import Figure

from .. import units

__all__ = [
    "FIGURE_SIZE",
    "field_figure",
    "density_figure",
    "harmonic_figure",
    "time_frequency_figure",
    "photoelectron_figure",
    "populations_figure",
]

#: width, height in inches of a one-panel figure (about a journal column)
FIGURE_SIZE = (6.0, 4.0)
#: colour maps, both perceptually uniform
DENSITY_CMAP = "viridis"
SPECTROGRAM_CMAP = "magma"
#: decades shown below the maximum on log colour scales
LOG_RANGE_DENSITY = 8.0
LOG_RANGE_SPECTROGRAM = 6.0


def _figure(rows=1, height=None):
    fig = Figure(figsize=(FIGURE_SIZE[0], height or FIGURE_SIZE[1] * (0.75 + 0.5 * rows)),
                 layout="constrained")
    axes = fig.subplots(rows, 1, sharex=True, squeeze=False)[:, 0]
    return fig, axes


def _fs(t):
    return units.au_to_fs(np.asarray(t, dtype=float))


def _ev(e):
    return np.asarray(e, dtype=float) * units.HARTREE_EV


def _order_axis(ax, omega0):
    """Secondary top axis in harmonic orders for an axis in eV."""
    if not (omega0 and math.isfinite(omega0) and omega0 > 0):
        return
    w = omega0 * units.HARTREE_EV
    top = ax.secondary_xaxis("top", functions=(lambda e: e / w, lambda q: q * w))
    top.set_xlabel("harmonic order")


def field_figure(time, electric, vector_potential):
    """E(t) and A(t).

    Parameters
    ----------
    time, electric, vector_potential : array_like
        Times (a.u.), field and vector potential (a.u.).
    """
    fig, (a1, a2) = _figure(2)
    t = _fs(time)
    a1.plot(t, electric, lw=0.8, color="C0")
    a1.set_ylabel("E(t) (a.u.)")
    a2.plot(t, vector_potential, lw=0.8, color="C1")
    a2.set_ylabel("A(t) (a.u.)")
    a2.set_xlabel("time (fs)")
    for ax in (a1, a2):
        ax.axhline(0, color="0.7", lw=0.5)
    a1.set_title("laser field")
    return fig


def density_figure(time, x, density, time_field=None, electric=None):
    """|psi(x, t)|^2 as a time-space map on a log colour scale.

    Parameters
    ----------
    time : array_like, shape (k,)
        Snapshot times (a.u.).
    x : array_like, shape (n,)
        Positions (bohr).
    density : array_like, shape (k, n)
        |psi|^2 (1/bohr).
    time_field, electric : array_like, optional
        Field to draw beneath the map (a.u.).
    """
    density = np.asarray(density, dtype=float)
    top = float(np.max(density)) if density.size else 1.0
    floor = top * 10.0**-LOG_RANGE_DENSITY
    rows = 2 if electric is not None else 1
    fig = Figure(figsize=(FIGURE_SIZE[0], FIGURE_SIZE[1] * (1.25 if rows == 2 else 1.0)), layout="constrained")
    if rows == 2:
        ax, axf = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [3, 1]})
    else:
        ax, axf = fig.subplots(1, 1), None
    mesh = ax.pcolormesh(_fs(time), x, np.maximum(density, floor).T, shading="nearest",
                         norm=LogNorm(vmin=floor, vmax=top), cmap=DENSITY_CMAP, rasterized=True)
    fig.colorbar(mesh, ax=ax, label=r"$|\psi(x,t)|^2$ (1/bohr)")
    ax.set_ylabel("x (bohr)")
    ax.set_title("probability density")
    if axf is not None:
        axf.plot(_fs(time_field), electric, lw=0.6, color="0.3")
        axf.set_ylabel("E (a.u.)")
        axf.set_xlabel("time (fs)")
    else:
        ax.set_xlabel("time (fs)")
    return fig


def harmonic_figure(frequency, power, omega0, cutoffs=(), bands=()):
    """Harmonic spectrum on a log scale with predicted cutoffs as labelled lines and the
    quantum reading as a shaded band.

    Parameters
    ----------
    frequency, power : array_like
        Photon energy (hartree) and power (a.u.).
    omega0 : float
        Carrier frequency (a.u.), for the harmonic-order axis.
    cutoffs : sequence of (label, energy)
        Vertical lines (hartree); non-finite ones are skipped.
    bands : sequence of (label, low, high)
        Shaded vertical bands (hartree), e.g. the cutoff read off +- its uncertainty.
    """
    fig, (ax,) = _figure(1, FIGURE_SIZE[1])
    e = _ev(frequency)
    p = np.asarray(power, dtype=float)
    keep = e > 0
    ax.semilogy(e[keep], np.maximum(p[keep], p.max() * 1e-30), lw=0.6, color="C0")
    top = max([c for _, c in cutoffs if math.isfinite(c)] + [hi for _, _, hi in bands if math.isfinite(hi)] + [0.0])
    if top > 0:
        ax.set_xlim(0, 1.6 * top * units.HARTREE_EV)
        visible = p[keep][e[keep] <= 1.6 * top * units.HARTREE_EV]
        ax.set_ylim(max(visible.min(), visible.max() * 1e-16), visible.max() * 10)
    _cutoff_lines(ax, cutoffs)
    _bands(ax, bands)
    ax.set_xlabel("photon energy (eV)")
    ax.set_ylabel("power (a.u.)")
    _order_axis(ax, omega0)
    _legend(ax, "lower left")
    return fig


def _legend(ax, loc):
    """A legend where something carries a label (a run with no finite cutoff line, an
    XUV-only pulse, has none)."""
    if ax.get_legend_handles_labels()[0]:
        ax.legend(loc=loc, fontsize="small", frameon=False)


def _cutoff_lines(ax, cutoffs, horizontal=False):
    styles = ["--", ":", "-.", (0, (5, 2, 1, 2))]
    for k, (label, value) in enumerate(cutoffs):
        if math.isfinite(value):
            x = value * units.HARTREE_EV
            line = ax.axhline if horizontal else ax.axvline
            line(x, color=f"C{k + 1}", ls=styles[k % len(styles)], lw=1.0, label=f"{label} ({x:.1f} eV)")


def _bands(ax, bands, scale=units.HARTREE_EV, unit="eV"):
    """Shaded vertical bands [low, high] (a.u., drawn times ``scale``), skipped if not finite."""
    colours = ("0.35", "tab:olive", "tab:purple", "tab:brown")
    for k, (label, low, high) in enumerate(bands):
        if math.isfinite(low) and math.isfinite(high):
            lo, hi = low * scale, high * scale
            ax.axvspan(lo, hi, color=colours[k % len(colours)], alpha=0.25, lw=0,
                       label=f"{label} ({0.5 * (lo + hi):.2f} +- {0.5 * (hi - lo):.2f} {unit})" if label else None)


def _broken_line(table, omega0):
    """Times and energies of a branch with gaps where consecutive times jump by more
    than an eighth of a cycle (late returns of births near a field zero), so the
    line does not join unrelated points."""
    t, e = table[:, 0].astype(float), table[:, 1].astype(float)
    if t.size < 2 or not (omega0 and math.isfinite(omega0)):
        return t, e
    jumps = np.flatnonzero(np.abs(np.diff(t)) > 2 * math.pi / omega0 / 8) + 1
    return np.insert(t, jumps, np.nan), np.insert(e, jumps, np.nan)


def time_frequency_figure(time, frequency, power, omega0, branches=(), cutoff=math.nan,
                          time_field=None, electric=None, bands=()):
    """Gabor map of the dipole acceleration with classical emission times on top.

    Parameters
    ----------
    time, frequency : array_like
        Window centres (a.u.) and photon energies (hartree).
    power : array_like, shape (len(time), len(frequency))
        Gabor power.
    omega0 : float
        Carrier frequency (a.u.).
    branches : sequence of (label, list of (k, 2) arrays)
        Classical branches, columns emission time (a.u.) and photon energy (hartree).
    cutoff : float
        Classical harmonic cutoff (hartree), drawn as a horizontal line.
    time_field, electric : array_like, optional
        Field to draw beneath the map.
    bands : sequence of (label, low, high)
        Shaded time bands (a.u.), e.g. the quantum emission time +- its uncertainty in
        each half cycle; only the first label is shown in the legend.
    """
    power = np.asarray(power, dtype=float)
    top = float(power.max()) if power.size and power.max() > 0 else 1.0
    floor = top * 10.0**-LOG_RANGE_SPECTROGRAM
    fig = Figure(figsize=(FIGURE_SIZE[0], FIGURE_SIZE[1] * 1.25), layout="constrained")
    ax, axf = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [3, 1]})
    mesh = ax.pcolormesh(_fs(time), _ev(frequency), np.maximum(power, floor).T, shading="nearest",
                         norm=LogNorm(vmin=floor, vmax=top), cmap=SPECTROGRAM_CMAP, rasterized=True)
    fig.colorbar(mesh, ax=ax, label="Gabor power (a.u.)")
    colours = {"short": "white", "long": "tab:cyan"}
    for label, tables in branches:
        for k, table in enumerate(tables):
            t_line, e_line = _broken_line(table, omega0)
            ax.plot(_fs(t_line), _ev(e_line), lw=1.0, ls="-" if label == "short" else "--",
                    color=colours.get(label, "white"), label=f"{label} trajectories" if k == 0 else None)
    if math.isfinite(cutoff):
        ax.axhline(cutoff * units.HARTREE_EV, color="0.8", lw=0.6, ls=":", label="classical cutoff")
    labelled = False
    for label, low, high in bands:
        if math.isfinite(low) and math.isfinite(high):
            ax.axvspan(_fs(low), _fs(high), color="white", alpha=0.22, lw=0, label=None if labelled else label)
            labelled = True
    ax.set_ylim(0, _ev(frequency)[-1])
    ax.set_ylabel("photon energy (eV)")
    if omega0 and math.isfinite(omega0):
        w = omega0 * units.HARTREE_EV
        right = ax.secondary_yaxis("right", functions=(lambda e: e / w, lambda q: q * w))
        right.set_ylabel("harmonic order")
    ax.set_title("time-frequency map of the dipole acceleration")
    if branches or math.isfinite(cutoff) or bands:
        ax.legend(loc="upper left", fontsize="small", frameon=False, labelcolor="white")
    if electric is not None:
        axf.plot(_fs(time_field), electric, lw=0.6, color="0.3")
    axf.set_ylabel("E (a.u.)")
    axf.set_xlabel("time (fs)")
    return fig


def photoelectron_figure(energy, density_left, density_right, marks=(), title="photoelectron spectrum", bands=()):
    """Photoelectron energy spectrum, left- and right-going electrons apart, with the
    predicted edges or lines as labelled lines and the quantum readings as shaded bands.

    Parameters
    ----------
    energy : array_like
        Kinetic energy (hartree).
    density_left, density_right : array_like
        dP/dE of each side (1/hartree).
    marks : sequence of (label, energy)
        Vertical lines (hartree), e.g. 2 Up and 10 Up.
    bands : sequence of (label, low, high)
        Shaded vertical bands (hartree), e.g. an edge read off +- its uncertainty.
    """
    fig, (ax,) = _figure(1, FIGURE_SIZE[1])
    e = _ev(energy)
    to_ev = 1.0 / units.HARTREE_EV
    for density, label, colour in ((density_left, "left (p < 0)", "C0"), (density_right, "right (p > 0)", "C3")):
        d = np.asarray(density, dtype=float) * to_ev
        ok = np.isfinite(d) & (d > 0) & (e > 0)
        ax.semilogy(e[ok], d[ok], lw=0.7, color=colour, label=label)
    ax.set_yscale("log")
    finite = [v for _, v in marks if math.isfinite(v)] + [hi for _, _, hi in bands if math.isfinite(hi)]
    if finite:
        ax.set_xlim(0, 1.5 * max(finite) * units.HARTREE_EV)
    both = np.nan_to_num(np.asarray(density_left, float) + np.asarray(density_right, float)) * to_ev
    lo, hi = ax.get_xlim()
    visible = both[(e >= lo) & (e <= hi) & (both > 0)]
    if visible.size:
        ax.set_ylim(max(visible.min(), visible.max() * 1e-14), visible.max() * 5)
    _cutoff_lines(ax, marks)
    _bands(ax, bands)
    ax.set_xlabel("kinetic energy (eV)")
    ax.set_ylabel("dP/dE (1/eV)")
    ax.set_title(title)
    ax.legend(loc="upper right", fontsize="small", frameon=False)
    return fig


def populations_figure(time, norm, population_time, populations, labels=None, max_states=6):
    """Norm and bound-state populations versus time.

    Top panel (linear): the norm, the ground state and all bound states together;
    bottom panel (log): the most populated excited states.

    Parameters
    ----------
    time, norm : array_like
        Times (a.u.) and the norm on the grid.
    population_time : array_like, shape (m,)
    populations : array_like, shape (m, n_states)
        |<phi_n|psi>|^2.
    labels : sequence of str, optional
        State labels (default n = 0, 1, ...).
    max_states : int
        Most populated excited states drawn; the rest are summed as "other excited".
    """
    fig, (top, bottom) = _figure(2)
    pops = np.asarray(populations, dtype=float)
    tp = _fs(population_time)
    top.plot(_fs(time), norm, color="k", lw=1.0, label="norm")
    name = (lambda n: labels[n]) if labels else (lambda n: f"state {n}")
    if pops.ndim == 2 and pops.shape[1]:
        top.plot(tp, pops[:, 0], lw=1.0, color="C0", label=name(0))
        top.plot(tp, pops.sum(axis=1), lw=0.9, ls="--", color="0.3", label="all bound")
        excited = pops[:, 1:]
        if excited.shape[1]:
            order = np.argsort(excited.max(axis=0))[::-1]
            for n in sorted(order[:max_states]):
                bottom.plot(tp, excited[:, n], lw=0.8, label=name(n + 1))
            if excited.shape[1] > max_states:
                bottom.plot(tp, excited[:, order[max_states:]].sum(axis=1), lw=0.8, ls=":", color="0.4",
                            label="other excited")
            positive = excited[excited > 0]
            if positive.size:
                bottom.set_yscale("log")
                bottom.set_ylim(max(positive.min(), positive.max() * 1e-10), positive.max() * 3)
            bottom.legend(loc="center left", bbox_to_anchor=(1.0, 0.5), fontsize="small", frameon=False)
    top.set_ylabel("population")
    top.set_title("norm and bound-state populations")
    top.legend(loc="center left", bbox_to_anchor=(1.0, 0.5), fontsize="small", frameon=False)
    bottom.set_ylabel("excited states")
    bottom.set_xlabel("time (fs)")
    return fig


def derived_spectrum_figure(axis, axis_unit, curves, title, omega0=math.nan, marks=()):
    """A derived spectrum (:mod:`tdse1d.spectra.derived`): its columns as curves on a log scale.

    Parameters
    ----------
    axis : array_like
        The x column; shown in eV (with a harmonic-order axis) when ``axis_unit`` is hartree.
    axis_unit : str
        The x column's unit as the result file states it.
    curves : sequence of (label, values)
        The y columns (non-positive values are not drawn).
    title : str
        The spectrum's title.
    omega0 : float
        Carrier frequency (a.u.) for the harmonic-order axis; NaN: none.
    marks : sequence of (label, x)
        Vertical lines in the axis' unit (hartree for an energy axis); non-finite skipped.
    """
    fig, (ax,) = _figure(1, FIGURE_SIZE[1])
    energy = axis_unit == "hartree"
    x = _ev(axis) if energy else np.asarray(axis, dtype=float)
    for k, (label, values) in enumerate(curves):
        y = np.asarray(values, dtype=float)
        keep = (x > 0) & (y > 0)
        ax.semilogy(x[keep], y[keep], lw=0.6, color=f"C{k}", label=label)
    _cutoff_lines(ax, [(label, v) for label, v in marks] if energy else [])
    ax.set_xlabel("photon energy (eV)" if energy else f"{axis_unit}")
    ax.set_ylabel("power (a.u.)")
    ax.set_title(title, fontsize="medium")
    if energy and math.isfinite(omega0):
        _order_axis(ax, omega0)
    _legend(ax, "lower left")
    return fig
