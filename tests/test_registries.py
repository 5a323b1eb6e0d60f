"""The registered tables reach the input: a splitting scheme chosen by name, each
model's own keys, and the per-step observables declared once.

The physics of each scheme (its order) is measured in tests/test_propagate.py; here the
checks are that the name in the input is the scheme the run uses, that the default
for ``order`` is the scheme used before the key existed, and that wrong combinations
are refused in one line naming the key.
"""

import numpy as np
import pytest
from conftest import small_input

from tdse1d.input.problem import build_problem, check_absorber
from tdse1d.input.schema import parse_input
from tdse1d.input.spec import InputError, tomllib
from tdse1d.physics.propagation import SCHEMES
from tdse1d.runs.runner import simulate

TINY = small_input(cycles=1, points=128, absorber_width=8.0, after_pulse="0.1 fs", propagation="{propagation}",
                   photoelectrons="none")


def config(propagation=""):
    return parse_input(tomllib.loads(TINY.format(propagation=propagation)))


@pytest.mark.parametrize("order, name", [(2, "strang"), (4, "yoshida4")])
def test_order_alone_keeps_the_scheme_it_always_meant(order, name):
    prop = config(f"order = {order}").propagation
    assert prop.scheme is None and prop.scheme_name == name


@pytest.mark.parametrize("name", sorted(SCHEMES))
def test_every_registered_scheme_can_be_named(name):
    prop = config(f'scheme = "{name}"').propagation
    assert prop.scheme_name == name and prop.order == SCHEMES[name].order


def test_unknown_scheme_is_refused_with_the_table():
    with pytest.raises(InputError, match="propagation.scheme") as info:
        config('scheme = "leapfrog"')
    assert all(name in str(info.value) for name in SCHEMES)


def test_scheme_and_order_that_disagree_are_refused():
    with pytest.raises(InputError, match="propagation.order.*suzuki4.*order 4"):
        config('scheme = "suzuki4"\norder = 2')
    config('scheme = "suzuki4"\norder = 4')  # agreeing: accepted


def _final_state(propagation):
    # an absorber the run would accept (check_absorber): with the automatic 40-bohr layers
    # in this +-25.6 bohr box the whole state is absorbed and every scheme ends at ~1e-25
    problem = build_problem(config(propagation))
    check_absorber(problem)
    return simulate(problem, fft_effort="FFTW_ESTIMATE").final_state


def test_the_named_scheme_is_the_one_that_runs():
    # naming the default scheme of order 4 gives the order-4 run bit for bit, and
    # naming another fourth-order scheme gives a different final state: the two
    # compositions differ at O(dt^4), above the 1e-12 round-off of a run's unitary
    # steps (the band of tests/test_regression.py). The null case, the key ignored,
    # gives the same bits and fails the second check. (A first guess of 1e-10 for the
    # lower bound, with no argument behind it, was above the 5e-11 measured here; the
    # round-off argument replaces it.)
    by_order = _final_state("order = 4")
    by_name = _final_state('scheme = "yoshida4"')
    other = _final_state('scheme = "suzuki4"')
    assert np.array_equal(by_order, by_name)
    difference = float(np.max(np.abs(other - by_order)))
    assert difference > 1e-12, difference


def test_a_key_of_another_envelope_is_refused_naming_it():
    base = {"atom": {"softening": 1.4},
            "laser": [{"wavelength": "800 nm", "peak_intensity": "1e14 W/cm^2", "cycles": 6}]}
    parse_input(base)  # null case: without the key it is read
    flat = {**base, "laser": [{**base["laser"][0], "envelope": "flat-top", "ramp_cycles": 2}]}
    assert parse_input(flat).lasers[0].ramp_cycles == 2  # its own envelope reads it
    sin2 = {**base, "laser": [{**base["laser"][0], "ramp_cycles": 2}]}
    with pytest.raises(InputError, match="laser.0.ramp_cycles.*flat-top envelope.*sin2"):
        parse_input(sin2)


def test_a_key_of_another_absorber_is_refused_naming_it():
    base = {"atom": {"softening": 1.4}}
    assert parse_input({**base, "absorber": {"type": "complex-potential", "strength": 0.5}}).absorber.strength == 0.5
    assert parse_input({**base, "absorber": {"exponent": 0.25}}).absorber.exponent == 0.25  # the mask's own
    with pytest.raises(InputError, match="absorber.strength.*complex-potential absorber.*mask"):
        parse_input({**base, "absorber": {"strength": 0.5}})
    with pytest.raises(InputError, match="absorber.exponent.*mask absorber.*none"):
        parse_input({**base, "absorber": {"type": "none", "exponent": 0.25}})
