"""The common units are read without pint; they must agree with pint (an independent
unit library) to round-off: each is one product by an exact SI factor, so the two
readings differ by at most one rounding of the conversion (tolerance 2 ulp, set from
that argument)."""

import math
import sys
import subprocess

import pytest

from tdse1d import units
from tdse1d.units import DIMENSIONS, _PLAIN_UNITS, _plain_quantity

_CASES = [(dim, unit) for dim, table in _PLAIN_UNITS.items() for unit in table]


@pytest.mark.parametrize("dim,unit", _CASES)
def test_plain_units_agree_with_pint(dim, unit):
    d = DIMENSIONS[dim]
    for number in ("800", "1.6e14", "15.76", ".25", "-3", "2E-3"):
        text = f"{number} {unit}"
        fast = _plain_quantity(text, d)
        pint_text = text.replace("^", "**").replace("µ", "u").replace("μ", "u")
        slow = float(units._registry().Quantity(pint_text).to(d.si_unit).magnitude) / d.au_in_si
        assert math.isclose(fast, slow, rel_tol=4.5e-16, abs_tol=0.0), text


def test_a_unit_of_another_dimension_is_refused():
    # null case: the fast table is per dimension, so a time is not a length
    assert _plain_quantity("800 fs", DIMENSIONS["length"]) is None
    with pytest.raises(units.UnitError):
        units.to_atomic("800 fs", "length")


def test_reading_the_shipped_units_does_not_import_pint():
    code = ("import sys; from tdse1d import units; "
            "[units.to_atomic(v, d) for v, d in (('800 nm', 'length'), ('1.6e14 W/cm^2', 'intensity'), "
            "('15.76 eV', 'energy'), ('2 fs', 'time'))]; print('pint' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False"
    # and the null case: an unusual unit does go to pint
    code = "import sys; from tdse1d import units; units.to_atomic('1 furlong', 'length'); print('pint' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "True"


@pytest.mark.parametrize("text, dimension", [("1000 bohr", "length"), ("0.25 a0", "length"),
                                             ("2.5 hartree", "energy"), ("-0.5 Ha", "energy")])
def test_the_atomic_unit_by_name_is_exact(text, dimension):
    """A bohr is the atomic unit of length and a hartree that of energy by definition:
    the number itself, to the bit, whichever CODATA edition pint carries (its 2018 and
    2022 Bohr radii differ by 6.8e-10 relative, which put "1000 bohr" above a maximum of
    1000 bohr on one installation)."""
    number = float(text.split()[0])
    assert units.to_atomic(text, dimension) == number
    # null: a unit that is not the atomic one is converted (1 angstrom is 1.89 bohr)
    assert units.to_atomic("1000 angstrom", "length") != 1000.0
