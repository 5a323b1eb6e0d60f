"""Case kinds of the two-electron atom (registered in
:data:`~tdse1d.validation.cases.CASE_KINDS`): its ground-state energies against an
independent solver written here, the gauge invariance of its ionization yields, and
the knee of double ionization.

* ``pair_ground_state``: the atom's and the ion's ground-state energies of the input's
  model at the input's (default) grid against a finite-difference solution written
  here with scipy (fourth-order differences in a box with hard walls, shift-invert
  Lanczos, Richardson-extrapolated from two spacings): it shares no code with tdse1d,
  which works on a periodic Fourier grid with LOBPCG and FFT products.
* ``pair_gauge_invariance``: single and double ionization in the length and the
  velocity gauge at the input's time step and at half of it; the gauges' difference
  must vanish at the splitting's order.
* ``pair_knee``: the double-ionization yield of the run against the sequential
  estimate for the same pulse (:mod:`tdse1d.semiclassical.double_ionization`), at an
  intensity below the saturation of single ionization; beside it, the same run with no
  field scored by the same statistic (the null: it must fail).
"""

from __future__ import annotations

import math

import numpy as np

from .cases import register_case_kind
from .kinds import CaseKind

#: box half-width (bohr) of the finite-difference reference: the atom's outer electron
#: decays as exp(-sqrt(2 Ip1) |x|), Ip1 = 0.755, to 5e-6 of its peak at 10 bohr, which
#: shifts the energy by order 1e-10 Hartree
FD_BOX = 10.0
#: spacings (bohr) of the two finite-difference solutions extrapolated
FD_SPACINGS = (0.25, 0.2)


def _second_derivative(n: int, dx: float):
    """Fourth-order central second derivative with hard walls (Abramowitz and Stegun 25.3.24)."""
    import scipy.sparse as sp

    w = np.array([-1 / 12, 4 / 3, -5 / 2, 4 / 3, -1 / 12]) / dx**2
    return sp.diags([np.full(n - abs(o), w[o + 2]) for o in range(-2, 3)], list(range(-2, 3)))


def finite_difference_energies(charge: float, softening: float, repulsion_softening: float, dx: float):
    """(ground state of the atom, of the ion) (Hartree) by finite differences, spacing ``dx``.

    The atom's lowest level of even exchange symmetry (the singlet) and the ion's lowest
    level, each on the box [-FD_BOX, FD_BOX] with hard walls.
    """
    import scipy.sparse as sp
    from scipy.sparse.linalg import eigsh

    x = np.arange(-FD_BOX, FD_BOX + dx / 2, dx)[1:-1]
    n = x.size
    t = -0.5 * _second_derivative(n, dx)
    nuclear = -charge / np.sqrt(x**2 + softening**2)
    ion = float(eigsh((t + sp.diags(nuclear)).tocsc(), k=1, sigma=-charge * charge, which="LM")[0][0])
    one = sp.identity(n)
    x1, x2 = np.meshgrid(x, x, indexing="ij")
    v = nuclear[:, None] + nuclear[None, :] + 1 / np.sqrt((x1 - x2) ** 2 + repulsion_softening**2)
    h = (sp.kron(t, one) + sp.kron(one, t) + sp.diags(v.ravel())).tocsc()
    e, vec = eigsh(h, k=3, sigma=2 * ion - 1.0, which="LM")
    order = np.argsort(e)
    for i in order:  # the lowest state symmetric under x1 <-> x2
        u = vec[:, i].reshape(n, n)
        if np.sum(u * u.T) > 0:
            return float(e[i]), ion
    raise RuntimeError("no symmetric state among the three lowest")  # pragma: no cover


def extrapolated_energies(charge, softening, repulsion_softening):
    """Richardson's fourth-order extrapolation of :func:`finite_difference_energies` from
    the two :data:`FD_SPACINGS`: ((atom, its error estimate), (ion, its error estimate))."""
    (h1, h2) = FD_SPACINGS
    e1 = finite_difference_energies(charge, softening, repulsion_softening, h1)
    e2 = finite_difference_energies(charge, softening, repulsion_softening, h2)
    r4 = (h1 / h2) ** 4
    out = []
    for a, b in zip(e1, e2):
        value = (r4 * b - a) / (r4 - 1)
        out.append((value, abs(b - value)))
    return tuple(out)


@register_case_kind("pair_ground_state")
class PairGroundState(CaseKind):
    """The two-electron atom's and its ion's ground-state energies against the
    finite-difference solution of this module (see the module docstring)."""

    def run(self):
        from ..api.single_run import find_states

        tol = float(self.case.get("tolerance"))
        found = find_states(self.case.input())
        problem = found.problem
        atom = problem.atom
        (ref_atom, err_atom), (ref_ion, err_ion) = extrapolated_energies(atom.charge, atom.softening,
                                                                          atom.repulsion_softening)
        axis = problem.grid
        src = "finite differences with scipy, written in the case (no tdse1d code), Richardson from 0.25 and 0.2 bohr"
        rows = [self.row(float(found.states.energies[0]), quantity=f"atom's ground state on {axis.points}^2 points "
                         f"of {axis.spacing:g} bohr", reference=ref_atom, units="hartree", source=src),
                self.row(problem.ion_energy, quantity="ion's ground state on the same axis", reference=ref_ion,
                         units="hartree", source=src)]
        # the reference must itself be converged well inside the band
        for name, err in (("atom", err_atom), ("ion", err_ion)):
            rows.append(self.row(err, quantity=f"extrapolation error of the {name}'s reference", reference=0.0,
                                 tolerance=0.1 * tol, units="hartree", source="Richardson: |finer - extrapolated|"))
        memory = self.case.get("params.memory", {})
        for name, value, ref in (("atom", memory.get("atom"), ref_atom), ("ion", memory.get("ion"), ref_ion)):
            if value is not None:
                rows.append(self.row(ref, quantity=f"reference against the value remembered for the {name}",
                                     reference=float(value), units="hartree", informational=True, passed=True,
                                     source=self.case.get("params.memory_source", "from memory")))
        # null: a model with (almost) no repulsion must miss the reference by far
        nul = find_states(self.case.input(overrides=["atom.repulsion_softening=1000 bohr"]), count=1)
        off = abs(float(nul.states.energies[0]) - ref_atom)
        rows.append(self.row(off, quantity="null: abs(E - reference) with the repulsion switched off (b = 1000 bohr)",
                             reference=10 * tol, tolerance=0.0, units="hartree", passed=bool(off > 10 * tol),
                             rule="must exceed 10 x the band"))
        return rows


def _run_pair(config):
    from ..input.pair_problem import build_pair_problem
    from ..runs.pair_runner import simulate_pair

    return simulate_pair(build_pair_problem(config), fft_effort="FFTW_ESTIMATE")


@register_case_kind("pair_gauge_invariance")
class PairGaugeInvariance(CaseKind):
    """Single and double ionization in both gauges at the input's step and at half of it:
    each gauge carries its own splitting error C h^p, so the gauges' difference must
    fall as h^p (p = 2 for the Strang step): the observed order log2(d(h) / d(h/2)) is
    compared with p within ``params.order_tolerance``. Both yields must stand above
    round-off (``params.smallest_yield``), or the law is tested on noise."""

    def run(self):
        config = self.case.input()
        h = config.propagation.time_step
        if not isinstance(h, float):
            raise ValueError("the case's input must give propagation.time_step in a.u.")
        order = int(self.case.get("params.order", 2))
        tol = float(self.case.get("params.order_tolerance"))
        smallest = [float(v) for v in self.case.get("params.smallest_yield")]
        kinds = ("single_ionization", "double_ionization")
        diffs, finals = [], None
        for step in (h, h / 2):
            pair = []
            for gauge in ("length", "velocity"):
                result = _run_pair(self.case.input(overrides=[f"propagation.gauge={gauge}",
                                                              f"propagation.time_step={step!r}"]))
                pair.append(np.array([result.final(k) for k in kinds]))
            diffs.append(np.abs(pair[0] - pair[1]))
            finals = pair[0]
        rows = []
        for i, kind in enumerate(kinds):
            words = kind.replace("_", " ")
            rows.append(self.row(float(finals[i]), quantity=f"{words} at h/2 (length gauge) above round-off",
                                 reference=smallest[i], tolerance=0.0, passed=bool(finals[i] > smallest[i]),
                                 rule=f"> {smallest[i]:g}", units="1"))
            observed = math.log2(diffs[0][i] / diffs[1][i]) if diffs[1][i] > 0 else math.nan
            rows.append(self.row(observed, quantity=f"order at which the gauges' {words} difference falls",
                                 reference=float(order), tolerance=tol, units=""))
            rows.append(self.row(float(diffs[1][i] / finals[i]), quantity=f"gauges' {words} difference at h/2, "
                                 "relative", reference=0.0, tolerance=math.inf, informational=True, passed=True,
                                 units="1"))
        return rows


@register_case_kind("pair_knee")
class PairKnee(CaseKind):
    """The knee: the double-ionization yield of the run above the sequential estimate
    for the same pulse by more than ``params.decades`` decades, at an intensity where
    single ionization stays below ``params.saturation``. The double yield is the lowest
    over the region radii (the reading's band); the same run without a field, scored by
    the same statistic, must fail it (else the statistic is passed by the grid's floor),
    and the double yield must stand above that floor by the same margin."""

    def run(self):
        decades = float(self.case.get("params.decades"))
        saturation = float(self.case.get("params.saturation"))
        result = _run_pair(self.case.input())
        if result.sequential is None:
            raise ValueError("the run gave no sequential estimate: " + "; ".join(result.warnings))
        radii = range(len(result.radii))
        double = min(result.final("double_ionization", k) for k in radii)
        single = max(result.final("single_ionization", k) for k in radii)
        n0, n1, n2 = result.sequential.final
        src = self.case.get("source")
        rows = [self.row(math.log10(double / n2) if double > 0 and n2 > 0 else math.nan,
                         quantity="log10(double ionization / sequential estimate), lowest over the radii",
                         reference=decades, tolerance=0.0, units="decades", source=src,
                         passed=bool(double > 0 and n2 > 0 and math.log10(double / n2) > decades),
                         rule=f"> {decades:g}"),
                self.row(single, quantity="single ionization, highest over the radii (below saturation)",
                         reference=saturation, tolerance=0.0, units="1", passed=bool(single < saturation),
                         rule=f"< {saturation:g}"),
                self.row(1 - n0, quantity="sequential estimate's depletion of the atom (below saturation)",
                         reference=saturation, tolerance=0.0, units="1", passed=bool(1 - n0 < saturation),
                         rule=f"< {saturation:g}")]
        low, high = result.ratio_spread
        rows.append(self.row(result.ratio, quantity=f"double / single over the radii {low:.3g} .. {high:.3g}",
                             reference=result.sequential.ratio, tolerance=math.inf, units="1", informational=True,
                             passed=True, source="sequential estimate N2 / N1"))
        if result.knee is not None:
            k = result.knee
            rows.append(self.row(k.return_energy, quantity="3.17 Up against the ion's Ip (direct knock-out if above)",
                                 reference=k.ion_ip, tolerance=math.inf, units="hartree", informational=True,
                                 passed=True, source="Corkum, Phys. Rev. Lett. 71, 1994 (1993)"))
        # null: no field; the double region then holds only the state's tail and the round-off
        free = _run_pair(self.case.input(overrides=[self.case.get("params.no_field")]))
        floor = max(free.final("double_ionization", k) for k in radii)
        score = math.log10(floor / n2) if floor > 0 else -math.inf
        rows.append(self.row(score, quantity="null: the same statistic for the run without a field",
                             reference=decades, tolerance=0.0, units="decades", passed=bool(score < decades),
                             rule=f"must fail: < {decades:g}"))
        # the double yield itself must stand above that floor (else it is not a value)
        above = math.log10(double / floor) if floor > 0 and double > 0 else (math.inf if double > 0 else math.nan)
        rows.append(self.row(above, quantity="log10(double ionization / the field-free run's double reading)",
                             reference=decades, tolerance=0.0, units="decades", passed=bool(above > decades),
                             rule=f"> {decades:g} (above the grid's floor)"))
        self.notes.append(f"double ionization {double:.3g} (lowest over the radii {list(result.radii)} bohr), "
                          f"sequential {n2:.3g}, field-free floor {floor:.3g}; single {single:.3g}")
        return rows
