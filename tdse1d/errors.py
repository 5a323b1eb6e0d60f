"""Exceptions shared across layers (kept free of heavy imports, for the command line)."""

from __future__ import annotations

__all__ = ["NumericalError"]


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
