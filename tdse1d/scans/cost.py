"""The cost of a scan point (:func:`estimate_cost` = grid points x time steps, from the
semiclassical grid advice without computing bound states), by which the points are
submitted longest first.
"""

from __future__ import annotations

import math

from ..input.schema import RunConfig
from ..input.spec import InputError


# -------------------------------------------------------------------------- cost


def estimate_cost(config: RunConfig) -> float:
    """Relative cost of a run, grid points x time steps, without computing bound states.

    Uses the grid and time step the input gives, else the semiclassical advice
    (:func:`tdse1d.input.problem.model_estimates`) with the input's ionization potential, or
    0.5 Hartree when the softening is given instead: good enough to order points.
    """
    from ..physics.grid import fast_fft_size
    from ..input.problem import AFTER_PULSE_CYCLES, FIELD_FREE_DURATION, _potential, build_field, model_estimates

    try:
        fld = build_field(config)
    except InputError:
        return math.nan
    from ..input.pair_problem import PAIR_TIME_STEP, _pair_grid, is_pair_model

    if is_pair_model(config):  # the two-electron atom: points^2 per step
        grid = _pair_grid(config, fld)
        dt = config.propagation.time_step or PAIR_TIME_STEP
        after = config.propagation.after_pulse
        if after is None:
            after = AFTER_PULSE_CYCLES * 2 * math.pi / fld.omega if fld.pulses else FIELD_FREE_DURATION
        return float(grid.points**2 * max((fld.end + after - fld.start) / dt, 1.0))
    ip = config.atom.ionization_potential or 0.5
    _, advice = model_estimates(_potential(config), fld, ip, with_barrier=False)
    spacing = config.grid.spacing or advice.spacing
    points = config.grid.points or fast_fft_size(int(math.ceil(2 * advice.half_width / spacing)))
    dt = config.propagation.time_step or advice.time_step
    if config.propagation.after_pulse is not None:
        after = config.propagation.after_pulse
    elif fld.pulses:
        after = AFTER_PULSE_CYCLES * 2 * math.pi / fld.omega
    else:
        after = FIELD_FREE_DURATION
    steps = (fld.end + after - fld.start) / dt if fld.pulses else after / dt
    return float(points * max(steps, 1.0))
