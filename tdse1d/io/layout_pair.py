"""The result-file rows of a run of the two-electron atom (a part of :mod:`tdse1d.io.layout_tables`,
which imports it; kept apart so that each module stays short)."""

from __future__ import annotations

from .layout_tables import FIELD, P, T, _entries

PAIR = "a run of the two-electron atom"
#: a run of the two-electron atom (tdse1d.runs.pair_runner): its own group; R radii, S+1 steps
_PAIR_ROWS = (
    *_entries("two_electron", PAIR, (
        ("charge", "1", "nuclear charge Z"),
        ("softening", "bohr", "electron-nucleus softening a"),
        ("repulsion_softening", "bohr", "electron-electron softening b"),
        ("spin", "text", '"singlet" or "triplet"'),
        ("ionization_potential", "hartree", "Ip1 = E_ion - E_atom of the initial state"),
        ("ion_ionization_potential", "hartree", "Ip2 = -E_ion"),
        ("wall_time", "s", "wall-clock time of the propagation"),
    ), "attribute"),
    *_entries("two_electron/states", PAIR, (
        ("energy", "hartree", "lowest states of the atom (of its spin) on the run's 2-D grid", "(M,)"),
        ("ion_energy", "hartree", "bound states of the one-electron ion on one axis", "(K,)"),
    )),
    *_entries("two_electron/regions", PAIR, (
        ("radius", "bohr", "radii R of the regions, the reported one first", "(R,)"),
        ("neutral", "1", "P(|x1|, |x2| < R) plus the norm absorbed there, each step", "(R, S+1)"),
        ("single_ionization", "1", "P(exactly one |x_i| >= R) plus the norm absorbed there", "(R, S+1)"),
        ("double_ionization", "1", "P(|x1|, |x2| >= R) plus the norm absorbed there", "(R, S+1)"),
    )),
    *_entries("two_electron/ratio", PAIR, (
        ("quantum", "1", "double over single ionization after the run, at the reported radius"),
        ("quantum_low", "1", "lowest double-to-single ratio over the radii"),
        ("quantum_high", "1", "highest double-to-single ratio over the radii"),
        ("sequential", "1", "double over singly charged ions of the sequential estimate (NaN if none)"),
    ), "attribute"),
    *_entries("two_electron/momentum", PAIR, (
        ("p", P, "momentum axis of each electron, ascending", "(N,)"),
        ("double", "atomic_units", "|psi(p1, p2)|^2 of the double-ionization part at the end", "(N, N)"),
    )),
    *_entries("two_electron/sequential", PAIR, (
        ("neutral", "1", "N0 of the sequential rate equations", "(S+1,)"),
        ("single", "1", "N1, singly charged ions", "(S+1,)"),
        ("double", "1", "N2, doubly charged ions", "(S+1,)"),
    )),
    *_entries("two_electron/knee", PAIR, (
        ("ponderomotive_energy", "hartree", "Up of the strongest pulse"),
        ("return_energy", "hartree", "3.17 Up, the largest return energy"),
        ("knockout_field", FIELD, "peak field where 3.17 Up = Ip2"),
        ("knockout_intensity_W_cm2", "W/cm^2", "peak intensity where 3.17 Up = Ip2"),
    ), "attribute"),
    *_entries("two_electron/snapshots", PAIR, (
        ("time", T, "snapshot times", "(Q,)"),
        ("x", "bohr", "positions of the stored points of each axis (every snapshot_stride-th)", "(N/stride,)"),
        ("density", "bohr^-2", "|psi(x1, x2)|^2 at each snapshot time, float32", "(Q, N/stride, N/stride)"),
    )),
)
