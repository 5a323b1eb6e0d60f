"""Exceptions shared across layers (kept free of heavy imports, for the command line)."""

from __future__ import annotations

__all__ = ["NumericalError", "OutputError", "OutputBusy"]


class NumericalError(RuntimeError):
    """The propagation went wrong (non-finite values, norm growing).

    Attributes
    ----------
    step : int
    time : float
        Simulation time (a.u.) at which it was detected.
    """

    def __init__(self, message: str, step: int, time: float):
        self.step = step
        self.time = time
        super().__init__(f"{message} at step {step}, t = {time:.6g} a.u.")


class OutputError(RuntimeError):
    """A result cannot be written where asked (one line for the user, exit status 1)."""


class OutputBusy(OutputError):
    """Another process is writing the same result or scan directory; the message names it."""
