"""Figures of the three rungs side by side: classical model, strong-field approximation
(SFA) and the time-dependent run, as matplotlib Figures (nothing here reads or writes
files). Energies in eV, times in fs, harmonic orders on a secondary axis; the styling of
:mod:`.run_figures`.
"""

from __future__ import annotations

import math

import numpy as np

from .. import units
from .run_figures import FIGURE_SIZE, _cutoff_lines, _ev, _figure, _fs, _order_axis, time_frequency_figure

__all__ = ["harmonic_ladder_figure", "photoelectron_ladder_figure", "sfa_time_frequency_figure",
           "cutoff_against_up_figure", "plateau_normalised"]

#: no SFA stored: said on the figure instead of a curve
NO_SFA = "no SFA stored (run with spectra.sfa = true)"


def plateau_normalised(frequency, power, low, high):
    """``power`` divided by its median over ``[low, high]`` (the plateau), so spectra of
    different rungs, whose absolute scales differ, can be laid over each other."""
    f = np.asarray(frequency, dtype=float)
    p = np.asarray(power, dtype=float)
    sel = (f >= low) & (f <= high) & (p > 0)
    scale = float(np.median(p[sel])) if sel.any() else float(np.max(p)) or 1.0
    return p / scale


def harmonic_ladder_figure(frequency, power, omega0, ip, cutoffs=(), sfa=None):
    """Run and SFA harmonic spectra (total, short, long), each divided by its plateau
    median, with the classical and read-off cutoffs as lines.

    Parameters
    ----------
    frequency, power : array_like
        The run's spectrum: photon energy (hartree), power (a.u.).
    omega0, ip : float
        Carrier frequency and Ip (a.u.).
    cutoffs : sequence of (label, energy)
        Vertical lines (hartree).
    sfa : dict, optional
        ``frequency``, ``power``, ``power_short``, ``power_long`` (a.u.) and the plateau
        end ``plateau_end`` (hartree); None draws the run alone and says so.
    """
    fig, (ax,) = _figure(1, FIGURE_SIZE[1] * 1.1)
    top = max([c for _, c in cutoffs if math.isfinite(c)] + [ip + 10 * omega0])
    low, high = ip + 2 * omega0, 0.9 * top
    e = _ev(frequency)
    keep = e > 0
    ax.semilogy(e[keep], plateau_normalised(frequency, power, low, high)[keep], lw=0.6, color="0.3",
                label="time-dependent run")
    if sfa is not None:
        for key, label, colour, style in (("power", "SFA", "C0", "-"), ("power_short", "SFA short", "C2", "-"),
                                          ("power_long", "SFA long", "C1", ":")):
            f = np.asarray(sfa["frequency"], dtype=float)
            ok = f > 0
            ax.semilogy(_ev(f)[ok], plateau_normalised(f, sfa[key], low, high)[ok], lw=0.8, ls=style,
                        color=colour, label=label)
    else:
        ax.text(0.02, 0.03, NO_SFA, transform=ax.transAxes, fontsize="small")
    ax.set_xlim(0, 1.5 * top * units.HARTREE_EV)
    ax.set_ylim(1e-8, 1e3)
    _cutoff_lines(ax, cutoffs)
    ax.set_xlabel("photon energy (eV)")
    ax.set_ylabel("power / plateau median")
    _order_axis(ax, omega0)
    ax.legend(loc="upper right", fontsize="x-small", frameon=False)
    return fig


def photoelectron_ladder_figure(energy, left, right, up, marks=(), sfa=None):
    """Run and SFA photoelectron spectra, one panel per side; the SFA direct and
    rescattered spectra as they are (absolute dP/dE), the run's as measured.

    Parameters
    ----------
    energy, left, right : array_like
        The run's spectrum: kinetic energy (hartree), dP/dE per side (1/hartree).
    up : float
        Ponderomotive energy (hartree), for the axis range.
    marks : sequence of (label, energy)
        Vertical lines (hartree), e.g. 2 Up and 10 Up.
    sfa : dict, optional
        ``energy``, ``direct_left``, ``direct_right``, ``rescattered_left``,
        ``rescattered_right``, ``total_left``, ``total_right`` (1/hartree).
    """
    fig, axes = _figure(2, FIGURE_SIZE[1] * 1.6)
    to_ev = 1.0 / units.HARTREE_EV
    for ax, side, run in zip(axes, ("left", "right"), (left, right)):
        e = _ev(energy)
        d = np.asarray(run, dtype=float) * to_ev
        ok = (d > 0) & (e > 0)
        ax.semilogy(e[ok], d[ok], lw=0.6, color="0.3", label=f"run, {side}")
        if sfa is not None:
            es = _ev(sfa["energy"])
            for key, label, colour, style in (("total", "SFA total", "C0", "-"), ("direct", "SFA direct", "C2", ":"),
                                              ("rescattered", "SFA rescattered", "C1", "--")):
                ds = np.asarray(sfa[f"{key}_{side}"], dtype=float) * to_ev
                good = ds > 0
                ax.semilogy(es[good], ds[good], lw=0.8, ls=style, color=colour, label=label)
        else:
            ax.text(0.02, 0.03, NO_SFA, transform=ax.transAxes, fontsize="small")
        ax.set_xlim(0, 14 * up * units.HARTREE_EV)
        visible = d[ok & (e <= 14 * up * units.HARTREE_EV)]
        if visible.size:
            ax.set_ylim(visible.max() * 1e-12, visible.max() * 10)
        _cutoff_lines(ax, marks)
        ax.set_ylabel(f"dP/dE, {side} (1/eV)")
        ax.legend(loc="upper right", fontsize="x-small", frameon=False)
    axes[-1].set_xlabel("kinetic energy (eV)")
    return fig


def sfa_time_frequency_figure(time, frequency, power, omega0, branches=(), cutoff=math.nan, time_field=None,
                              electric=None, orbits=None):
    """The run's Gabor map with the classical branches (:func:`.run_figures.time_frequency_figure`)
    and the SFA quantum-orbit emission times of both branches on top.

    Parameters
    ----------
    orbits : dict, optional
        ``energy`` (E,), ``emission_short`` and ``emission_long`` (H, E), in a.u.
    """
    fig = time_frequency_figure(time, frequency, power, omega0, branches, cutoff, time_field, electric)
    ax = fig.axes[0]
    if orbits is not None:
        energy = _ev(orbits["energy"])
        for k, (short, long_) in enumerate(zip(orbits["emission_short"], orbits["emission_long"])):
            ax.plot(_fs(short), energy, lw=0, marker=".", ms=1.5, color="lime",
                    label="SFA short orbits" if k == 0 else None)
            ax.plot(_fs(long_), energy, lw=0, marker=".", ms=1.5, color="orange",
                    label="SFA long orbits" if k == 0 else None)
    else:
        ax.text(0.02, 0.03, NO_SFA, transform=ax.transAxes, fontsize="small", color="white")
    ax.legend(loc="upper right", fontsize="x-small", frameon=False, labelcolor="white")
    return fig


def cutoff_against_up_figure(rungs, ip):
    """Harmonic cutoff against Up for several rungs, with the classical line Ip + 3.17 Up
    (Krause, Schafer and Kulander, Phys. Rev. Lett. 68, 3535 (1992)) and the SFA law
    Ip F(Ip/Up) + 3.17 Up (Lewenstein et al., Phys. Rev. A 49, 2117 (1994):
    :func:`tdse1d.semiclassical.sfa_orbits.cutoff_law`).

    Parameters
    ----------
    rungs : sequence of (label, up, cutoff, uncertainty)
        Arrays in hartree: Up, the cutoff read off (NaN: unresolved, not drawn) and its
        half width.
    ip : float
        Ionization potential (hartree).
    """
    from ..semiclassical.sfa_orbits import cutoff_law

    fig, (ax,) = _figure(1, FIGURE_SIZE[1])
    everything = np.concatenate([np.asarray(r[1], float) for r in rungs]) if rungs else np.array([1.0])
    top = np.nanmax(everything) if np.any(np.isfinite(everything)) else 1.0
    ups = np.linspace(0, 1.1 * top, 50)
    ax.plot(_ev(ups), _ev(ip + 3.17 * ups), color="0.5", ls="--", lw=0.8, label="Ip + 3.17 Up (classical)")
    if math.isfinite(ip) and ip > 0:
        law_ups = ups[ups >= 0.05 * top]  # F(Ip/Up) -> 1 as Up -> 0; the orbits are followed from Ip/Up ~ 20 up

        def law(u):
            try:
                return cutoff_law(ip, u)
            except ValueError:  # no quantum orbit found at this Ip/Up: the line leaves a gap
                return math.nan

        ax.plot(_ev(law_ups), _ev([law(u) for u in law_ups]), color="0.2", ls=":", lw=1.0,
                label="Ip F(Ip/Up) + 3.17 Up (SFA law)")
    for k, (label, up, cutoff, error) in enumerate(rungs):
        up, cutoff, error = (np.asarray(v, dtype=float) for v in (up, cutoff, error))
        ok = np.isfinite(cutoff) & np.isfinite(up)
        ax.errorbar(_ev(up[ok]), _ev(cutoff[ok]), yerr=_ev(error[ok]), fmt="os^D"[k % 4], ms=4, capsize=2,
                    color=f"C{k}", label=label)
    ax.set_xlabel("Up (eV)")
    ax.set_ylabel("harmonic cutoff (eV)")
    ax.legend(loc="upper left", fontsize="small", frameon=False)
    return fig
