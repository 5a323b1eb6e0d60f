"""The rows of :mod:`tdse1d.io.layout`: every dataset and attribute of a run's result
file (:data:`RESULT_LAYOUT`) and of a scan's ``summary.h5`` (:data:`SUMMARY_LAYOUT`).

Read :mod:`tdse1d.io.layout` for what the entries mean and how they are used.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Entry", "RESULT_LAYOUT", "SUMMARY_LAYOUT", "ALWAYS", "VARIABLE_UNIT", "UNITS_ATTR", "DESCRIPTION_ATTR"]

#: when an entry is present in every file of its kind
ALWAYS = "always"
#: the unit of an entry that the writer states per file (the plan's unit of a scan axis)
VARIABLE_UNIT = "(attribute units)"
#: attributes every dataset may carry; they are part of each dataset's entry
UNITS_ATTR, DESCRIPTION_ATTR = "units", "description"


@dataclass(frozen=True)
class Entry:
    """One dataset or attribute of a file.

    Parameters
    ----------
    path : str
        ``group/name`` (dataset), ``group@name`` (attribute) or ``@name`` (root attribute).
    unit : str
        Unit as written in the dataset's ``units`` attribute (``"1"``: dimensionless,
        ``"text"``: a string, ``"flag"``: a boolean, ``"count"``: an integer count).
    description : str
        One line; written as the dataset's ``description`` attribute.
    shape : str
        In words, e.g. ``"(S+1,)"``; ``"()"`` for a scalar.
    when : str
        :data:`ALWAYS`, or the kind of run (or file) that has it.
    """

    path: str
    unit: str
    description: str
    shape: str = "()"
    when: str = ALWAYS

    @property
    def is_attribute(self) -> bool:
        return "@" in self.path

    @property
    def required(self) -> bool:
        return self.when == ALWAYS

    @property
    def group(self) -> str:
        """The top-level group (``""`` for the root)."""
        return self.path.split("@")[0].split("/")[0]


def _entries(prefix, when, rows, kind="dataset"):
    """Entries under ``prefix`` from rows (name, unit, description[, shape])."""
    sep = "@" if kind == "attribute" else "/"
    out = []
    for row in rows:
        name, unit, text, *shape = row
        out.append(Entry(f"{prefix}{sep}{name}" if prefix else f"@{name}", unit, text,
                         shape[0] if shape else "()", when))
    return tuple(out)


T = "atomic_unit_of_time"
P = "atomic_unit_of_momentum"
FIELD = "atomic_unit_of_electric_field"
FIELD_RUN = "a run with a field"
XUV = "a run with an XUV pulse inside an IR field (streaking)"
THREE_STEP = "a run whose field has a three-step analysis"
SEVERAL_AXES = "a run on a grid of several axes"
CERTIFIED = "a certified run (run --certify; {quantity}: each quantity it reads, docs/output.md)"

#: the semiclassical numbers of a pulse (tdse1d.semiclassical.estimates.PulseEstimate)
_ESTIMATES = (
    ("photon_energy", "hartree", "carrier frequency w (hartree = a.u. of angular frequency)"),
    ("peak_field", FIELD, "peak field E_0"),
    ("peak_intensity_W_cm2", "W/cm^2", "cycle-averaged peak intensity"),
    ("optical_period", T, "2 pi / w"),
    ("ionization_potential", "hartree", "Ip of the initial state on the run's grid"),
    ("ponderomotive_energy", "hartree", "Up = E_0^2 / (4 w^2)"),
    ("keldysh_parameter", "1", "sqrt(Ip / (2 Up))"),
    ("quiver_amplitude", "bohr", "E_0 / w^2"),
    ("cutoff_energy", "hartree", "semiclassical harmonic cutoff Ip + 3.17 Up"),
    ("cutoff_energy_lewenstein", "hartree", "1.32 Ip + 3.17 Up"),
    ("cutoff_order", "1", "cutoff_energy in harmonic orders"),
    ("direct_drift_energy", "hartree", "2 Up"),
    ("backscattered_drift_energy", "hartree", "10 Up"),
    ("barrier_suppression_field", FIELD, "field at which the barrier top reaches the initial level"),
    ("barrier_suppression_intensity_W_cm2", "W/cm^2", "intensity at which the barrier top reaches the initial level"),
)

SFA = "a run with spectra.sfa = true"
#: the strong-field approximation of the run's pulse and atom (tdse1d.analysis.sfa, docs/sfa.md)
SFA_LAYOUT: tuple[Entry, ...] = (
    *_entries("sfa", SFA, (
        ("ionization_potential", "hartree", "Ip of the ground state on the run's grid, the SFA's"),
        ("ponderomotive_energy", "hartree", "Up of the first pulse"),
        ("photon_energy", "hartree", "carrier frequency w of the first pulse"),
        ("time_step", T, "step of the SFA time grid (docs/sfa.md)"),
        ("excursion_window", "text", "excursion window of the harmonic dipole, in optical periods"),
    ), "attribute"),
    *_entries("sfa/harmonic", SFA, (
        ("frequency", "hartree", "angular frequency = photon energy", "(F',)"),
        ("order", "1", "harmonic order: frequency / carrier frequency of the first pulse", "(F',)"),
        ("power", "atomic_units", "|a|^2 of the SFA dipole, acceleration form, the run's window", "(F',)"),
        ("power_short", "atomic_units", "the same for excursions in the short-branch window", "(F',)"),
        ("power_long", "atomic_units", "the same for excursions in the long-branch window", "(F',)"),
        ("cutoff_energy", "hartree", "cutoff read off power by the run's rule (NaN: see reason)"),
        ("cutoff_uncertainty", "hartree", "half width of that reading: one harmonic order"),
    )),
    Entry("sfa/harmonic@window", "text", "the window W (spectra.window of the input)", when=SFA),
    Entry("sfa/harmonic/cutoff_energy@reason", "text", "why the cutoff is NaN (empty if read)", when=SFA),
    *_entries("sfa/orbits", SFA, (
        ("crest_time", T, "field crest of each central half cycle", "(H,)"),
        ("ponderomotive_energy", "hartree", "local Up of each half cycle (fitted A0^2 / 4)", "(H,)"),
        ("cutoff", "hartree", "quantum-orbit cutoff of each half cycle (closest approach of the branches)",
         "(H,)"),
        ("energy", "hartree", "photon energies of the orbits", "(E,)"),
        ("emission_short", T, "Re t of the return, short orbits (NaN beyond the cutoff)", "(H, E)"),
        ("emission_long", T, "Re t of the return, long orbits (NaN beyond the cutoff)", "(H, E)"),
        ("ionization_short", T, "Re t' of the ionization, short orbits", "(H, E)"),
        ("ionization_long", T, "Re t' of the ionization, long orbits", "(H, E)"),
    )),
    *_entries("sfa/photoelectron", "a run with spectra.sfa = true and a photoelectron spectrum", (
        ("energy", "hartree", "kinetic energy: the run's photoelectron axis up to 20 Up", "(K'',)"),
        ("direct_left", "1/hartree", "dP/dE of the direct SFA amplitude, electrons going left (p < 0)", "(K'',)"),
        ("direct_right", "1/hartree", "the same going right (p > 0)", "(K'',)"),
        ("rescattered_left", "1/hartree", "dP/dE of the first-order Born rescattered amplitude, going left",
         "(K'',)"),
        ("rescattered_right", "1/hartree", "the same going right", "(K'',)"),
        ("total_left", "1/hartree", "dP/dE of the coherent sum of both amplitudes, going left", "(K'',)"),
        ("total_right", "1/hartree", "the same going right", "(K'',)"),
        ("direct_edge", "hartree", "edge of the direct SFA spectrum (docs/sfa.md)"),
        ("backscattered_edge", "hartree", "edge of the rescattered SFA spectrum, the run's rule (NaN: unresolved)"),
    )),
)

_PHOTO = "spectra/photoelectron/{method}"

DERIVED = "a run of one electron (derived spectrum: tdse1d.spectra.derived)"


def _derived_entries() -> tuple[Entry, ...]:
    """The entries each registered derived spectrum declares (tdse1d.spectra.derived)."""
    from ..spectra.derived import DERIVED_SPECTRA

    out = []
    for name, spectrum in DERIVED_SPECTRA.items():
        out += _entries(f"spectra/{name}", DERIVED, [(c.name, c.unit, c.description, "(F'',)")
                                                     for c in (spectrum.axis, *spectrum.columns)])
        out += _entries(f"spectra/{name}", DERIVED, [(c.name, c.unit, c.description)
                                                     for c in spectrum.readings_declared], "attribute")
    return tuple(out)


from .layout_pair import _PAIR_ROWS  # noqa: E402  (needs _entries and the units above)
from .layout_sfa import _SFA_SCAN_ROWS  # noqa: E402  (needs Entry and _entries)


RESULT_LAYOUT: tuple[Entry, ...] = (
    *_entries("", ALWAYS, (
        ("input", "text", "the resolved input as TOML text (all --set overrides applied); "
                          "tomllib.loads + tdse1d.input.schema.parse_input rebuild the same run from it"),
        ("input_source", "text", "path of the input file as given on the command line"),
        ("tdse1d_version", "text", "version of tdse1d that wrote the file"),
        ("grid_points", "count", "N, the number of grid points actually used"),
        ("grid_spacing", "bohr", "dx actually used"),
        ("time_step", T, "dt actually used"),
        ("steps", "count", "S, the number of time steps"),
        ("record_stride", "count", "k: the per-step series (field/, observables/) hold every k-th step, "
         "R = floor(S/k) + 1 records (docs/output.md, recorded time axis)"),
        ("gauge", "text", '"length" or "velocity", the gauge of the propagation'),
        ("splitting_order", "1", "order of the splitting scheme, 2 (Strang) or 4 (Yoshida triple jump)"),
        ("absorber", "text", 'absorber type ("mask", "complex-potential", "none")'),
        ("absorber_width", "bohr", "width of each absorbing layer"),
        ("potential", "text", "one line describing the potential, with the fitted softening if any"),
        ("warnings", "text", "newline-separated warnings of the set-up and of the health checks (empty if none)"),
        ("complete", "flag", "true only in a finished file (docs/output.md, atomic writing)"),
        ("writer", "text", "random token of the process that wrote the file"),
    ), "attribute"),
    Entry("grid/x", "bohr", "grid positions x_j = (j - N/2) dx", "(N,)"),
    Entry("grid@spacing", "bohr", "dx"),
    Entry("states/energy", "hartree", "energies of the bound states on the run's grid, ascending", "(M,)"),
    Entry("states/wavefunction", "bohr^-1/2", "real bound-state wavefunctions, normalised to sum phi^2 dx = 1",
          "(M, N)"),
    *_entries("field", ALWAYS, (
        ("time", T, "the recorded step times t_0, t_k, t_2k, ... (same as observables/time)", "(R,)"),
        ("electric", FIELD, "total electric field E(t_n) of all pulses", "(R,)"),
        ("vector_potential", "atomic_unit_of_vector_potential", "vector potential A(t_n), E = -dA/dt", "(R,)"),
    )),
    *_entries("observables", ALWAYS, (
        ("time", T, "recorded step times t_jk, j = 0..R-1 (k = /@record_stride)", "(R,)"),
        ("dipole", "bohr", "<x>, dipole moment per electron charge", "(R,)"),
        ("momentum", P, "kinetic momentum <p>", "(R,)"),
        ("acceleration", "atomic_unit_of_acceleration", "Ehrenfest dipole acceleration -<dV/dx> - E(t) N(t)",
         "(R,)"),
        ("norm", "1", "N(t) = sum abs(psi)^2 dx in the box", "(R,)"),
        ("initial_population", "1", "abs(<psi_0|psi(t)>)^2, population of the initial state", "(R,)"),
        ("population_time", T, "times of the bound-state projections", "(P,)"),
        ("bound_population", "1", "|<phi_n|psi>|^2 at population_time, shape (time, state)", "(P, M)"),
        ("absorbed", "1", "norm removed by the absorber so far", "(R,)"),
    )),
    Entry("snapshots/time", T, "snapshot times, first and last step included", "(Q,)"),
    Entry("snapshots/x", "bohr", "positions of the stored points (every output.snapshot_stride-th)", "(N/stride,)"),
    Entry("snapshots/x_{i}", "bohr", "positions of the stored points along axis i >= 1 of a grid of several axes",
          "(N_i/stride,)", when=SEVERAL_AXES),
    Entry("snapshots/psi", "bohr^-1/2", "complex wavefunction at each snapshot time, length gauge "
          "(on a grid of d axes: shape (Q, N_0/stride, ..., N_d-1/stride), unit bohr^-d/2)", "(Q, N/stride)"),
    Entry("snapshots/psi@gauge", "text", '"length"'),
    Entry("final/psi", "bohr^-1/2", "complex wavefunction at the end, length gauge, full grid", "(N,)"),
    Entry("final/psi@gauge", "text", '"length"'),
    Entry("estimates@units", "text", "says that the attributes are in atomic units unless the name says otherwise"),
    *_entries("estimates", FIELD_RUN, _ESTIMATES, "attribute"),
    *_entries("estimates/pulse_{i}", FIELD_RUN, _ESTIMATES, "attribute"),
    *_entries("spectra/harmonic", ALWAYS, (
        ("frequency", "hartree", "angular frequency = photon energy", "(F,)"),
        ("order", "1", "harmonic order: frequency / carrier frequency of the first pulse", "(F,)"),
        ("power", "atomic_units", "|FFT of windowed acceleration|^2", "(F,)"),
    )),
    Entry("spectra/harmonic@window", "text", 'the window W (spectra.window of the input)'),
    *_entries("spectra/harmonic", "a run whose cutoff could be read", (
        ("cutoff_energy", "hartree", "harmonic cutoff read off the spectrum (NaN when unresolved)"),
        ("cutoff_order", "1", "the same in harmonic orders"),
        ("cutoff_resolved", "flag", "false when no cutoff could be read above the noise floor"),
    ), "attribute"),
    *_entries("spectra/harmonic", "a run with a resolved cutoff reading", (
        ("noise_floor_log10", "log10(atomic_units)",
         "log10 of the noise floor of power: the larger of the median of the top half "
         "of the axis and the field's own spectrum through the same window", "(F,)"),
        ("cutoff_headroom", "decades", "reading level (plateau - drop) above the noise floor at the cutoff"),
    )),
    *_entries("spectra/harmonic/cutoff_headroom", "a run with a resolved cutoff reading", (
        ("resolved", "flag", "whether the cutoff reading is resolved"),
        ("reason", "text", "why not, when it is not"),
    ), "attribute"),
    *_entries(_PHOTO, "method plane_wave always; surface_flux when asked for and possible", (
        ("method", "text", "the method: plane_wave or surface_flux"),
        ("split", "text", 'how left- and right-going electrons are told apart ("momentum")'),
    ), "attribute"),
    *_entries(_PHOTO, "method plane_wave always; surface_flux when asked for and possible", (
        ("momentum", P, "|p|", "(K,)"),
        ("density_left", "1/atomic_unit_of_momentum", "dP/d|p| of electrons going left (p < 0)", "(K,)"),
        ("density_right", "1/atomic_unit_of_momentum", "dP/d|p| of electrons going right (p > 0)", "(K,)"),
        ("energy", "hartree", "kinetic energy p^2/2", "(K,)"),
        ("energy_density_left", "1/hartree", "dP/dE = (dP/dp)/p going left", "(K,)"),
        ("energy_density_right", "1/hartree", "dP/dE = (dP/dp)/p going right", "(K,)"),
    )),
    *_entries("ionization", ALWAYS, (
        ("probability", "1", "1 - population of all bound states (held + edge + beyond), docs/analysis.md"),
        ("absorbed", "1", "norm removed by the absorber"),
        ("probability_band", "1", "lower and upper ends of the band covering the estimate's error", "(2,)"),
        ("bound_held", "1", "population of the bound states the box holds"),
        ("bound_edge", "1", "population of the grid's E < 0 states reaching into the absorber"),
        ("bound_beyond", "1", "estimated population of Rydberg states above the grid's highest level"),
        ("bound_unheld", "1", "bound_edge + bound_beyond: population in bound states the box cannot hold"),
        ("time", T, "when the populations were read: first record at or after the field's end"),
    )),
    *_entries("ionization", ALWAYS, (
        ("states_found", "count", "bound states found on the grid"),
        ("states_held", "count", "how many of them the box holds"),
        ("states_complete", "flag", "every E < 0 state of the grid was looked for and each converged"),
        ("top_held_energy", "hartree", "energy of the highest state the box holds"),
        ("edge_loss_rate", "1/atomic_unit_of_time", "rate at which the absorber empties the edge states"),
        ("converged", "flag", "the band lies within +-2 % of the probability"),
    ), "attribute"),
    # ------------------------------------------------ written by the analysis of a run
    Entry("classical@notes", "text", "why a part of the analysis was left out"),
    *_entries("classical", ALWAYS, (
        ("ionization_potential", "hartree", "Ip of the initial state"),
        ("ponderomotive_energy", "hartree", "Up of the first pulse's peak field"),
        ("keldysh_parameter", "1", "sqrt(Ip / 2 Up)"),
        ("barrier_suppression_field", FIELD, "field at which the barrier top reaches E0"),
        ("peak_field", FIELD, "peak field of the first pulse"),
        ("tunnelling_yield", "1", "quasi-static WKB tunnelling probability at the end"),
    )),
    *_entries("classical", THREE_STEP, (
        ("max_return_energy", "hartree", "largest return kinetic energy, three-step model"),
        ("cutoff_energy", "hartree", "Ip + largest return energy"),
        ("cutoff_birth_time", T, "birth time of the cutoff trajectory"),
        ("cutoff_return_time", T, "return time of the cutoff trajectory"),
        ("max_direct_energy", "hartree", "largest drift energy of direct electrons (2 Up)"),
        ("max_backscattered_energy", "hartree", "largest drift energy of backscattered electrons (10 Up)"),
    )),
    *_entries("classical/trajectories", THREE_STEP, (
        ("birth_time", T, "birth times t0", "(B,)"),
        ("return_time", T, "return times, shape (birth, return)", "(B, R)"),
        ("return_energy", "hartree", "return kinetic energy", "(B, R)"),
        ("drift_momentum", P, "-A(t0)", "(B,)"),
        ("backscattered_momentum", P, "A(t0) - 2 A(t_r)", "(B, R)"),
    )),
    *(e for branch in ("short", "long") for e in _entries("classical/branches", THREE_STEP, (
        (f"{branch}_time", T, f"emission (first return) time, {branch} trajectories", "(L,)"),
        (f"{branch}_energy", "hartree", f"photon energy Ip + E_return, {branch} trajectories", "(L,)"),
        (f"{branch}_half_cycle", "1", f"field half cycle index, {branch} trajectories", "(L,)"),
    ))),
    *_entries("classical/tunnelling", "a run where the quasi-static tunnelling estimate applies", (
        ("time", T, "times of the tunnelling estimate", "(U,)"),
        ("probability", "1", "quasi-static tunnelling probability up to time", "(U,)"),
    )),
    Entry("spectra/time_frequency@window", "text", '"gaussian"', when=FIELD_RUN),
    *_entries("spectra/time_frequency", FIELD_RUN, (
        ("time", T, "centres of the Gaussian window", "(G,)"),
        ("frequency", "hartree", "photon energy", "(W,)"),
        ("power", "atomic_units", "|Gabor transform of the acceleration|^2", "(G, W)"),
        ("width", T, "Gaussian window sigma"),
    )),
    *_entries("spectra/time_frequency/emission", "a run with a quasi-static field and short trajectories", (
        ("half_cycle", "1", "field half cycle index", "(H,)"),
        ("frequency", "hartree", "photon energy", "(H,)"),
        ("quantum", T, "time of the Gabor maximum", "(H,)"),
        ("short", T, "classical short trajectory", "(H,)"),
        ("long", T, "classical long trajectory", "(H,)"),
        ("period", T, "optical period"),
    )),
    Entry("spectra/photoelectron/edges@method", "text", "which photoelectron spectrum was read", when=FIELD_RUN),
    *_entries("spectra/photoelectron/edges", "a run with a field below Ip and a photoelectron spectrum", (
        ("direct", "hartree", "direct-electron edge read off (NaN: see reason)"),
        ("backscattered", "hartree", "backscattered-electron edge read off (NaN: see reason)"),
        ("plateau_log10", "log10(1/hartree)", "log10 of the plateau level of dP/dE"),
        ("noise_floor_log10", "log10(1/hartree)",
         "noise floor of dP/dE on the energy axis of the spectrum read: the larger of the median of log10 over "
         "the top half of the axis and the field-free companion (docs/analysis.md)", "(K,)"),
    )),
    Entry("spectra/photoelectron/edges/direct@reason", "text", "why the edge is NaN (empty if read)", when=FIELD_RUN),
    Entry("spectra/photoelectron/edges/backscattered@reason", "text", "why the edge is NaN (empty if read)",
          when=FIELD_RUN),
    Entry("spectra/photoelectron/edges/ponderomotive_shift", "hartree", "ponderomotive shift of the ATI comb",
          when=FIELD_RUN),
    Entry("spectra/photoelectron/edges/ponderomotive_shift@measurable", "flag", "whether the shift could be measured",
          when=FIELD_RUN),
    Entry("spectra/photoelectron/edges/ponderomotive_shift@reason", "text", "why not, when it could not",
          when=FIELD_RUN),
    Entry("spectra/photoelectron/field_free@description", "text",
          "the same numerics with no field for one optical period: the method's floor", when=FIELD_RUN),
    *_entries("spectra/photoelectron/field_free", FIELD_RUN, (
        ("energy", "hartree", "kinetic energy of the field-free companion", "(K',)"),
        ("energy_density", "1/hartree", "dP/dE of the field-free companion, both sides", "(K',)"),
    )),
    Entry("streaking@reason", "text", "empty, or why the peaks and the shift are NaN", when=XUV),
    *_entries("streaking", XUV, (
        ("xuv_time", T, "centre of the XUV pulse"),
        ("xuv_photon_energy", "hartree", "photon energy of the XUV pulse"),
        ("photoelectric_energy", "hartree", "peak energy without the streaking shift"),
        ("initial_momentum", P, "momentum of the photoelectron peak without the IR field"),
        ("vector_potential", P, "A of the IR field at the XUV time"),
        ("peak_right", P, "momentum of the peak going right"),
        ("peak_left", P, "momentum of the peak going left"),
        ("measured", P, "streaking shift measured from the peaks"),
    )),
    # ------------------------------------------- written by a certified run (tdse1d run --certify)
    *_entries("certification", CERTIFIED, (
        ("description", "text", "what the uncertainties are: the largest move of each quantity from this run "
                                "to a companion run refining one numerical parameter, times the companion's "
                                "error_factor (docs/output.md)"),
        ("wall_seconds", "s", "wall time of the certified run: this run and its companions, in parallel"),
        ("workers", "count", "Dask worker processes the runs shared"),
    ), "attribute"),
    *_entries("certification/companions", CERTIFIED, (
        ("name", "text", "companion run: time_step, grid_spacing or box", "(C,)"),
        ("parameter", "text", "the numerical parameter it refines", "(C,)"),
        ("change", "text", "what it changes, with the values (e.g. grid.spacing 0.2 -> 0.1333 bohr)", "(C,)"),
        ("error_factor", "1", "this run's error in units of its move to the companion: r^p / (r^p - 1) for a "
                              "refinement by r of an error of order p (Richardson)", "(C,)"),
        ("run_seconds", "s", "wall time of the companion's run", "(C,)"),
        ("file", "text", "its result file relative to this file's folder (empty when not kept)", "(C,)"),
    )),
    *_entries("certification/{quantity}", CERTIFIED, (
        ("value", VARIABLE_UNIT, "the quantity in this run (units: hartree for energies, atomic_unit_of_time "
                                 "for emission times, atomic_unit_of_momentum for the streaking shift, 1 for "
                                 "ionization_probability)"),
        ("uncertainty", VARIABLE_UNIT, "numerical uncertainty: max over companions of "
                                       "error_factor x |companion - value|"),
        ("tolerance", VARIABLE_UNIT, "largest move a companion may make with the quantity still converged"),
        ("companion_values", VARIABLE_UNIT, "the quantity in each companion (NaN: not read), companion order",
         "(C,)"),
    )),
    *_entries("certification/{quantity}", CERTIFIED, (
        ("converged", "flag", "no companion moved the quantity beyond its tolerance, and each read it"),
        ("note", "text", 'empty, or "not converged: ..." naming the parameter to refine'),
        ("tolerance_reason", "text", "why the tolerance is what it is"),
    ), "attribute"),
    *SFA_LAYOUT,
    *_derived_entries(),
    *_PAIR_ROWS,
)

SCAN_RUN = "a scan that has at least one finished point"
PAIR_SCAN = "a scan of the two-electron atom"
SUMMARY_LAYOUT: tuple[Entry, ...] = (
    *_entries("knee", PAIR_SCAN, (
        ("single", "1", "single ionization of each point after its run (reported radius; NaN: not finished)",
         "(points,)"),
        ("double", "1", "double ionization of each point after its run", "(points,)"),
        ("ratio", "1", "double over single ionization of each point", "(points,)"),
        ("ratio_low", "1", "lowest double-to-single ratio over the region radii", "(points,)"),
        ("ratio_high", "1", "highest double-to-single ratio over the region radii", "(points,)"),
        ("sequential_single", "1", "singly charged ions of the sequential estimate", "(points,)"),
        ("sequential_double", "1", "doubly charged ions of the sequential estimate", "(points,)"),
        ("peak_intensity_W_cm2", "W/cm^2", "peak intensity of each point", "(points,)"),
    )),
    *_entries("", ALWAYS, (
        ("kind", "text", '"scan-summary"'),
        ("complete", "flag", "true (a summary is written under a temporary name, then renamed)"),
        ("tdse1d_version", "text", "version of tdse1d that wrote the file"),
        ("plan", "text", "the scan plan as TOML text"),
        ("plan_source", "text", "path of the plan file"),
        ("plan_identity", "text", "hash of the plan's axes and points"),
        ("mode", "text", '"grid" or "zip"'),
        ("shape", "count", "points along each axis", "(axes,)"),
        ("points", "count", "number of points"),
        ("complete_points", "count", "number of points with a finished file"),
    ), "attribute"),
    Entry("axes@count", "count", "number of axes"),
    Entry("axes/{i}@key", "text", "the dotted input key of axis i"),
    Entry("axes/{i}@unit", "text", "the unit the plan gives its values in (empty: atomic units)"),
    Entry("axes/{i}/values", VARIABLE_UNIT, "values as written in the plan, in the plan's unit", "(n_i,)"),
    Entry("axes/{i}/values_au", "atomic_units", "values in atomic units", "(n_i,)"),
    Entry("axes/{i}/labels", "text", "values as written", "(n_i,)"),
    *_entries("points", ALWAYS, (
        ("hash", "text", "hash of the point's resolved input (its file name)", "(points,)"),
        ("index", "1", "point number in plan order", "(points,)"),
        ("grid_index", "1", "index along each axis", "(points, axes)"),
        ("values_au", "atomic_units", "the point's value on each axis", "(points, axes)"),
        ("complete", "1", "the point has a finished file", "(points,)"),
        ("cost", "1", "grid points x time steps", "(points,)"),
        ("run_seconds", "s", "wall time of the point's run", "(points,)"),
    )),
    *_entries("spectra", ALWAYS, (
        ("photon_energy_eV", "eV", "common photon-energy grid: from 0 with the finest of the points' steps, up to "
                                   "twice the largest Ip + 3.17 Up, not beyond the lowest Nyquist energy", "(E,)"),
        ("power", "atomic_units", "harmonic power |a|^2 interpolated onto photon_energy_eV", "(points, E)"),
        ("amplitude", "atomic_units",
         "complex harmonic amplitude (acceleration form, phase referred to t = 0), "
         "real and imaginary parts interpolated onto photon_energy_eV", "(points, E)"),
    )),
    *_entries("cutoff", ALWAYS, (
        ("cutoff_energy_eV", "eV", "harmonic cutoff read off each spectrum by the run "
                                   "(spectra/harmonic@cutoff_energy of the point file)", "(points,)"),
        ("resolved", "1", "the cutoff reading is resolved", "(points,)"),
        ("semiclassical_eV", "eV", "Ip + 3.17 Up", "(points,)"),
        ("lewenstein_eV", "eV", "1.32 Ip + 3.17 Up", "(points,)"),
    )),
    *_entries("estimates", ALWAYS, (
        ("ponderomotive_energy_eV", "eV", "Up of each point (its file's estimates)", "(points,)"),
        ("ionization_potential_eV", "eV", "Ip of each point", "(points,)"),
        ("keldysh_parameter", "1", "Keldysh parameter of each point", "(points,)"),
        ("peak_intensity_W_cm2", "W/cm^2", "cycle-averaged peak intensity of each point", "(points,)"),
        ("photon_energy_eV", "eV", "carrier photon energy of each point", "(points,)"),
    )),
    *_entries("ionization", ALWAYS, (
        ("probability", "1", "1 - final bound population (each run's ionization/probability)", "(points,)"),
        ("probability_band", "1", "lower and upper ends of each run's band (its ionization/probability_band; "
                                  "NaN: not finished)", "(points, 2)"),
        ("converged", "flag", "the run's box converged its probability (its ionization@converged: the band "
                              "within +-2 %); a point that is not is no value to plot without its band",
         "(points,)"),
        ("tunnelling_yield", "1", "quasi-static tunnelling yield over the run's field "
                                  "(tdse1d.semiclassical.tunnelling.tunnelling_yield)", "(points,)"),
    )),
    *_entries("photoelectron", ALWAYS, (
        ("cutoff_energy_eV", "eV", "rough end of the last plateau (tdse1d.scans.summary.photoelectron_cutoff)",
         "(points,)"),
        ("direct_edge_eV", "eV", "direct-electron edge read off by the run (spectra/photoelectron/edges), "
                                 "NaN if absent", "(points,)"),
        ("backscattered_edge_eV", "eV", "backscattered-electron edge read off by the run, NaN if absent",
         "(points,)"),
        ("direct_drift_eV", "eV", "2 Up", "(points,)"),
        ("backscattered_drift_eV", "eV", "10 Up", "(points,)"),
    )),
    Entry("fit@description", "text", "what the fit is"),
    *_entries("fit", "at least two points with a resolved cutoff and distinct Up", (
        ("slope", "1", "slope of the least-squares line cutoff = slope * Up + intercept"),
        ("intercept_ev", "eV", "its intercept"),
        ("slope_stderr", "1", "standard error of the slope (NaN with two points)"),
        ("intercept_stderr", "eV", "standard error of the intercept (NaN with two points)"),
        ("points", "count", "points in the fit"),
        ("ip_ev", "eV", "mean Ip of the points fitted"),
        ("reference_slope", "1", "3.17, the semiclassical slope"),
        ("reference_intercept_ev", "eV", "Ip, the semiclassical intercept"),
        ("lewenstein_intercept_ev", "eV", "1.32 Ip, the quantum-corrected intercept"),
    ), "attribute"),
    *_entries("focal", "a scan of one intensity axis with two finished points or more", (
        ("peak_intensity_au", "atomic_units", "largest scanned intensity, the peak of the focus"),
        ("description", "text", "what the averages are"),
    ), "attribute"),
    *_entries("focal/{geometry}", "a scan of one intensity axis with two finished points or more", (
        ("incoherent", "atomic_units", "sum of w_k |a_k|^2", "(E,)"),
        ("coherent", "atomic_units", "|sum of w_k a_k|^2", "(E,)"),
    )),
    *_SFA_SCAN_ROWS,
)
