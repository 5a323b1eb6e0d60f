"""Conversions between laboratory units and atomic units.

Everything inside tdse1d is in Hartree atomic units (hbar = m_e = e = 4 pi eps0 = 1).
This module is the one place where laboratory units enter or leave. All constants are
the CODATA 2022 recommended values (:class:`CODATA`, written out here and checked
against :mod:`scipy.constants` by tests/test_codata.py: importing scipy.constants costs
0.15-0.3 s of start-up, more than every other use of the constants together); the unit
*parser* (pint) is used only to turn a string such as ``"800 nm"`` into SI, never for
the atomic-unit constants.

Conventions
-----------
* Peak intensity means the cycle-averaged intensity of a linearly polarised field of
  peak amplitude E0: ``I = c * eps0 * E0**2 / 2``. With this definition the atomic unit
  of intensity (E0 = 1 a.u.) is 3.51e16 W/cm^2.
* Photon energies and frequencies are angular: ``omega = 2 pi c / lambda`` and the
  photon energy is ``hbar * omega`` (in a.u. the two are the same number).
* ``"au"`` or ``"a.u."`` after a number means atomic units of the quantity's own
  dimension (pint would read ``au`` as the astronomical unit, so it is handled here).
"""

from __future__ import annotations

import functools
import math
import re


class CODATA:
    """The few CODATA 2022 recommended values tdse1d needs (SI; the 2019 SI fixes c and e
    exactly). Written out so that a run does not import scipy.constants; each is equal,
    to the last bit, to the entry of :data:`scipy.constants.physical_constants` named in
    :data:`CODATA_NAMES` (tests/test_codata.py), so a scipy with newer values fails a test
    instead of moving results silently."""

    c = 299792458.0                        # speed of light in vacuum, m/s (exact)
    e = 1.602176634e-19                    # elementary charge, C (exact)
    epsilon_0 = 8.8541878188e-12           # vacuum electric permittivity, F/m
    hartree_ev = 27.211386245981           # Hartree energy in eV
    hartree_j = 4.359744722206e-18         # Hartree energy, J
    bohr_m = 5.29177210544e-11             # Bohr radius, m
    au_time_s = 2.4188843265864e-17        # atomic unit of time, s
    au_field_v_m = 514220675112.0          # atomic unit of electric field, V/m
    au_momentum = 1.99285191545e-24        # atomic unit of momentum, kg m/s
    fine_structure = 0.0072973525643       # fine-structure constant


#: the :data:`scipy.constants.physical_constants` name (or scipy.constants attribute,
#: for c, e and epsilon_0) of each :class:`CODATA` value
CODATA_NAMES = {
    "c": "c", "e": "e", "epsilon_0": "epsilon_0",
    "hartree_ev": "Hartree energy in eV", "hartree_j": "Hartree energy", "bohr_m": "Bohr radius",
    "au_time_s": "atomic unit of time", "au_field_v_m": "atomic unit of electric field",
    "au_momentum": "atomic unit of momentum", "fine_structure": "fine-structure constant",
}

__all__ = [
    "HARTREE_EV",
    "BOHR_M",
    "AU_TIME_S",
    "AU_FIELD_V_M",
    "AU_INTENSITY_W_CM2",
    "FINE_STRUCTURE",
    "SPEED_OF_LIGHT_AU",
    "UnitError",
    "DIMENSIONS",
    "to_atomic",
    "from_atomic",
    "ev_to_au",
    "au_to_ev",
    "fs_to_au",
    "au_to_fs",
    "nm_to_omega",
    "omega_to_nm",
    "intensity_to_field",
    "field_to_intensity",
    "optical_period",
]

HARTREE_EV = CODATA.hartree_ev
HARTREE_J = CODATA.hartree_j
BOHR_M = CODATA.bohr_m
AU_TIME_S = CODATA.au_time_s
AU_FIELD_V_M = CODATA.au_field_v_m
AU_MOMENTUM = CODATA.au_momentum
FINE_STRUCTURE = CODATA.fine_structure
SPEED_OF_LIGHT_AU = 1.0 / FINE_STRUCTURE
#: cycle-averaged intensity of a field of 1 a.u. amplitude, W/m^2 and W/cm^2
AU_INTENSITY_W_M2 = 0.5 * CODATA.c * CODATA.epsilon_0 * AU_FIELD_V_M**2
AU_INTENSITY_W_CM2 = AU_INTENSITY_W_M2 * 1e-4


class UnitError(ValueError):
    """A quantity could not be read or has the wrong dimension."""


class Dimension:
    """One physical dimension a quantity may have.

    Parameters
    ----------
    name : str
        Name used in messages, e.g. ``"time"``.
    si_unit : str
        The pint expression of the SI unit the quantity is converted to.
    au_in_si : float
        The size of one atomic unit of this dimension in ``si_unit``.
    example : str
        An example written with a customary unit, shown in error messages.
    """

    def __init__(self, name: str, si_unit: str, au_in_si: float, example: str):
        self.name = name
        self.si_unit = si_unit
        self.au_in_si = au_in_si
        self.example = example

    @property
    def a_name(self) -> str:
        """The name with its indefinite article, for messages ("an electric field")."""
        words = self.name.replace("_", " ")
        return ("an " if words[0] in "aeiou" else "a ") + words


#: The dimensions quantities in input files can have, keyed by name.
DIMENSIONS: dict[str, Dimension] = {
    d.name: d
    for d in (
        Dimension("length", "m", BOHR_M, '"800 nm"'),
        Dimension("time", "s", AU_TIME_S, '"10 fs"'),
        Dimension("energy", "J", HARTREE_J, '"15.76 eV"'),
        Dimension("intensity", "W/m^2", AU_INTENSITY_W_M2, '"1.6e14 W/cm^2"'),
        Dimension("electric_field", "V/m", AU_FIELD_V_M, '"5e10 V/m"'),
        Dimension("momentum", "kg*m/s", AU_MOMENTUM, '"1 au"'),
        # d(omega)/dt, the rate of a linear chirp: a.u. are 1/time^2
        Dimension("chirp_rate", "1/s^2", AU_TIME_S**-2, '"1e-3 fs^-2"'),
        Dimension("angle", "radian", 1.0, '"0.5 rad"'),
    )
}

#: longest quantity string read: "1.6e14 W/cm^2" needs 13 characters; the unit parser
#: takes time growing with the length, so a runaway value is refused before parsing
MAX_QUANTITY_LENGTH = 200

_ATOMIC = re.compile(r"^\s*(?P<num>[-+0-9.eE]+)\s*(a\.u\.|au)\s*$")


#: Units read without the unit parser: each is an exact SI multiple of the dimension's SI
#: unit (SI prefixes; the electronvolt is e joule with the exact elementary charge of
#: the 2019 SI, :data:`CODATA.e`). The shipped inputs use only these, so a run
#: does not pay pint's start-up (about 0.5 s to import and 0.5 s to build its registry);
#: any other unit is read by pint. tests/test_units.py checks each against pint.
_PLAIN_UNITS: dict[str, dict[str, float]] = {
    "length": {"m": 1.0, "cm": 1e-2, "mm": 1e-3, "um": 1e-6, "µm": 1e-6, "μm": 1e-6, "nm": 1e-9, "pm": 1e-12},
    "time": {"s": 1.0, "ms": 1e-3, "us": 1e-6, "µs": 1e-6, "μs": 1e-6, "ns": 1e-9, "ps": 1e-12, "fs": 1e-15,
             "as": 1e-18},
    "energy": {"J": 1.0, "eV": CODATA.e, "meV": 1e-3 * CODATA.e, "keV": 1e3 * CODATA.e},
    "intensity": {"W/m^2": 1.0, "W/cm^2": 1e4, "GW/cm^2": 1e13, "TW/cm^2": 1e16, "PW/cm^2": 1e19},
    "electric_field": {"V/m": 1.0, "V/cm": 1e2, "V/nm": 1e9, "GV/m": 1e9},
    "angle": {"rad": 1.0},
}

#: the atomic unit of a dimension by its own name: exactly 1 a.u. by definition, read
#: without a conversion through SI (pint's bohr and hartree follow the CODATA edition of
#: its version, 2018 or 2022, which differ by 7e-10 from each other and from ours)
_ATOMIC_NAMES: dict[str, tuple[str, ...]] = {"length": ("bohr", "a0"), "energy": ("hartree", "Ha", "Eh")}

_PLAIN = re.compile(r"^\s*(?P<num>[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?)\s*(?P<unit>[^\s\d.+-][^\s]*)\s*$")


def _plain_quantity(value: str, dim: Dimension):
    """``value`` in atomic units when it is a number and one of :data:`_PLAIN_UNITS` of
    ``dim``, else None (pint reads it)."""
    match = _PLAIN.match(value)
    if not match:
        return None
    if match.group("unit") in _ATOMIC_NAMES.get(dim.name, ()):
        return float(match.group("num"))
    factor = _PLAIN_UNITS.get(dim.name, {}).get(match.group("unit"))
    if factor is None:
        return None
    return float(match.group("num")) * factor / dim.au_in_si


@functools.lru_cache(maxsize=1)
def _registry():
    import pint  # imported lazily: building the registry costs about a second

    ureg = pint.UnitRegistry()
    return ureg


def to_atomic(value, dimension: str, *, bare_allowed: bool = True) -> float:
    """Convert a number or a string with a unit to atomic units.

    Parameters
    ----------
    value : float, int or str
        A bare number (already in atomic units) or a string such as ``"800 nm"``,
        ``"1.6e14 W/cm^2"``, ``"0.057 au"``.
    dimension : str
        A key of :data:`DIMENSIONS`.
    bare_allowed : bool
        When False a bare number is refused, for quantities that have a customary
        laboratory unit (wavelength, intensity, duration, delay).

    Returns
    -------
    float
        The value in atomic units of ``dimension``.

    Raises
    ------
    UnitError
        If the string cannot be parsed, has the wrong dimension, or is a bare number
        where a unit is required.
    """
    dim = DIMENSIONS[dimension]
    if isinstance(value, bool):
        raise UnitError(f"expected {dim.a_name} such as {dim.example}, got {value!r}")
    if isinstance(value, (int, float)):
        if not bare_allowed:
            raise UnitError(
                f"a bare number is ambiguous for {dim.a_name}; write it with a unit, "
                f"e.g. {dim.example}"
            )
        return _as_float(value)
    if not isinstance(value, str):
        raise UnitError(f"expected {dim.a_name} such as {dim.example}, got {_shown(value)}")
    if len(value) > MAX_QUANTITY_LENGTH:
        raise UnitError(f"a quantity of {len(value)} characters is too long to be one (at most "
                        f"{MAX_QUANTITY_LENGTH}); expected {dim.a_name} such as {dim.example}")
    match = _ATOMIC.match(value)
    if match:
        try:
            return float(match.group("num"))
        except ValueError:
            raise UnitError(f"cannot read the number in {value!r}") from None
    plain = _plain_quantity(value, dim)
    if plain is not None:
        return plain
    ureg = _registry()
    try:
        quantity = ureg.Quantity(value.replace("^", "**"))
    except Exception as exc:  # pint raises several unrelated exception types
        raise UnitError(f"cannot read {value!r} as {dim.a_name} ({exc})") from None
    if not hasattr(quantity, "to"):
        raise UnitError(f"cannot read {value!r} as {dim.a_name}")
    if quantity.dimensionless and dim.name not in ("angle",):
        if not bare_allowed:
            raise UnitError(
                f"{value!r} has no unit; write the {dim.name.replace('_', ' ')} with a unit, e.g. {dim.example}"
            )
        return float(quantity.magnitude)
    try:
        si = quantity.to(dim.si_unit).magnitude
    except Exception:
        # An energy-per-time chirp rate (e.g. eV/fs) is d(hbar omega)/dt.
        if dim.name == "chirp_rate":
            try:
                return float(quantity.to("J/s").magnitude / HARTREE_J * AU_TIME_S)
            except Exception:
                pass
        raise UnitError(
            f"{value!r} is not {dim.a_name} (expected something like {dim.example})"
        ) from None
    return float(si) / dim.au_in_si


def _as_float(value) -> float:
    """A Python number as a float, refusing integers beyond the float range."""
    try:
        return float(value)
    except OverflowError:
        raise UnitError(f"too large: {_shown(value)}, beyond the range of floating-point numbers") from None


def _shown(value, limit: int = 40) -> str:
    """``repr(value)`` cut to ``limit`` characters, for messages."""
    if isinstance(value, int) and value.bit_length() > 128:  # repr of a huge int is slow, or refused
        return f"an integer of about {int(value.bit_length() * 0.30103) + 1} digits"
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def from_atomic(value: float, dimension: str, unit: str) -> float:
    """Convert a value in atomic units of ``dimension`` to ``unit`` (a pint expression)."""
    dim = DIMENSIONS[dimension]
    ureg = _registry()
    return float(ureg.Quantity(value * dim.au_in_si, dim.si_unit).to(unit).magnitude)


def ev_to_au(energy_ev: float) -> float:
    """Energy in eV to Hartree."""
    return energy_ev / HARTREE_EV


def au_to_ev(energy_au):
    """Energy in Hartree to eV (works on arrays)."""
    return energy_au * HARTREE_EV


def fs_to_au(time_fs: float) -> float:
    """Time in femtoseconds to atomic units of time."""
    return time_fs * 1e-15 / AU_TIME_S


def au_to_fs(time_au):
    """Time in atomic units to femtoseconds (works on arrays)."""
    return time_au * AU_TIME_S * 1e15


def nm_to_omega(wavelength_nm: float) -> float:
    """Vacuum wavelength in nm to angular frequency (= photon energy) in a.u."""
    return 2 * math.pi * CODATA.c / (wavelength_nm * 1e-9) * AU_TIME_S


def omega_to_nm(omega_au):
    """Angular frequency in a.u. to vacuum wavelength in nm."""
    return 2 * math.pi * CODATA.c / (omega_au / AU_TIME_S) * 1e9


def intensity_to_field(intensity_w_cm2: float) -> float:
    """Cycle-averaged intensity in W/cm^2 to peak field amplitude in a.u.

    Uses ``I = c eps0 E0^2 / 2`` for a linearly polarised field.
    """
    return math.sqrt(intensity_w_cm2 / AU_INTENSITY_W_CM2)


def field_to_intensity(field_au: float) -> float:
    """Peak field amplitude in a.u. to cycle-averaged intensity in W/cm^2."""
    return field_au**2 * AU_INTENSITY_W_CM2


def optical_period(omega_au: float) -> float:
    """Optical period 2 pi / omega in a.u. of time."""
    return 2 * math.pi / omega_au
