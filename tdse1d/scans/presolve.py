"""Solve once, in the scan's own process, what several points of a scan share.

The points of a scan over the laser (intensity, wavelength, delay...) usually share the
atom and the grid, so they share the softening fit and the bound states, the costliest
part of a short point (about 1 s at 4096 points). Each worker would solve them for its
first point, all workers at the same moment, on cores that then do nothing else.
:func:`presolve_shared` solves each shared problem once in the scan's own process, while
the local cluster starts in the background (:func:`tdse1d.scans.execute.run_scan`), into
the store of solved problems (:mod:`tdse1d.io.problem_store`), where the workers' points
find them (:func:`tdse1d.scans.worker.run_point` reads the same store).

This is an optimisation only: a problem it cannot solve (an input error) is left to the
point, which reports it; the results are those of a point that solves for itself, bit for
bit (the store hands back the computed arrays).
"""

from __future__ import annotations

import json

__all__ = ["shared_problems", "presolve_shared"]

#: the resolved input's tables that decide the fit and the bound states (the laser
#: enters only through an automatic grid, which the group key then leaves unshared)
_PROBLEM_TABLES = ("atom", "grid", "propagation")


def _group_key(point) -> str:
    return json.dumps({name: point.raw.get(name) for name in _PROBLEM_TABLES}, sort_keys=True, default=str)


def shared_problems(points) -> list:
    """The first point of every group of at least two ``points`` with the same atom, grid
    and propagation tables (a problem solved once for the group; a point alone in its
    group gains nothing from being solved here rather than on its worker).

    Parameters
    ----------
    points : sequence of ScanPoint

    Returns
    -------
    list of ScanPoint
        In the order of ``points``.
    """
    groups: dict[str, list] = {}
    for point in points:
        groups.setdefault(_group_key(point), []).append(point)
    return [members[0] for members in groups.values() if len(members) >= 2]


def presolve_shared(points) -> int:
    """Solve the problems :func:`shared_problems` finds into the store of solved problems.

    Parameters
    ----------
    points : sequence of ScanPoint
        The points of the scan's run rung that are still to run.

    Returns
    -------
    int
        The number of problems solved (0 when the store is switched off,
        ``TDSE1D_NO_STORE``: the workers could not read them).
    """
    from ..input.pair_problem import is_pair_model
    from ..input.problem import build_problem
    from ..io.problem_store import problem_store

    solved = 0
    with problem_store() as store:
        if store is None:
            return 0
        for point in shared_problems(points):
            try:
                if is_pair_model(point.config):
                    continue  # the two-electron states are not kept in the store
                build_problem(point.config)
            except Exception:  # noqa: BLE001 - the point itself reports its input's error
                continue
            solved += 1
    return solved
