"""The per-step observables of a propagation: one table, used everywhere.

:data:`PER_STEP_OBSERVABLES` lists, once, every quantity recorded at each time step
t_n: its name (the attribute of :class:`Observables`, the key in a run's state and in
a checkpoint), its unit (the unit names of the result file), a description, and how it
is obtained. The propagator (:mod:`tdse1d.physics.propagation`), the runner's state and
resume (:mod:`tdse1d.runs.runner`), the checkpoint (:mod:`tdse1d.runs.checkpoint`) and the
result-file table read this tuple; none keeps its own list.

A system (:mod:`tdse1d.physics.systems`) may add entries of its own, recorded the same
way by the propagator that moves it. The first five are measured by the fused kernels of :mod:`tdse1d.physics.kernels`
inside the propagator's loop (``measure`` is None). An entry with a ``measure``
callable is evaluated by the propagator after every step on the current state; that
costs one Python call per step and is meant for quantities that are not yet worth a
kernel. Adding one is appending an entry (:func:`add_per_step_observable`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

__all__ = ["PerStepObservable", "PER_STEP_OBSERVABLES", "per_step_names", "add_per_step_observable",
           "remove_per_step_observable", "measured_entries", "Observables"]


@dataclass(frozen=True)
class PerStepObservable:
    """One quantity recorded at every time step.

    Parameters
    ----------
    name : str
        Attribute of :class:`Observables`, key in run states and checkpoints.
    unit : str
        Unit name as in the result file (atomic units; "1" for a pure number).
    description : str
        What it is, in one line.
    measure : callable, optional
        ``measure(propagator) -> float``, evaluated on ``propagator.psi`` (propagation
        gauge; ``propagator.length_gauge_state()`` gives the length-gauge form) after
        each step and at the start. None for the quantities the kernels measure.
    """

    name: str
    unit: str
    description: str
    measure: Callable | None = None


#: every per-step observable, in the order they are stored
PER_STEP_OBSERVABLES: tuple[PerStepObservable, ...] = (
    PerStepObservable("norm", "1", "norm N(t) = <psi|psi> left inside the absorbers"),
    PerStepObservable("dipole", "bohr", "<x>, dipole moment per electron charge"),
    PerStepObservable("momentum", "atomic_unit_of_momentum", "kinetic momentum <p>"),
    PerStepObservable("acceleration", "atomic_unit_of_acceleration",
                      "Ehrenfest dipole acceleration -<dV/dx> - E(t) N(t)"),
    PerStepObservable("initial_population", "1", "|<psi_0|psi>|^2, population of the initial state"),
)

_KERNEL_NAMES = tuple(e.name for e in PER_STEP_OBSERVABLES)


def per_step_names() -> tuple[str, ...]:
    """Names of the per-step observables, in table order."""
    return tuple(e.name for e in PER_STEP_OBSERVABLES)


def add_per_step_observable(entry: PerStepObservable) -> None:
    """Append ``entry`` to :data:`PER_STEP_OBSERVABLES` (it needs a ``measure``)."""
    global PER_STEP_OBSERVABLES
    if entry.measure is None:
        raise ValueError(f"the per-step observable {entry.name!r} needs a measure(propagator) callable")
    if entry.name in per_step_names() or entry.name in ("time", "electric", "vector_potential"):
        raise ValueError(f"a per-step observable named {entry.name!r} exists already")
    PER_STEP_OBSERVABLES = PER_STEP_OBSERVABLES + (entry,)


def remove_per_step_observable(name: str) -> None:
    """Remove an entry added by :func:`add_per_step_observable` (the built-in ones stay)."""
    global PER_STEP_OBSERVABLES
    if name in _KERNEL_NAMES:
        raise ValueError(f"{name!r} is measured by the propagator's kernels and cannot be removed")
    PER_STEP_OBSERVABLES = tuple(e for e in PER_STEP_OBSERVABLES if e.name != name)


def measured_entries() -> tuple[PerStepObservable, ...]:
    """The entries the propagator evaluates through their ``measure`` callable."""
    return tuple(e for e in PER_STEP_OBSERVABLES if e.measure is not None)


class Observables:
    """Observables at every time step (arrays of length steps + 1), atomic units.

    ``time``, ``electric`` and ``vector_potential`` are the step times and the field at
    them; every entry of :data:`PER_STEP_OBSERVABLES` is an attribute of the same name,
    NaN until recorded.

    Parameters
    ----------
    time, electric, vector_potential : ndarray
        Step times (a.u.), E(t_n) and A(t_n) (a.u.).
    extra : tuple of str
        Names of per-step observables a system adds (:meth:`System.per_step_observables`)
        beyond the table.
    **recorded : ndarray
        Arrays of per-step observables (each missing one starts as NaN).
    """

    def __init__(self, time, electric, vector_potential, extra=(), **recorded):
        self.time = time
        self.electric = electric
        self.vector_potential = vector_potential
        names = per_step_names() + tuple(n for n in extra if n not in per_step_names())
        unknown = set(recorded) - set(names)
        if unknown:
            raise ValueError(f"not per-step observables: {sorted(unknown)}")
        for name in names:
            setattr(self, name, recorded[name] if name in recorded else np.full(len(time), np.nan))
        self.names = names

    @classmethod
    def empty(cls, times, electric, vector_potential, extra=()):
        """All per-step observables NaN (``extra``: names a system adds)."""
        return cls(times, electric, vector_potential, extra=extra)

    def as_dict(self) -> dict:
        """Copies of the per-step arrays by name (the field and times left out)."""
        return {name: getattr(self, name).copy() for name in self.names}

    def __repr__(self):
        return f"Observables({len(self.time)} steps: {', '.join(self.names)})"
