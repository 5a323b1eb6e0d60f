"""Unit conversions against CODATA (scipy.constants) and the unit parser."""

import math

import numpy as np
import pytest
import scipy.constants as sc

from tdse1d import units
from tdse1d.semiclassical.estimates import pulse_estimate
from tdse1d.units import UnitError, to_atomic

E_H = sc.physical_constants["Hartree energy"][0]
A0 = sc.physical_constants["Bohr radius"][0]
T_AU = sc.physical_constants["atomic unit of time"][0]
F_AU = sc.physical_constants["atomic unit of electric field"][0]


def test_atomic_unit_of_intensity():
    # cycle-averaged intensity c eps0 E0^2 / 2 of a 1 a.u. field: 3.51e16 W/cm^2
    expected = 0.5 * sc.c * sc.epsilon_0 * F_AU**2 / 1e4
    assert units.AU_INTENSITY_W_CM2 == pytest.approx(expected, rel=1e-12)
    assert units.AU_INTENSITY_W_CM2 == pytest.approx(3.51e16, rel=1e-3)
    assert units.field_to_intensity(1.0) == pytest.approx(expected, rel=1e-12)
    assert units.intensity_to_field(expected) == pytest.approx(1.0, rel=1e-12)


def test_atomic_units_from_independent_constants():
    # the atomic units rebuilt from hbar, m_e, e, eps0 rather than read from the table
    bohr = 4 * math.pi * sc.epsilon_0 * sc.hbar**2 / (sc.m_e * sc.e**2)
    hartree = sc.hbar**2 / (sc.m_e * bohr**2)
    assert units.BOHR_M == pytest.approx(bohr, rel=1e-9)
    assert units.HARTREE_EV == pytest.approx(hartree / sc.e, rel=1e-9)
    assert units.AU_TIME_S == pytest.approx(sc.hbar / hartree, rel=1e-9)
    assert units.AU_FIELD_V_M == pytest.approx(hartree / (sc.e * bohr), rel=1e-9)
    assert units.SPEED_OF_LIGHT_AU == pytest.approx(sc.c * sc.hbar / (hartree * bohr), rel=1e-9)


def test_800nm_photon_is_1_55_eV():
    photon_ev = sc.h * sc.c / 800e-9 / sc.e
    assert photon_ev == pytest.approx(1.55, abs=5e-3)
    assert units.au_to_ev(units.nm_to_omega(800.0)) == pytest.approx(photon_ev, rel=1e-12)
    assert units.omega_to_nm(units.nm_to_omega(800.0)) == pytest.approx(800.0, rel=1e-12)


def test_femtoseconds():
    assert units.fs_to_au(1.0) == pytest.approx(1e-15 / T_AU, rel=1e-12)
    assert units.fs_to_au(1.0) == pytest.approx(41.341, rel=1e-4)
    assert units.au_to_fs(units.fs_to_au(2.5)) == pytest.approx(2.5, rel=1e-12)


def test_optical_period_800nm():
    # 800 nm light has a period lambda / c = 2.67 fs
    period = units.optical_period(units.nm_to_omega(800.0))
    assert units.au_to_fs(period) == pytest.approx(800e-9 / sc.c * 1e15, rel=1e-12)


def test_ponderomotive_rule_of_thumb():
    # Up[eV] = 9.33e-14 I[W/cm^2] lambda^2[um] (common practice, no source)
    for intensity, wavelength_um in [(1e14, 0.8), (1.6e14, 0.8), (8e13, 1.8)]:
        omega = units.nm_to_omega(wavelength_um * 1e3)
        e0 = units.intensity_to_field(intensity)
        est = pulse_estimate(omega, e0, ionization_potential=0.5, bsi_field=0.1)
        rule = 9.33e-14 * intensity * wavelength_um**2
        assert units.au_to_ev(est.ponderomotive_energy) == pytest.approx(rule, rel=2e-3)
        # the exact SI expression e^2 E0^2 / (4 m w^2), E0 from I = c eps0 E0^2 / 2
        e0_si = math.sqrt(2 * intensity * 1e4 / (sc.c * sc.epsilon_0))
        w_si = 2 * math.pi * sc.c / (wavelength_um * 1e-6)
        up_si = sc.e**2 * e0_si**2 / (4 * sc.m_e * w_si**2)
        assert units.au_to_ev(est.ponderomotive_energy) == pytest.approx(up_si / sc.e, rel=1e-9)


@pytest.mark.parametrize(
    "text, dimension, si_value, au_in_si",
    [
        ("800 nm", "length", 800e-9, A0),
        ("1.8 um", "length", 1.8e-6, A0),
        ("10 fs", "time", 10e-15, T_AU),
        ("250 as", "time", 250e-18, T_AU),
        ("15.76 eV", "energy", 15.76 * sc.e, E_H),
        ("5e10 V/m", "electric_field", 5e10, F_AU),
        ("1.6e14 W/cm^2", "intensity", 1.6e18, 0.5 * sc.c * sc.epsilon_0 * F_AU**2),
    ],
)
def test_parser_against_codata(text, dimension, si_value, au_in_si):
    assert to_atomic(text, dimension) == pytest.approx(si_value / au_in_si, rel=1e-9)


def test_parser_intensity_gives_field_squared():
    # a peak intensity in a.u. is E0^2 in a.u.
    e0_si = math.sqrt(2 * 1.6e18 / (sc.c * sc.epsilon_0))
    assert math.sqrt(to_atomic("1.6e14 W/cm^2", "intensity")) == pytest.approx(e0_si / F_AU, rel=1e-9)


@pytest.mark.parametrize("text", ["0.5 au", "0.5 a.u.", " 0.5au ", "5e-1 au"])
def test_parser_atomic_units(text):
    for dimension in ("length", "time", "energy", "intensity"):
        assert to_atomic(text, dimension) == 0.5


def test_parser_bare_numbers():
    assert to_atomic(0.25, "time") == 0.25
    assert to_atomic(3, "length") == 3.0
    with pytest.raises(UnitError, match='"800 nm"'):
        to_atomic(800, "length", bare_allowed=False)
    with pytest.raises(UnitError, match="W/cm"):
        to_atomic(1e14, "intensity", bare_allowed=False)
    with pytest.raises(UnitError, match="no unit"):
        to_atomic("800", "length", bare_allowed=False)


def test_parser_angles_and_chirp():
    assert to_atomic("90 degree", "angle") == pytest.approx(math.pi / 2, rel=1e-12)
    assert to_atomic(0.5, "angle") == 0.5
    assert to_atomic("1e-3 fs^-2", "chirp_rate") == pytest.approx(1e-3 * (T_AU / 1e-15) ** 2, rel=1e-9)
    # an energy sweep rate d(hbar w)/dt
    assert to_atomic("1 eV/fs", "chirp_rate") == pytest.approx(sc.e / E_H * T_AU / 1e-15, rel=1e-9)


@pytest.mark.parametrize(
    "value, dimension",
    [
        ("800 fs", "length"),
        ("10 nm", "time"),
        ("1e14 W", "intensity"),
        ("15.76 eV", "electric_field"),
    ],
)
def test_parser_wrong_dimension(value, dimension):
    with pytest.raises(UnitError, match="is not an? "):
        to_atomic(value, dimension)


@pytest.mark.parametrize("value", ["banana", "800 zorks", "8e au", "800 nm)", "", True, [800], None])
def test_parser_garbage(value):
    with pytest.raises(UnitError):
        to_atomic(value, "length")


def test_from_atomic_round_trip():
    for dimension, unit, value in [("length", "nm", 800.0), ("time", "fs", 10.0), ("energy", "eV", 15.76)]:
        au = to_atomic(f"{value} {unit}", dimension)
        assert units.from_atomic(au, dimension, unit) == pytest.approx(value, rel=1e-12)
    assert np.allclose(units.au_to_ev(np.array([1.0, 2.0])), [units.HARTREE_EV, 2 * units.HARTREE_EV])
