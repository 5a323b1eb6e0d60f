"""Points of a scan on one atom and one grid share the softening fit and the bound
states inside a process (computed once), read-only so that no run can change them."""

import numpy as np
import pytest

from tdse1d.input.problem import build_problem
from tdse1d.input.schema import load_input

BASE = """
[atom]
ionization_potential = "15.76 eV"
[[laser]]
wavelength = "800 nm"
peak_intensity = "{intensity} W/cm^2"
cycles = 1
[grid]
points = {points}
spacing = 0.2
[propagation]
time_step = 0.1
[output]
snapshots = 0
"""


def _problem(intensity=1e14, points=512):
    return build_problem(load_input("p.toml", [], text=BASE.format(intensity=intensity, points=points)))


def test_points_on_one_grid_share_their_states():
    a, b = _problem(1e14), _problem(1.2e14)
    assert b.states is a.states
    assert a.potential == b.potential
    with pytest.raises(ValueError):
        a.states.wavefunctions[0, 0] = 1.0  # read-only: shared
    # null case: another grid gets its own states
    c = _problem(1e14, points=640)
    assert c.states is not a.states
    assert np.isclose(c.states.energies[0], a.states.energies[0], atol=1e-6)
