"""Input files: TOML in, validated frozen dataclasses in atomic units out.

One TOML file describes one run. :func:`load_input` reads it, applies ``--set``
overrides (:func:`~tdse1d.input.spec.apply_override`), and validates every table
against the dataclasses below, whose fields carry their own specification
(:class:`~tdse1d.input.spec.Spec`) as metadata: the dataclass *is* the schema, so adding
a key is adding one field. ``docs/input.md`` documents every key.

Every error is an :class:`~tdse1d.input.spec.InputError` naming the file, the dotted key
and what is wrong; the command line turns it into one line on stderr and exit status 2.
"""

from __future__ import annotations

import copy
import dataclasses
import difflib
import math
from dataclasses import dataclass, field
from pathlib import Path


from .. import units
from .spec import (InputError, Spec, _join, _read_table, apply_override, dump_toml, key, parse_override,
                   tomllib)
from .atom import AtomConfig, CentreConfig, _read_atom


# ----------------------------------------------------------------------- sections


def _envelope_names():
    from ..physics.pulses import ENVELOPES

    return tuple(ENVELOPES)


def _absorber_names():
    from ..physics.absorbers import ABSORBERS

    return tuple(ABSORBERS)


def _scheme_names():
    from ..physics.schemes import SCHEMES

    return tuple(SCHEMES)


def _window_names():
    from ..spectra.windows import WINDOWS

    return tuple(WINDOWS)


_POSITIVE = dict(minimum=0.0)


# Ranges of a pulse's carrier and strength inside which this program's model holds:
#: shortest wavelength (nm): below about 1 nm the wavelength nears the size of the bound
#: state (a few bohr, 0.1-0.3 nm) and the dipole approximation the solver makes fails
MIN_WAVELENGTH_NM = 1.0
#: longest wavelength (nm): one cycle at 1 m lasts 3.3 ns, 1.4e8 a.u., more time steps
#: than a run may take (problem.MAX_STEPS) at any step that resolves an atom
MAX_WAVELENGTH_NM = 1e9
#: largest normalised vector potential a0 = E0 / (omega c): at a0 = 1 the classical
#: quiver momentum reaches m c and the non-relativistic Schrodinger equation fails
MAX_NORMALISED_VECTOR_POTENTIAL = 1.0
#: largest |delay| of a pulse (fs): 1 ns is 4.1e7 a.u., already more steps between two
#: pulses than a run may take at a step of 0.04 a.u.
MAX_DELAY_FS = 1e6


@dataclass(frozen=True)
class GridConfig:
    """The spatial grid (``[grid]``); ``None`` means chosen from the estimates."""

    points: int | None = key(Spec("int", auto=True, minimum=16, strict=False, doc="number of points"), None)
    spacing: float | None = key(
        Spec("quantity", "length", auto=True, minimum=1e-4, strict=False, maximum=100.0, doc="spacing (bohr)"), None
    )


@dataclass(frozen=True)
class LaserConfig:
    """One pulse (``[[laser]]``). Quantities in a.u.; None where not given."""

    wavelength: float | None = key(
        Spec("quantity", "length", bare_allowed=False, **_POSITIVE, doc="vacuum wavelength"), None
    )
    photon_energy: float | None = key(Spec("quantity", "energy", **_POSITIVE, doc="photon energy"), None)
    peak_intensity: float | None = key(
        Spec("quantity", "intensity", bare_allowed=False, **_POSITIVE, doc="peak (cycle-averaged) intensity"), None
    )
    peak_field: float | None = key(Spec("quantity", "electric_field", **_POSITIVE, doc="peak field"), None)
    envelope: str = key(Spec("choice", choices=_envelope_names, doc="envelope shape"), "sin2")
    cycles: float | None = key(Spec("float", **_POSITIVE, doc="length in optical cycles"), None)
    fwhm: float | None = key(
        Spec("quantity", "time", bare_allowed=False, **_POSITIVE, doc="intensity FWHM"), None
    )
    ramp_cycles: float = key(Spec("float", **_POSITIVE, doc="ramp length in cycles (flat-top envelope only)"), 2.0)
    cep: float = key(Spec("quantity", "angle", doc="carrier-envelope phase (rad)"), 0.0)
    delay: float = key(Spec("quantity", "time", bare_allowed=False, doc="time of the envelope centre"), 0.0)
    chirp: float = key(Spec("quantity", "chirp_rate", doc="linear chirp rate d(omega)/dt (a.u.)"), 0.0)
    field_file: str | None = key(Spec("str", doc="two-column file: time, field"), None)
    time_unit: str | None = key(Spec("str", doc="unit of the file's time column"), None)
    field_unit: str | None = key(Spec("str", doc="unit of the file's field column"), None)

    @property
    def omega(self) -> float | None:
        """Carrier angular frequency (a.u.)."""
        if self.photon_energy is not None:
            return self.photon_energy
        if self.wavelength is not None:
            return 2 * math.pi * units.SPEED_OF_LIGHT_AU / self.wavelength
        return None

    @property
    def amplitude(self) -> float | None:
        """Peak field amplitude E0 (a.u.)."""
        if self.peak_field is not None:
            return self.peak_field
        if self.peak_intensity is not None:
            return math.sqrt(self.peak_intensity)
        return None


@dataclass(frozen=True)
class PropagationConfig:
    """Time propagation (``[propagation]``)."""

    time_step: float | None = key(
        Spec("quantity", "time", auto=True, minimum=1e-6, strict=False, doc="time step"), None
    )
    gauge: str = key(Spec("choice", choices=("length", "velocity"), doc="gauge"), "length")
    order: int = key(Spec("choice", choices=(2, 4), doc="order of the splitting"), 2)
    scheme: str | None = key(
        Spec("choice", choices=_scheme_names, doc="splitting scheme by name (default: the one for 'order')"), None
    )
    after_pulse: float | None = key(
        Spec("quantity", "time", auto=True, minimum=0, strict=False, doc="field-free time after the pulses"), None
    )
    tolerance: float | None = key(
        Spec("float", minimum=1e-12, maximum=1.0, auto=True,
             doc="splitting error per core passage allowed to the automatic time step (default 1e-2)"), None
    )

    @property
    def scheme_name(self) -> str:
        """The splitting scheme of the run: ``scheme`` if given, else the default for ``order``."""
        if self.scheme is not None:
            return self.scheme
        from ..physics.schemes import DEFAULT_SCHEME_FOR_ORDER

        return DEFAULT_SCHEME_FOR_ORDER[self.order]


def _read_propagation(table, path):
    """[propagation], with ``scheme`` and ``order`` made to agree: a named scheme sets
    the order (so the result file states it); both given and different is refused."""
    prop = _read_table(PropagationConfig, table, path)
    if prop.scheme is None:
        return prop
    from ..physics.schemes import SCHEMES

    order = SCHEMES[prop.scheme].order
    if "order" in table and prop.order != order:
        raise InputError(f"the scheme '{prop.scheme}' is of order {order}, not {prop.order}: "
                         "give one of 'scheme' and 'order', or both agreeing", _join(path, "order"))
    return dataclasses.replace(prop, order=order)


@dataclass(frozen=True)
class AbsorberConfig:
    """Absorbing boundaries (``[absorber]``)."""

    type: str = key(Spec("choice", choices=_absorber_names, doc="absorber"), "mask")
    width: float | None = key(Spec("quantity", "length", auto=True, **_POSITIVE, doc="width of each side"), None)
    exponent: float = key(Spec("float", **_POSITIVE, doc="exponent of the cos mask"), 0.125)
    strength: float | None = key(
        Spec("float", auto=True, **_POSITIVE, doc="peak of the complex absorbing potential (Hartree)"), None
    )


def _read_absorber(table, path):
    """[absorber], refusing the keys of another absorber than ``type`` names."""
    from ..physics.absorbers import ABSORBERS

    absorber = _read_table(AbsorberConfig, table, path)
    mine = ABSORBERS[absorber.type].own_keys
    for other, cls in ABSORBERS.items():
        for name in cls.own_keys:
            if name in table and name not in mine:
                raise InputError(f"belongs to the {other} absorber, not to type = '{absorber.type}'",
                                 _join(path, name))
    return absorber


@dataclass(frozen=True)
class OutputConfig:
    """What is written (``[output]``)."""

    file: str | None = key(Spec("str", doc="result file"), None)
    # a million wavefunctions is far beyond a film or an analysis (every step of most
    # runs); more is a typo, and the run's disk estimate would refuse it anyway
    snapshots: int = key(Spec("int", minimum=0, strict=False, maximum=1e6, doc="number of wavefunction snapshots"),
                         100)
    snapshot_stride: int = key(Spec("int", minimum=1, strict=False, doc="keep every n-th grid point"), 1)
    population_interval: float | None = key(
        Spec("quantity", "time", auto=True, **_POSITIVE, doc="time between bound-state projections"), None
    )
    checkpoint_interval: float | None = key(
        Spec("quantity", "time", bare_allowed=False, **_POSITIVE, doc="wall-clock time between checkpoints"), None
    )


@dataclass(frozen=True)
class SpectraConfig:
    """How spectra are computed (``[spectra]``)."""

    window: str = key(Spec("choice", choices=_window_names, doc="window of the harmonic spectrum"), "hann")
    photoelectrons: str = key(
        Spec("choice", choices=("surface_flux", "none"),
             doc="photoelectron spectrum by the flux through surfaces at the absorbers",
             retired={"mask": '"mask" is no longer offered: use "surface_flux" (the time-dependent surface '
                              'flux method), the default'}),
        "surface_flux",
    )
    sfa: bool = key(Spec("bool", doc="also compute the strong-field approximation of the same pulse and atom "
                                     "and store it beside the run's spectra (docs/sfa.md)"), False)


@dataclass(frozen=True)
class CertificationConfig:
    """A certified run (``[certification]``): companion runs that each refine one
    numerical parameter give every quantity its numerical uncertainty
    (:mod:`tdse1d.scans.certify`)."""

    enabled: bool = key(Spec("bool", doc="run the companions and store each quantity's numerical uncertainty"),
                        False)
    keep_companions: bool = key(Spec("bool", doc="keep the companions' result files in STEM.companions/"), False)


@dataclass(frozen=True)
class RunConfig:
    """A validated run: every quantity in atomic units.

    Attributes
    ----------
    raw : dict
        The input as read, with overrides applied (the "resolved input").
    source : str
        The input file's path, for messages ("<string>" for text input).
    base_dir : Path
        Directory against which relative paths in the input are resolved.
    """

    atom: AtomConfig
    lasers: tuple[LaserConfig, ...]
    grid: GridConfig = GridConfig()
    propagation: PropagationConfig = PropagationConfig()
    absorber: AbsorberConfig = AbsorberConfig()
    output: OutputConfig = OutputConfig()
    spectra: SpectraConfig = SpectraConfig()
    certification: CertificationConfig = CertificationConfig()
    raw: dict = field(default_factory=dict, compare=False, repr=False)
    source: str = "<string>"
    base_dir: Path = Path(".")

    @property
    def resolved_toml(self) -> str:
        """The resolved input as TOML text."""
        return dump_toml(self.raw)

    def resolve_path(self, name: str) -> Path:
        """A path from the input, relative to the input file's directory."""
        p = Path(name)
        return p if p.is_absolute() else self.base_dir / p


_SECTIONS = {
    "grid": GridConfig,
    "propagation": PropagationConfig,
    "absorber": AbsorberConfig,
    "output": OutputConfig,
    "spectra": SpectraConfig,
    "certification": CertificationConfig,
}


def _read_laser(table, path, base_dir: Path):
    laser = _read_table(LaserConfig, table, path)
    tabulated = laser.field_file is not None
    if laser.wavelength is not None and laser.photon_energy is not None:
        raise InputError("give either 'wavelength' or 'photon_energy', not both", _join(path, "photon_energy"))
    if abs(laser.delay) > units.fs_to_au(MAX_DELAY_FS):
        raise InputError(f"|delay| = {units.au_to_fs(abs(laser.delay)):.3g} fs is more than the {MAX_DELAY_FS:g} fs "
                         "a run can span", _join(path, "delay"))
    if laser.omega is not None:
        which = "wavelength" if laser.wavelength is not None else "photon_energy"
        nm = units.omega_to_nm(laser.omega)
        if not MIN_WAVELENGTH_NM <= nm <= MAX_WAVELENGTH_NM:
            lo_ev = units.au_to_ev(units.nm_to_omega(MAX_WAVELENGTH_NM))
            hi_ev = units.au_to_ev(units.nm_to_omega(MIN_WAVELENGTH_NM))
            raise InputError(
                f"a carrier of {nm:.3g} nm ({units.au_to_ev(laser.omega):.3g} eV) is outside what the model holds: "
                f"{MIN_WAVELENGTH_NM:g} nm to {MAX_WAVELENGTH_NM / 1e9:g} m ({lo_ev:.3g} to {hi_ev:.4g} eV; "
                "shorter breaks the dipole approximation, longer takes more steps than a run may)",
                _join(path, which),
            )
    if tabulated:
        for name in ("time_unit", "field_unit"):
            if getattr(laser, name) is None:
                raise InputError(f"a field_file needs '{name}' (e.g. \"fs\", \"V/m\" or \"au\")", _join(path, name))
        for name in ("peak_intensity", "peak_field", "cycles", "fwhm", "envelope", "ramp_cycles", "cep", "chirp"):
            if name in table:
                raise InputError("does not apply to a pulse read from field_file", _join(path, name))
        return laser
    if laser.omega is None:
        raise InputError("missing 'wavelength' or 'photon_energy'", _join(path, "wavelength"))
    if laser.peak_intensity is not None and laser.peak_field is not None:
        raise InputError("give either 'peak_intensity' or 'peak_field', not both", _join(path, "peak_field"))
    if laser.amplitude is None:
        raise InputError("missing 'peak_intensity' (e.g. \"1e14 W/cm^2\")", _join(path, "peak_intensity"))
    a0 = laser.amplitude / (laser.omega * units.SPEED_OF_LIGHT_AU)
    if not a0 < MAX_NORMALISED_VECTOR_POTENTIAL:
        which = "peak_field" if laser.peak_field is not None else "peak_intensity"
        limit = units.field_to_intensity(MAX_NORMALISED_VECTOR_POTENTIAL * laser.omega * units.SPEED_OF_LIGHT_AU)
        raise InputError(
            f"relativistic: the quiver momentum E0/omega is {a0:.3g} m c (a0 >= {MAX_NORMALISED_VECTOR_POTENTIAL:g}), "
            f"outside the non-relativistic Schrodinger equation; at {units.omega_to_nm(laser.omega):.4g} nm keep "
            f"the intensity below {limit:.3g} W/cm^2",
            _join(path, which),
        )
    if (laser.cycles is None) == (laser.fwhm is None):
        which = "both" if laser.cycles is not None else "neither"
        raise InputError(f"give exactly one of 'cycles' and 'fwhm' ({which} given)", _join(path, "cycles"))
    from ..physics.pulses import ENVELOPES

    shape = ENVELOPES[laser.envelope]
    for other, cls in ENVELOPES.items():
        for name in cls.own_keys:
            if name in table and name not in shape.own_keys:
                raise InputError(f"belongs to the {other} envelope, not to envelope = '{laser.envelope}'",
                                 _join(path, name))
    problem = shape.check(laser)
    if problem is not None:
        raise InputError(problem[0], _join(path, problem[1]))
    return laser


def parse_input(raw: dict, source: str = "<string>", base_dir: Path | str = ".") -> RunConfig:
    """Validate a parsed input (a dict as from TOML) into a :class:`RunConfig`.

    Parameters
    ----------
    raw : dict
        The input tables.
    source : str
        Name of the input, used in messages.
    base_dir : path
        Directory for relative paths in the input.

    Raises
    ------
    InputError
        With ``source`` and the dotted key filled in.
    """
    base_dir = Path(base_dir)
    try:
        if not isinstance(raw, dict):
            raise InputError("the input must be a TOML document of tables")
        known = ["atom", "laser"] + list(_SECTIONS)
        for name in raw:
            if name not in known:
                near = difflib.get_close_matches(name, known, n=1)
                hint = f"; did you mean '{near[0]}'?" if near else f"; known tables: {', '.join(known)}"
                raise InputError(f"unknown table{hint}", name)
        if "atom" not in raw:
            raise InputError("missing required table [atom]", "atom")
        atom = _read_atom(raw["atom"], "atom")
        lasers = ()
        if "laser" in raw:
            items = raw["laser"]
            if isinstance(items, dict):
                items = [items]
            if not isinstance(items, list):
                raise InputError("must be an array of tables [[laser]]", "laser")
            lasers = tuple(_read_laser(t, f"laser.{i}", base_dir) for i, t in enumerate(items))
        readers = {"propagation": _read_propagation, "absorber": _read_absorber}
        sections = {name: readers.get(name, lambda t, p, cls=cls: _read_table(cls, t, p))(raw.get(name, {}), name)
                    for name, cls in _SECTIONS.items()}
        return RunConfig(atom=atom, lasers=lasers, raw=copy.deepcopy(raw), source=source, base_dir=base_dir, **sections)
    except InputError as exc:
        if exc.source is None:
            exc.source = source
        raise


def load_input(path, overrides=(), text: str | None = None) -> RunConfig:
    """Read, override and validate one input file.

    Parameters
    ----------
    path : str or Path
        The TOML file.
    overrides : iterable of (str, value) or of "KEY=VALUE" strings
        Applied in order before validation.
    text : str, optional
        TOML text to use instead of reading ``path`` (``path`` then only names it).

    Returns
    -------
    RunConfig

    Raises
    ------
    InputError
        For a missing file, a TOML syntax error (with its line) or any invalid key.
    """
    path = Path(path)
    source = str(path)
    if text is None:
        try:
            text = path.read_text(encoding="utf-8")
        except UnicodeDecodeError as exc:
            # the contents are not echoed: the file may be anything
            raise InputError(f"not a text file: byte {exc.start} is not UTF-8 (an input is TOML text)",
                             source=source) from None
        except OSError as exc:
            raise InputError(f"cannot read the input file ({exc.strerror})", source=source) from None
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"TOML syntax error: {exc}", source=source) from None
    except ValueError as exc:  # e.g. an integer of more digits than Python converts
        raise InputError(f"cannot read the TOML ({str(exc).split(';')[0]})", source=source) from None
    try:
        for item in overrides:
            k, v = parse_override(item) if isinstance(item, str) else item
            raw = apply_override(raw, k, v)
    except InputError as exc:
        exc.source = source
        raise
    return parse_input(raw, source=source, base_dir=path.parent)
