"""Each recipe of DEVELOPERS.md, followed once: a new potential, a new splitting scheme
and a new per-step observable, each registered inside the test (and removed after it)
exactly as the recipe says, then used through the program's own entry points.
"""

import math
from dataclasses import dataclass

import numpy as np
import pytest
from scipy.linalg import eigh_tridiagonal

from tdse1d.input.problem import build_problem
from tdse1d.input.schema import parse_input
from tdse1d.input.spec import InputError, tomllib
from tdse1d.physics import observables as obs_table
from tdse1d.physics.grid import Grid
from tdse1d.physics.potentials import POTENTIALS, HarmonicOscillator, Potential, register_potential
from tdse1d.physics.propagation import SCHEMES, Propagator, SplittingScheme, register_scheme
from tdse1d.physics.pulses import Field
from tdse1d.registry import Parameter
from tdse1d.runs.runner import simulate

from test_propagate import atom, observed_order  # noqa: F401  (atom is a fixture)


# ------------------------------------------------------------------ a new potential


@pytest.fixture
def gaussian_well():
    """The recipe "a new potential": one class, its own keys, registered by name."""

    @register_potential("gaussian-well")
    @dataclass(frozen=True)
    class GaussianWell(Potential):
        """V(x) = -D exp(-x^2 / (2 w^2)): a toy well for the recipe test."""

        depth: float
        width: float
        parameters = (
            Parameter("well_depth", "quantity", 1.0, "depth D (Hartree)", dimension="energy", minimum=0.0),
            Parameter("well_width", "quantity", 1.0, "width w (bohr)", dimension="length", minimum=0.0),
        )

        def value(self, x):
            x = np.asarray(x, dtype=float)
            return -self.depth * np.exp(-x**2 / (2 * self.width**2))

        def gradient(self, x):
            x = np.asarray(x, dtype=float)
            return self.depth * x / self.width**2 * np.exp(-x**2 / (2 * self.width**2))

        @classmethod
        def from_config(cls, atom):
            return cls(atom.well_depth, atom.well_width)

    try:
        yield GaussianWell
    finally:
        del POTENTIALS["gaussian-well"]


WELL = """
[atom]
model = "gaussian-well"
well_depth = "{depth}"
well_width = 1.5
bound_states = 2
{extra}
[[laser]]
wavelength = "800 nm"
peak_intensity = "1e13 W/cm^2"
cycles = 1
[grid]
points = 256
spacing = 0.4
[propagation]
time_step = 0.1
after_pulse = "0.1 fs"
[output]
snapshots = 0
[spectra]
photoelectrons = "none"
"""


def _well(depth="27.211386245988 eV", extra=""):
    return parse_input(tomllib.loads(WELL.format(depth=depth, extra=extra)))


def test_new_potential_reads_its_own_keys_and_runs(gaussian_well):
    cfg = _well()  # 27.211... eV is 1 Hartree (CODATA, through the unit reader)
    assert cfg.atom.well_depth == pytest.approx(1.0, rel=1e-12)
    problem = build_problem(cfg)
    # independent check: the ground level of the same well by a second-order finite
    # difference Hamiltonian (scipy) on a fine grid; its error (dx^2/12) <p^4> / 2 is
    # about 1e-5 Hartree at dx = 0.01 bohr for a level of |E| < 1, so 1e-4 is the band
    dx = 0.01
    x = np.arange(-30, 30, dx)
    v = -np.exp(-x**2 / (2 * 1.5**2))
    e0 = eigh_tridiagonal(1 / dx**2 + v, np.full(len(x) - 1, -0.5 / dx**2), select="i", select_range=(0, 0))[0][0]
    assert problem.states.energies[0] == pytest.approx(e0, abs=1e-4)
    result = simulate(problem, fft_effort="FFTW_ESTIMATE")  # end to end: propagate and analyse
    norm = result.observables.norm
    assert np.all(np.isfinite(norm)) and norm[-1] <= norm[0] + 1e-12


def test_new_potential_keys_are_its_own(gaussian_well):
    # the well's key given to another model is refused naming the well's model; and
    # the null case: the soft-core keys are refused for the well
    with pytest.raises(InputError, match="atom.well_depth.*gaussian-well.*soft-core"):
        parse_input({"atom": {"softening": 1.4, "well_depth": 1.0}})
    with pytest.raises(InputError, match="atom.softening.*soft-core.*gaussian-well"):
        _well(extra="softening = 1.0")
    _well()  # its own keys are read
    with pytest.raises(InputError, match="atom.well_width"):  # and checked against its declaration
        parse_input({"atom": {"model": "gaussian-well", "well_width": -1.0}})


def test_a_fit_for_a_model_that_is_not_fittable_is_refused(gaussian_well):
    assert not gaussian_well.fittable
    with pytest.raises(InputError, match="atom.ionization_potential.*gaussian-well"):
        parse_input({"atom": {"model": "gaussian-well", "ionization_potential": "10 eV"}})


# ------------------------------------------------------------------ a new scheme


@pytest.fixture
def strang_twice():
    """The recipe "a new splitting scheme": a palindromic tuple of weights summing to 1."""

    @register_scheme("strang-twice")
    class StrangTwice(SplittingScheme):
        """Two Strang steps of h/2: second order, a quarter of Strang's error."""

        order = 2
        weights = (0.5, 0.5)

    StrangTwice.check()
    try:
        yield StrangTwice
    finally:
        del SCHEMES["strang-twice"]


def test_new_scheme_is_measured_and_can_be_named(strang_twice, atom):  # noqa: F811
    slope, errors = observed_order(strang_twice, atom)
    assert abs(slope - 2) < 0.3, (slope, errors)  # the band of test_propagate's order test
    cfg = parse_input({"atom": {"softening": 1.4}, "propagation": {"scheme": "strang-twice"}})
    assert cfg.propagation.scheme_name == "strang-twice" and cfg.propagation.order == 2


# ------------------------------------------------------------------ a new observable


@pytest.fixture
def position_square():
    """The recipe "a new per-step observable": one table entry with a measure."""

    def measure(prop):
        d = np.abs(prop.psi) ** 2
        return float(d @ prop.grid.x**2 * prop.grid.spacing)

    obs_table.add_per_step_observable(obs_table.PerStepObservable(
        "position_square", "bohr^2", "<x^2>, the second moment of the position", measure))
    try:
        yield
    finally:
        obs_table.remove_per_step_observable("position_square")


def test_new_observable_is_recorded_every_step(position_square):
    # a displaced ground state of the oscillator w = 1 (a coherent state) keeps its
    # width: <x^2>(t) = x0^2 cos^2 t + 1/(2 w) exactly (any quantum mechanics text).
    # Strang's error in it is of order dt^2 x0^2 / 12 ~ 1e-5 at dt = 0.01: band 1e-4
    grid = Grid(128, 0.2)
    x0 = 1.0
    psi0 = (1 / math.pi) ** 0.25 * np.exp(-((grid.x - x0) ** 2) / 2)
    times = np.linspace(0, 2 * math.pi, 629)
    p = Propagator(grid, HarmonicOscillator(1.0), Field([]), times, fft_effort="FFTW_ESTIMATE")
    p.start(psi0)
    p.advance(p.steps)
    got = p.observables.position_square
    assert np.max(np.abs(got - (x0**2 * np.cos(times) ** 2 + 0.5))) < 1e-4
    assert "position_square" in p.observables.as_dict()  # and in the runner's state
    # the null case: an observable not in the table is no attribute
    obs_table.remove_per_step_observable("position_square")
    try:
        fresh = Propagator(grid, HarmonicOscillator(1.0), Field([]), times, fft_effort="FFTW_ESTIMATE")
        assert not hasattr(fresh.observables, "position_square")
    finally:
        obs_table.add_per_step_observable(obs_table.PerStepObservable(
            "position_square", "bohr^2", "<x^2>", lambda prop: 0.0))


# ------------------------------------------------ a new spectrum shown by report, plot and export


@pytest.fixture(scope="module")
def derived_run(tmp_path_factory):
    """A small run: every registered derived spectrum is written by the same writer."""
    from conftest import small_input

    from tdse1d import api
    from tdse1d.input.schema import load_input

    path = tmp_path_factory.mktemp("derived") / "d.h5"
    api.run(load_input("d.toml", text=small_input(absorber_width=15.0)), path)
    return path


def test_a_registered_derived_spectrum_is_in_file_table_plot_export_and_report(derived_run, tmp_path):
    """The recipe "a new spectrum shown by report, plot and export": the class in
    tdse1d/spectra/ and its module in BUILT_IN are all it takes; each place reads the
    registry. Followed by the shipped ``harmonic_forms``; checked for every registered one."""
    import h5py

    from tdse1d import api
    from tdse1d.io.layout import RESULT_LAYOUT
    from tdse1d.io.layout_check import layout_problems
    from tdse1d.spectra.derived import DERIVED_SPECTRA

    assert "harmonic_forms" in DERIVED_SPECTRA
    declared = {e.path for e in RESULT_LAYOUT}
    report = api.report(derived_run)
    with h5py.File(derived_run, "r") as f:
        assert layout_problems(f) == []
        for name, spectrum in DERIVED_SPECTRA.items():
            columns = (spectrum.axis, *spectrum.columns)
            assert {f"spectra/{name}/{c.name}" for c in columns} <= declared
            assert {f"spectra/{name}@{c.name}" for c in spectrum.readings_declared} <= declared
            g = f[f"spectra/{name}"]
            assert all(g[c.name].attrs["units"] == c.unit for c in columns)
            what = name.replace("_", "-")
            table = api.export(derived_run, what, "au", tmp_path / f"{what}.csv")
            assert [n.split(" [")[0] for n in table.names] == [c.name for c in columns]
            assert np.array_equal(table.column(columns[1].name), g[columns[1].name][()])
            figures = api.plot(derived_run, what, tmp_path / f"{what}.png")
            assert figures.paths and all(p.exists() for p in figures.paths)
            shown = {r.key: r.quantum for r in report.rows}
            for c in spectrum.readings_declared:
                stored = float(g.attrs[c.name])
                assert shown[f"{name}.{c.name}"] == stored or (math.isnan(stored) and math.isnan(shown[f"{name}.{c.name}"]))
