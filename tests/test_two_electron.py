"""The one-dimensional two-electron atom: its input, its states on the 2-D Fourier grid
and the ionization potentials of atom and ion.

References:

* the standard 1-D helium model (Z = 2, both softenings 1 bohr) has a ground state near
  -2.238 Hartree, and its one-electron ion near -1.483 Hartree (values from memory for
  this model, 4 digits: good to about 5e-4);
* an independent solution written here: fourth-order finite differences on a box with
  hard walls, scipy.sparse + eigsh (shift-invert), Richardson-extrapolated from two
  spacings. It shares no code with tdse1d (which works on a periodic Fourier grid,
  LOBPCG with FFT products).
"""

import json

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.sparse.linalg import eigsh

from tdse1d.api import single_run as api
from tdse1d.input.schema import parse_input
from tdse1d.input.spec import InputError
from tdse1d.physics.grid import Grid
from tdse1d.physics.states_2d import pair_states
from tdse1d.physics.two_electron import TwoElectronAtom

#: the issue's target for the ground-state energy at the default grid (Hartree)
TARGET = 1e-3
#: values from memory for the standard model (4 digits, so within about 5e-4 of the
#: true ones; the TARGET band holds that and the grid's error)
MEMORY_ATOM = -2.238
MEMORY_ION = -1.483

# ------------------------------------------------------------------ independent solver

#: box half-width (bohr): the ground state's amplitude falls as exp(-sqrt(2 Ip) r),
#: Ip ~ 0.75, to 5e-6 of its peak at the wall: an energy shift of order 1e-10
FD_BOX = 10.0
FD_SPACINGS = (0.25, 0.2)


def _fd_laplacian_1d(n, dx):
    """Fourth-order central second derivative, hard walls (Abramowitz and Stegun 25.3.24)."""
    w = np.array([-1 / 12, 4 / 3, -5 / 2, 4 / 3, -1 / 12]) / dx**2
    return sp.diags([np.full(n - abs(o), w[o + 2]) for o in range(-2, 3)], list(range(-2, 3)))


def fd_levels(dx, charge=2.0, a=1.0, b=1.0, repulsion=True, k=4):
    """Lowest ``k`` levels of the 2-D model, with their exchange parity (+1 or -1)."""
    x = np.arange(-FD_BOX, FD_BOX + dx / 2, dx)[1:-1]
    n = len(x)
    t = -0.5 * _fd_laplacian_1d(n, dx)
    one = sp.identity(n)
    x1, x2 = np.meshgrid(x, x, indexing="ij")
    v = -charge / np.sqrt(x1**2 + a * a) - charge / np.sqrt(x2**2 + a * a)
    if repulsion:
        v = v + 1 / np.sqrt((x1 - x2) ** 2 + b * b)
    h = (sp.kron(t, one) + sp.kron(one, t) + sp.diags(v.ravel())).tocsc()
    e, vec = eigsh(h, k=k, sigma=-4.0, which="LM")
    order = np.argsort(e)
    e, vec = e[order], vec[:, order]
    parity = np.array([np.sign(u @ u.reshape(n, n).T.ravel()) for u in vec.T])
    return e, parity


def fd_ion(dx, charge=2.0, a=1.0):
    x = np.arange(-FD_BOX, FD_BOX + dx / 2, dx)[1:-1]
    h = -0.5 * _fd_laplacian_1d(len(x), dx) + sp.diags(-charge / np.sqrt(x**2 + a * a))
    return float(eigsh(h.tocsc(), k=1, sigma=-3.0, which="LM")[0][0])


def richardson(values):
    """Fourth-order extrapolation from the two FD_SPACINGS, and its error estimate."""
    (h1, h2), (e1, e2) = FD_SPACINGS, values
    r4 = (h1 / h2) ** 4
    extrapolated = (r4 * e2 - e1) / (r4 - 1)
    return extrapolated, abs(e2 - extrapolated)


@pytest.fixture(scope="module")
def reference():
    levels = [fd_levels(dx) for dx in FD_SPACINGS]
    singlet = richardson([e[p > 0][0] for e, p in levels])
    triplet = richardson([e[p < 0][0] for e, p in levels])
    ion = richardson([fd_ion(dx) for dx in FD_SPACINGS])
    return {"singlet": singlet, "triplet": triplet, "ion": ion}


def test_the_reference_is_itself_converged(reference):
    # the finite-difference reference must be well inside the band it is used to test
    for name, (value, error) in reference.items():
        assert error < 0.1 * TARGET, (name, value, error)
    # and it agrees with the values remembered for the model
    assert abs(reference["singlet"][0] - MEMORY_ATOM) < TARGET
    assert abs(reference["ion"][0] - MEMORY_ION) < TARGET


# ------------------------------------------------------------------ tdse1d's states

INPUT = {"atom": {"model": "two-electron", "charge": 2, "softening": 1.0, "repulsion_softening": 1.0},
         "grid": {"points": 64}}


def _states(atom_keys=None, count=None):
    raw = json.loads(json.dumps(INPUT))
    raw["atom"].update(atom_keys or {})
    return api.find_states(parse_input(raw), count=count)


@pytest.fixture(scope="module")
def helium():
    return _states()


def test_ground_state_and_ion_against_the_independent_solution(helium, reference):
    # the default spacing (no pulse: the coarsest, 0.4 bohr) on a 64-point axis
    p = helium.problem
    assert p.grid.spacing == pytest.approx(0.4)
    e_atom, e_ion = helium.states.energies[0], p.ion_energy
    assert abs(e_atom - reference["singlet"][0]) < TARGET
    assert abs(e_ion - reference["ion"][0]) < TARGET
    assert abs(e_atom - MEMORY_ATOM) < TARGET and abs(e_ion - MEMORY_ION) < TARGET
    # ionization potentials reported: E_ion - E_atom and -E_ion (sums of two energies
    # each within TARGET)
    out = helium.to_json()
    assert abs(out["ionization_potential"] - (reference["ion"][0] - reference["singlet"][0])) < 2 * TARGET
    assert abs(out["ion_ionization_potential"] + reference["ion"][0]) < TARGET
    assert out["energies"][0] == e_atom and out["spin"] == "singlet" and helium.states.converged


@pytest.mark.parametrize("keys, why", [
    ({"repulsion_softening": 2.0}, "a wrong electron-electron softening"),
    ({"repulsion_softening": 0.5}, "a wrong electron-electron softening"),
    ({"repulsion_softening": 1e3}, "(almost) no repulsion: 1/sqrt(d^2 + 1e6) is 1e-3 everywhere"),
    ({"softening": 1.4}, "a wrong electron-nucleus softening"),
])
def test_a_wrong_model_fails_the_check(keys, why, reference):
    # null cases: the check of the test above must reject these models
    e = _states(keys, count=1).states.energies[0]
    assert abs(e - reference["singlet"][0]) > 10 * TARGET, why


def test_no_repulsion_fails_in_the_independent_solver_too(reference):
    e, _ = fd_levels(0.25, repulsion=False, k=1)
    assert abs(e[0] - reference["singlet"][0]) > 10 * TARGET
    # and gives twice the ion's energy (independent electrons), to the FD error
    assert abs(e[0] - 2 * fd_ion(0.25)) < 1e-8


def test_triplet_is_the_lowest_antisymmetric_state(reference):
    triplet = _states({"spin": "triplet"}, count=1)
    assert abs(triplet.states.energies[0] - reference["triplet"][0]) < TARGET
    # null: the triplet is not the singlet ground state (the symmetry was imposed)
    assert abs(triplet.states.energies[0] - reference["singlet"][0]) > 10 * TARGET


@pytest.mark.parametrize("spin, sign", [("singlet", 1), ("triplet", -1)])
def test_exchange_symmetry(spin, sign):
    states = pair_states(Grid(48, 0.5), TwoElectronAtom(2.0, 1.0, 1.0, spin), count=2)
    psi = states.wavefunctions
    assert states.exchange_sign == sign
    assert np.max(np.abs(psi - sign * psi.transpose(0, 2, 1))) < 1e-10 * np.max(np.abs(psi))
    # null: the other symmetry is violated by the whole amplitude
    assert np.max(np.abs(psi + sign * psi.transpose(0, 2, 1))) > 0.5 * np.max(np.abs(psi))
    assert np.allclose(np.sum(psi**2, axis=(1, 2)) * 0.5**2, 1.0)


def test_analytic_gradient_against_differences():
    atom = TwoElectronAtom(2.0, 1.0, 0.7)
    x1, x2 = np.meshgrid(np.linspace(-3, 3, 13), np.linspace(-2, 4, 13), indexing="ij")
    h = 1e-6
    g1, g2 = atom.gradient(x1, x2)
    assert np.allclose(g1, (atom.value(x1 + h, x2) - atom.value(x1 - h, x2)) / (2 * h), atol=1e-8)
    assert np.allclose(g2, (atom.value(x1, x2 + h) - atom.value(x1, x2 - h)) / (2 * h), atol=1e-8)
    # the force along x1 + x2 has no repulsion in it (Newton's third law)
    assert np.allclose(atom.field_gradient(x1, x2), g1 + g2, atol=1e-14)


# ------------------------------------------------------------------ input contract

def test_input_contract():
    atom = parse_input({"atom": {"model": "two-electron"}}).atom
    assert (atom.charge, atom.softening, atom.repulsion_softening, atom.spin) == (2.0, 1.0, 1.0, "singlet")
    with pytest.raises(InputError, match="atom.spin"):
        parse_input({"atom": {"model": "two-electron", "spin": "quartet"}})
    with pytest.raises(InputError, match="belongs to the two-electron model"):
        parse_input({"atom": {"softening": 1.0, "repulsion_softening": 1.0}})
    with pytest.raises(InputError, match="belongs to the soft-core model"):
        parse_input({"atom": {"model": "two-electron", "ionization_potential": 0.9}})
    with pytest.raises(InputError, match="atom.repulsion_softening"):
        parse_input({"atom": {"model": "two-electron", "repulsion_softening": "1 eV"}})


def test_states_command_json(tmp_path, capsys):
    from tdse1d.cli import program as cli

    path = tmp_path / "he.toml"
    path.write_text('[atom]\nmodel = "two-electron"\n[grid]\npoints = 64\n')
    assert cli.main(["states", str(path), "--json", "--count", "2"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert len(out["energies"]) == 2 and out["energies"][0] < out["energies"][1] < out["ion_energies"][0]
    assert abs(out["energies"][0] - MEMORY_ATOM) < TARGET
    assert cli.main(["states", str(path)]) == 0
    text = capsys.readouterr().out
    assert "64 x 64 points" in text and "ionization potential of the atom" in text
