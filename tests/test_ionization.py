"""The ionization probability: converged in the box, against a large-box count of all
bound states, with a null that ignores the Rydberg states and must fail."""

import numpy as np
import pytest
from scipy.special import zeta

from tdse1d.input.schema import parse_input
from tdse1d.physics.grid import Grid
from tdse1d.physics.ionization import _parity, ionization
from tdse1d.physics.potentials import Centre, SoftCore
from tdse1d.input.problem import build_problem
from tdse1d.runs.runner import simulate
from tdse1d.physics.states import bound_states

SQRT2 = 2**0.5

# The target of the box-convergence check, set before any run: boxes of +-L, +-2L and
# +-4L give P_ion within 2 % of each other and of the count of all bound states on a
# large box. 2 % is the convergence asked of P_ion; the Fourier grid's own error at
# this spacing is far smaller (bound-state energies converge exponentially, see
# test_states.py), so a failure is the box, not the grid.
RELATIVE = 0.02
# +-120, +-240, +-480 bohr at 0.4 bohr: the smallest box holds the pulse's quiver
# excursion (4 bohr) and the low states, but not the Rydberg states above nu ~ 5
# (classical radius 2 nu^2 = 50 bohr beyond its 100-bohr inner region with tails),
# whose electrons drift into the absorber in the 500 a.u. after the pulse.
BOXES = (600, 1200, 2400)


def _case(points):
    return parse_input({
        "atom": {"softening": SQRT2},
        "laser": [{"wavelength": "400 nm", "peak_intensity": "1e14 W/cm^2", "envelope": "sin2", "cycles": 4}],
        "grid": {"points": points, "spacing": 0.4},
        "propagation": {"gauge": "length", "order": 2, "time_step": 0.1, "after_pulse": "500 au"},
        "absorber": {"type": "mask", "width": 20.0},
        "output": {"snapshots": 0},
        "spectra": {"photoelectrons": "none"},
    })


@pytest.fixture(scope="module")
def runs():
    return {n: simulate(build_problem(_case(n)), fft_effort="FFTW_ESTIMATE") for n in BOXES}


def _all_bound_count(result):
    """The reference: 1 - every E < 0 grid state's population, at the end of the run."""
    return float(1.0 - result.bound_population[-1].sum())


def _spread(values, reference):
    values = np.asarray(values)
    return max(np.ptp(values) / reference, np.max(np.abs(values - reference)) / reference)


def test_ionization_converges_with_the_box(runs):
    reference = _all_bound_count(runs[BOXES[-1]])
    values = [runs[n].ionization_probability for n in BOXES]
    assert _spread(values, reference) < RELATIVE, (values, reference)
    for n in BOXES:
        est = runs[n].ionization
        # the band covers the estimate's error
        assert est.lower <= reference <= est.upper, (n, est, reference)
        assert est.states_found > est.states_held > 5
        assert est.probability == pytest.approx(1 - est.held - est.unheld, abs=1e-12)
    # the smallest box really does lose Rydberg population (the physics this tests):
    # its E < 0 states hold less at the end of the run than at the end of the field
    small = runs[BOXES[0]].ionization
    assert small.edge > 0.03 * small.probability
    assert small.edge_loss_rate > 0


def test_null_without_rydberg_states_fails_the_same_check(runs):
    # counting only the states the box holds (the Rydberg part ignored) is box
    # dependent: the same 2 % check must detect it
    reference = _all_bound_count(runs[BOXES[-1]])
    values = [1.0 - runs[n].ionization.held for n in BOXES]
    assert _spread(values, reference) > RELATIVE, (values, reference)


def test_rydberg_series_of_the_soft_core_atom():
    # The tail estimate rests on the Rydberg law E = -1/(2 nu^2) with a quantum defect
    # that is constant within a parity: consecutive levels of one parity differ by 1
    # in nu (1-D Coulomb problem: Loudon, Am. J. Phys. 27, 649 (1959)). Checked on
    # the states the box holds (nu = 4 ... 9, radius 2 nu^2 < 200 bohr of 300).
    grid = Grid(1500, 0.4)
    states = bound_states(grid, SoftCore((Centre(0.0, 1.0, SQRT2),)))
    nu = 1 / np.sqrt(-2 * states.energies)
    parity = _parity(states.wavefunctions)
    for sign in (1, -1):
        mine = nu[(parity == sign) & (nu > 4) & (nu < 9)]
        assert mine.size >= 4
        assert np.allclose(np.diff(mine), 1.0, rtol=0, atol=0.02), mine


def test_tail_of_a_pure_rydberg_distribution():
    # populations p = D / nu^3 on an exact Rydberg series: the tail above the last
    # held level is D zeta(3, nu_top + 1) per parity (Hurwitz zeta), here checked
    # against the direct sum of the series to nu = 10^5
    grid = Grid(64, 1.0)
    nu = np.concatenate([np.arange(1, 9) + 0.3, np.arange(1, 9) + 0.8])
    order = np.argsort(nu)
    nu = nu[order]
    energies = -0.5 / nu**2
    parity = np.where(np.isclose(nu % 1, 0.3), 1.0, -1.0)
    # wavefunctions: compact even/odd shapes so the parity and the "held" test apply
    x = grid.x
    wave = np.array([np.exp(-x**2) if s > 0 else x * np.exp(-x**2) for s in parity])
    wave /= np.sqrt(np.sum(wave**2, axis=1, keepdims=True) * grid.spacing)
    density = {1.0: 0.4, -1.0: 0.7}
    pops = np.array([density[s] / v**3 for s, v in zip(parity, nu)])
    est = ionization(energies, wave, grid, 5.0, np.array([0.0, 1.0]), np.vstack([pops, pops]), 0.0, 0.0)
    direct = sum(density[s] * np.sum(1.0 / (np.arange(1, 100000) + top) ** 3)
                 for s, top in ((1.0, 8.3), (-1.0, 8.8)))
    assert est.beyond == pytest.approx(direct, rel=1e-6)
    assert est.beyond == pytest.approx(0.4 * zeta(3, 9.3) + 0.7 * zeta(3, 9.8), rel=1e-12)
    assert est.held == pytest.approx(pops.sum(), rel=1e-12)
    assert est.edge == 0.0
    # the band of an exact series is its value (no spread of D, no loss)
    assert est.lower == pytest.approx(est.probability, abs=1e-12)
    assert est.upper == pytest.approx(est.probability, abs=1e-12)


def test_report_footnote_says_what_the_box_cannot_hold(tmp_path):
    # the report's footnote names the unheld population and flags a run that is not
    # converged; a file without the pieces gets a plain note instead of a KeyError
    import h5py

    from tdse1d.io.analysis_file import ionization_note

    with h5py.File(tmp_path / "r.h5", "w") as f:
        g = f.create_group("ionization")
        g["probability"] = 0.16
        g["probability_band"] = [0.10, 0.165]
        g["bound_unheld"], g["bound_edge"], g["bound_beyond"] = 0.0113, 0.0104, 0.0009
        g.attrs.update(states_found=17, states_held=8, states_complete=True, converged=False)
        note = ionization_note(g)
        assert "1.13e-02" in note and "cannot hold" in note and "17 bound states" in note
        assert "NOT CONVERGED" in note
        g.attrs["converged"] = True
        assert "NOT CONVERGED" not in ionization_note(g)
        assert "cannot hold" not in ionization_note(f.create_group("old"))
