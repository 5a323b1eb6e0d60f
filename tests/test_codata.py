"""The CODATA values written out in tdse1d.units against scipy.constants (CODATA through
scipy, the project's outside reference for constants).

The constants are written out so that a run need not import scipy.constants (its
start-up cost); this test is what keeps them the CODATA values: equality to the last
bit, so a scipy carrying a newer CODATA adjustment fails here instead of moving results
silently.
"""

import scipy.constants as sc

from tdse1d import units
from tdse1d.units import CODATA, CODATA_NAMES


def _scipy_value(name):
    if name in sc.physical_constants:
        return sc.physical_constants[name][0]
    return getattr(sc, name)


def test_every_written_constant_is_scipy_codata_to_the_bit():
    names = [n for n in vars(CODATA) if not n.startswith("_")]
    assert sorted(names) == sorted(CODATA_NAMES)
    for attribute, name in CODATA_NAMES.items():
        assert getattr(CODATA, attribute) == _scipy_value(name), (attribute, name)


def test_derived_constants_as_from_scipy():
    # the derived intensity unit, computed from scipy's constants the way units.py does
    field = sc.physical_constants["atomic unit of electric field"][0]
    assert units.AU_INTENSITY_W_M2 == 0.5 * sc.c * sc.epsilon_0 * field**2
    assert units.SPEED_OF_LIGHT_AU == 1.0 / sc.physical_constants["fine-structure constant"][0]
    # the atomic unit of intensity is 3.51e16 W/cm^2 (common practice, e.g. the module docstring)
    assert abs(units.AU_INTENSITY_W_CM2 / 3.50944e16 - 1) < 1e-5


def test_a_wrong_constant_would_fail():
    # the null case: a value off in its last digit is not equal to scipy's
    assert CODATA.bohr_m * (1 + 1e-15) != _scipy_value("Bohr radius")


def test_units_does_not_import_scipy_constants():
    import subprocess
    import sys

    code = "import sys, tdse1d.units; print('scipy.constants' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
