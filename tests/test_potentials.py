"""Model potentials refuse parameters outside their domain when they are built, naming
the parameter, and each model's own [atom] keys are the ones the input reader checks."""

import math

import pytest

from tdse1d.input.spec import InputError
from tdse1d.input.schema import parse_input
from tdse1d.physics.potentials import POTENTIALS, Centre, HarmonicOscillator, PoschlTeller, SoftCore, model_keys


@pytest.mark.parametrize(
    "build, name",
    [
        (lambda: Centre(0.0, 1.0, -1.0), "softening"),
        (lambda: Centre(0.0, 1.0, 0.0), "softening"),
        (lambda: Centre(0.0, 1.0, math.nan), "softening"),
        (lambda: Centre(math.inf, 1.0, 1.0), "position"),
        (lambda: Centre(0.0, math.nan, 1.0), "charge"),
        (lambda: SoftCore(()), "centres"),
        (lambda: PoschlTeller(-2.0), "depth_parameter"),
        (lambda: PoschlTeller(0.0), "depth_parameter"),
        (lambda: HarmonicOscillator(-1.0), "frequency"),
        (lambda: HarmonicOscillator(math.inf), "frequency"),
    ],
)
def test_constructor_refuses_parameter_out_of_domain(build, name):
    with pytest.raises(ValueError, match=name):
        build()


def test_constructors_accept_sound_parameters():
    # the null case of the test above: the same constructors with sound numbers
    assert SoftCore((Centre(-1.0, 1.0, 1.4), Centre(1.0, 0.5, 0.8))).total_charge == 1.5
    assert PoschlTeller(2.0).exact_levels().tolist() == [-2.0, -0.5]
    assert HarmonicOscillator(1.0).value(2.0) == 2.0
    assert SoftCore((Centre(0.0, 1.0, 1.0),)).with_softening(2.0).centres[0].softening == 2.0
    with pytest.raises(ValueError, match="softening"):
        SoftCore((Centre(0.0, 1.0, 1.0),)).with_softening(-2.0)


def test_every_model_declares_its_keys_and_a_shared_key_means_one_thing():
    keys = model_keys()
    assert set(keys) == set(POTENTIALS)
    # a key two models own (charge, softening: the soft-core and the two-electron atom)
    # must be read the same way by both: same kind, same unit dimension
    declared = {}
    for cls in POTENTIALS.values():
        for p in cls.parameters:
            declared.setdefault(p.name, set()).add((p.kind, p.dimension))
    assert all(len(kinds) == 1 for kinds in declared.values()), declared


ATOMS = {
    "soft-core": {"softening": 1.4},
    "poschl-teller": {"depth_parameter": 2.0},
    "harmonic": {"trap_frequency": 1.0},
    "two-electron": {"repulsion_softening": 1.0},
}


@pytest.mark.parametrize("model", sorted(ATOMS))
def test_keys_of_another_model_are_refused(model):
    atom = {"model": model, **ATOMS[model]}
    parse_input({"atom": atom})  # its own keys are read
    for other, table in ATOMS.items():
        if other == model:
            continue
        (key, value), = table.items()
        if key in model_keys()[model]:  # shared (softening: soft-core and two-electron)
            continue
        with pytest.raises(InputError, match=f"atom.{key}.*{other}.*{model}"):
            parse_input({"atom": {**atom, key: value}})
