"""The rungs of the semiclassical ladder a scan computes at each point: ``run`` (the
time-dependent run, the default) and ``sfa`` (the strong-field approximation of the
point's input, no run; docs/sfa.md). A plan chooses them with its key ``rungs``::

    rungs = ["sfa"]            # the SFA alone, in seconds
    rungs = ["run", "sfa"]     # both, one file each per point

Each rung of a point is one task of the scan (the same Dask or job-array path) writing
its own file, ``points/<hash><suffix>.h5``, so the two rungs of the same input lie side
by side in one scan directory and one summary.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Rung", "RUNGS", "DEFAULT_RUNGS", "PLAN_KEY", "read_rungs"]

#: the plan key that names the rungs
PLAN_KEY = "rungs"


@dataclass(frozen=True)
class Rung:
    """One rung a scan point can be computed at.

    Attributes
    ----------
    name : str
        As written in the plan's ``rungs``.
    suffix : str
        Inserted before ``.h5`` (and ``.json``, ``.error``) in the point's file names.
    description : str
        What its file holds.
    """

    name: str
    suffix: str
    description: str


#: rung name -> Rung (the classical model needs no task: the summary's Ip + 3.17 Up)
RUNGS = {
    "run": Rung("run", "", "the time-dependent run (the result file of docs/output.md)"),
    "sfa": Rung("sfa", ".sfa", "the strong-field approximation of the point's input, harmonic spectrum and "
                               "quantum orbits, no run (docs/sfa.md)"),
}
#: what a plan without the key computes
DEFAULT_RUNGS = ("run",)


def read_rungs(value, problems: list) -> tuple:
    """The rungs a plan asks for (its ``rungs`` value: a name or a list of names), in
    the order of :data:`RUNGS`; on a bad value a line goes to ``problems`` and the default
    is returned."""
    if value is None:
        return DEFAULT_RUNGS
    names = [value] if isinstance(value, str) else value
    if not isinstance(names, list) or not names or not all(isinstance(n, str) for n in names):
        problems.append(f"{PLAN_KEY}: must be a non-empty list of rung names ({', '.join(RUNGS)}), got {value!r}")
        return DEFAULT_RUNGS
    unknown = [n for n in names if n not in RUNGS]
    if unknown:
        problems.append(f"{PLAN_KEY}: unknown rung {unknown[0]!r}; choose from {', '.join(RUNGS)}")
        return DEFAULT_RUNGS
    return tuple(n for n in RUNGS if n in names)
