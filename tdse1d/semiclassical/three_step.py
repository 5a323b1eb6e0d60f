"""The three-step ("simple-man") model of Corkum, Phys. Rev. Lett. 71, 1994 (1993) for an
arbitrary linearly polarised sampled field: return times, return kinetic energies,
drift momenta of direct and of backscattered electrons. Pure numerics on arrays, used to
interpret (and sanity-check) the wave-packet results.

Conventions
-----------
Atomic units throughout.  The field is linearly polarised along ``x`` and given
in the dipole approximation by ``E(t) = -dA/dt`` with ``A = 0`` before and
after the pulse.  The electron has charge ``-1`` and mass ``1``, so Newton's
equation is ``dv/dt = -E(t) = dA/dt``.  An electron born at rest at the origin
at time ``t0`` therefore moves as

    v(t) = A(t) - A(t0),
    x(t) = int_{t0}^{t} A(t') dt' - A(t0) (t - t0).

A *return* is a time ``t_r > t0`` with ``x(t_r) = 0``; the return kinetic
energy is ``(A(t_r) - A(t0))**2 / 2``.  The final (drift) momentum of an
electron that never rescatters is ``A(T) - A(t0) = -A(t0)``; an electron that
is elastically backscattered (``v -> -v``) at ``t_r`` ends with
``A(t0) - 2 A(t_r)``.  With these signs a positive field pushes the electron
towards ``-x``, and the field-dressed potential energy is
``U(x) = V(x) + E x``.
"""

from dataclasses import dataclass

import numpy as np

from .sampled_field import (
    RINGING_STEPS, carrier_period, check_field_consistency, check_sampled_field, field_end,
)


#: Default number of birth times per optical cycle.  The maxima reported by
#: :func:`summary` are refined between samples, so this only sets how finely
#: the branches are drawn.
BIRTHS_PER_CYCLE = 64

# Upper bound on the number of excursion samples held in memory at once while
# bracketing returns (births x samples).
_BLOCK_ELEMENTS = 4_000_000

# Samples on either side of a sampled maximum used to refine it.
_PEAK_HALF_WIDTH = 3


# --------------------------------------------------------------------------
# Three-step model
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class ClassicalTrajectories:
    """Classical electron trajectories launched at rest from the origin.

    Rows are birth times (ascending), columns of the 2-D arrays are the first,
    second, ... return.  Entries for returns that do not happen before the end
    of the time grid are NaN.  All quantities in atomic units.

    Attributes
    ----------
    birth_time : ndarray, shape (n,)
        Ionization (birth) times ``t0``.
    birth_field : ndarray, shape (n,)
        Electric field ``E(t0)`` at birth.
    return_time : ndarray, shape (n, max_returns)
        Times ``t_r > t0`` at which ``x(t_r) = 0``.
    return_energy : ndarray, shape (n, max_returns)
        Kinetic energy ``(A(t_r) - A(t0))**2 / 2`` at return.
    drift_momentum : ndarray, shape (n,)
        Final momentum ``A(T) - A(t0)`` of an electron that never rescatters.
    backscattered_momentum : ndarray, shape (n, max_returns)
        Final momentum ``A(T) + A(t0) - 2 A(t_r)`` of an electron
        elastically backscattered at the corresponding return.
    """

    birth_time: np.ndarray
    birth_field: np.ndarray
    return_time: np.ndarray
    return_energy: np.ndarray
    drift_momentum: np.ndarray
    backscattered_momentum: np.ndarray

    def __post_init__(self):
        for value in vars(self).values():
            value.setflags(write=False)

    @property
    def max_returns(self):
        """Number of returns tracked per trajectory."""
        return self.return_time.shape[1]


def trajectories(time, electric, vector_potential, birth_times=None, max_returns=3):
    """Launch three-step-model trajectories in a sampled field.

    ``A`` is interpolated by a cubic spline (clamped with ``dA/dt = -E`` at
    the ends) whose exact antiderivative gives the excursion ``x(t)``.  Returns
    are bracketed by sign changes of ``x`` on the time grid and refined by
    safeguarded Newton iteration on the spline, so their accuracy is that of
    the spline, not of the grid.  Returns closer together than one time step
    (grazing returns) can be missed.

    Parameters
    ----------
    time : array_like, shape (m,)
        Uniform, increasing time grid (a.u.).
    electric : array_like, shape (m,)
        Electric field ``E(t)`` (a.u.), ``E = -dA/dt``.
    vector_potential : array_like, shape (m,)
        Vector potential ``A(t)`` (a.u.), zero at both ends of the grid.
    birth_times : array_like, optional
        Birth times (a.u.) inside ``[time[0], time[-1])``; sorted on output.
        Default: :data:`BIRTHS_PER_CYCLE` per optical cycle over the whole
        grid, the cycle taken from the peak of the field's spectrum.
    max_returns : int, optional
        Number of returns to find per trajectory.

    Returns
    -------
    ClassicalTrajectories
        Birth and return times, return energies and final momenta (a.u.).

    Raises
    ------
    ValueError
        If the grid is not uniform, the arrays disagree in shape, ``E`` is not
        ``-dA/dt`` or ``A`` does not vanish at the pulse edges.
    """
    time, electric, vector_potential = check_sampled_field(time, electric, vector_potential)
    max_returns = int(max_returns)
    if max_returns < 1:
        raise ValueError(f"max_returns must be a positive integer, got {max_returns}")
    from scipy.interpolate import CubicSpline  # here: its import is 0.3-0.8 s of `tdse1d estimate`

    a_spline = CubicSpline(
        time, vector_potential, bc_type=((1, -electric[0]), (1, -electric[-1]))
    )
    check_field_consistency(time, electric, vector_potential, a_spline)

    period = carrier_period(time, electric)
    last_field = field_end(time, electric, vector_potential)
    if birth_times is None:
        # births over the pulse only: after it no electron is born (no field to tunnel
        # through) and one born there stays at the origin, its "returns" round-off
        step = period / BIRTHS_PER_CYCLE
        birth_times = np.arange(time[0], time[last_field], step)
    else:
        birth_times = np.unique(np.asarray(birth_times, dtype=float).ravel())
        if birth_times.size == 0 or not np.all(np.isfinite(birth_times)):
            raise ValueError("birth_times must be a non-empty array of finite times")
        if birth_times[0] < time[0] or birth_times[-1] >= time[-1]:
            raise ValueError(
                f"birth_times must lie in [{time[0]}, {time[-1]}), got "
                f"[{birth_times[0]}, {birth_times[-1]}]"
            )

    excursion = _Excursion(time, a_spline, birth_times)
    # Scanning one optical cycle at a time keeps the work close to what the
    # first few returns need; the scan stops where the field does (then the flight
    # is straight, and its one possible crossing is found directly), so the cost is
    # linear in the run's length, not quadratic.
    scan_end = min(time.size - 1, last_field + RINGING_STEPS)
    brackets = excursion.bracket_returns(max_returns, round(period / (time[1] - time[0])), scan_end)
    return_time = excursion.refine(brackets)

    a_end = float(a_spline(time[-1]))
    a_birth = excursion.a0
    a_return = a_spline(return_time)
    return ClassicalTrajectories(
        birth_time=birth_times,
        birth_field=-a_spline(birth_times, 1),
        return_time=return_time,
        return_energy=0.5 * (a_return - a_birth[:, None]) ** 2,
        drift_momentum=a_end - a_birth,
        backscattered_momentum=a_end + a_birth[:, None] - 2.0 * a_return,
    )


class _Excursion:
    """Excursion ``x(t)`` of electrons born at rest at the origin at ``t0``."""

    def __init__(self, time, a_spline, birth_times):
        self.time = time
        self.a_spline = a_spline
        self.antiderivative = a_spline.antiderivative()
        self.t0 = birth_times
        self.a0 = a_spline(birth_times)
        self.s0 = self.antiderivative(birth_times)
        self.s_grid = self.antiderivative(time)

    def __call__(self, t, rows):
        return self.antiderivative(t) - self.s0[rows] - self.a0[rows] * (t - self.t0[rows])

    def bracket_returns(self, max_returns, block, scan_end=None):
        """Grid interval ``[t_i, t_i+1]`` holding each return: ``i``, or -1 if none.

        The excursion is sampled ``block`` grid steps at a time for all births
        that still miss returns, up to the sample ``scan_end`` (default: the last);
        after it the field is taken to be zero, the flight straight, and its one
        possible crossing of the origin is bracketed directly.
        """
        time, m_all = self.time, self.time.size
        m = m_all if scan_end is None else int(scan_end) + 1
        n = self.t0.size
        brackets = np.full((n, max_returns), -1, dtype=np.intp)
        found = np.zeros(n, dtype=np.intp)
        # The trivial root x(t0) = 0 is skipped by starting half a step after
        # birth, where x ~ -E(t0) (t - t0)**2 / 2 is still well above round-off;
        # no genuine return comes that soon.
        position = np.searchsorted(time, self.t0 + 0.5 * (time[1] - time[0]), side="right")
        block = int(np.clip(block, 16, max(16, _BLOCK_ELEMENTS // max(n, 1))))
        offsets = np.arange(block + 1)
        active = np.flatnonzero(position < m - 1)
        while active.size:
            index = position[active, None] + offsets
            inside = index < m
            index = np.minimum(index, m - 1)
            x = (
                self.s_grid[index]
                - self.s0[active, None]
                - self.a0[active, None] * (time[index] - self.t0[active, None])
            )
            positive = x > 0.0
            crossing = (positive[:, 1:] != positive[:, :-1]) & inside[:, 1:]
            rows, cols = np.nonzero(crossing)
            if rows.size:
                # np.nonzero is row-major, so crossings of one birth are in time order.
                rank = np.arange(rows.size) - np.searchsorted(rows, rows, side="left")
                births = active[rows]
                slot = found[births] + rank
                keep = slot < max_returns
                brackets[births[keep], slot[keep]] = index[rows[keep], cols[keep]]
                np.add.at(found, births, 1)
                np.minimum(found, max_returns, out=found)
            position[active] += block
            active = active[(found[active] < max_returns) & (position[active] < m - 1)]
        if m < m_all:
            self._straight_crossings(brackets, found, max_returns, m - 1)
        return brackets

    def _straight_crossings(self, brackets, found, max_returns, last):
        """Bracket the one crossing of a straight flight after the sample ``last``."""
        time, m = self.time, self.time.size
        rows = np.flatnonzero((found < max_returns) & (self.t0 < time[last]))
        if rows.size == 0:
            return
        x_last = self.s_grid[last] - self.s0[rows] - self.a0[rows] * (time[last] - self.t0[rows])
        velocity = float(self.a_spline(time[last])) - self.a0[rows]
        with np.errstate(divide="ignore", invalid="ignore"):
            t_cross = time[last] - x_last / velocity
        ok = np.isfinite(t_cross) & (t_cross > time[last]) & (t_cross < time[-1]) & (x_last != 0.0)
        rows, t_cross = rows[ok], t_cross[ok]
        guess = np.clip(np.searchsorted(time, t_cross) - 1, last, m - 2)
        # the sampled excursion decides the bracket, as the scan would: look at the
        # guessed interval and its neighbours for the sign change
        for shift in (0, -1, 1, -2, 2):
            i = np.clip(guess + shift, last, m - 2)
            x_lo = self.s_grid[i] - self.s0[rows] - self.a0[rows] * (time[i] - self.t0[rows])
            x_hi = self.s_grid[i + 1] - self.s0[rows] - self.a0[rows] * (time[i + 1] - self.t0[rows])
            hit = (x_lo > 0.0) != (x_hi > 0.0)
            brackets[rows[hit], found[rows[hit]]] = i[hit]
            found[rows[hit]] += 1
            rows, guess = rows[~hit], guess[~hit]
            if rows.size == 0:
                break

    def refine(self, brackets):
        """Return times from bracketing intervals (NaN where no bracket)."""
        return_time = np.full(brackets.shape, np.nan)
        rows, slots = np.nonzero(brackets >= 0)
        if rows.size == 0:
            return return_time
        i = brackets[rows, slots]
        lo, hi = self.time[i], self.time[i + 1]
        f_lo, f_hi = self(lo, rows), self(hi, rows)
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.where(f_hi != f_lo, lo - f_lo * (hi - lo) / (f_hi - f_lo), 0.5 * (lo + hi))
        t = np.where(f_lo == 0.0, lo, np.where(f_hi == 0.0, hi, t))
        tolerance = 1e-13 * max(abs(self.time[0]), abs(self.time[-1]), self.time[1] - self.time[0])
        for _ in range(100):
            f = self(t, rows)
            same = np.sign(f) == np.sign(f_lo)
            lo = np.where(same, t, lo)
            f_lo = np.where(same, f, f_lo)
            hi = np.where(same, hi, t)
            velocity = self.a_spline(t) - self.a0[rows]
            with np.errstate(divide="ignore", invalid="ignore"):
                newton = t - f / velocity
            # Fall back to bisection whenever Newton leaves the bracket.
            newton = np.where((newton > lo) & (newton < hi), newton, 0.5 * (lo + hi))
            newton = np.where(f == 0.0, t, newton)
            converged = np.all(np.abs(newton - t) <= tolerance)
            t = newton
            if converged:
                break
        return_time[rows, slots] = t
        return return_time


@dataclass(frozen=True)
class ThreeStepSummary:
    """Characteristic numbers of a set of three-step-model trajectories.

    Maxima are refined between sampled birth times by a local cubic spline
    through the best sample and up to three neighbours on each side.  All energies in hartree, times
    in a.u.

    Attributes
    ----------
    max_return_energy : float
        Largest return kinetic energy over all tracked returns
        (``3.17 Up`` for a long monochromatic field).
    cutoff_energy : float
        Harmonic cutoff ``Ip + max_return_energy``.
    cutoff_birth_time, cutoff_return_time : float
        Birth and return time of the trajectory with the largest return
        energy.
    max_direct_energy : float
        Largest drift energy ``p**2 / 2`` of direct electrons (``2 Up``).
    max_backscattered_energy : float
        Largest drift energy of electrons backscattered at any tracked
        return (``10 Up``).
    short_branch, long_branch : tuple of ndarray
        One array per field half cycle (in time order), each of shape
        ``(k, 2)`` with columns emission (first return) time and photon
        energy ``Ip + E_return``, sorted by photon energy.  The branches of a
        half cycle are split at its largest first-return energy; that point
        belongs to both.  Half cycles are delimited by sign changes of the
        field at birth.

    Notes
    -----
    Quantities that need a return are NaN, and the branches empty, when no
    trajectory returns.
    """

    max_return_energy: float
    cutoff_energy: float
    cutoff_birth_time: float
    cutoff_return_time: float
    max_direct_energy: float
    max_backscattered_energy: float
    short_branch: tuple
    long_branch: tuple


def summary(traj, ionization_potential):
    """Cutoffs and emission-time branches of three-step-model trajectories.

    For a long monochromatic field of ponderomotive energy ``Up`` the maximum
    return energy is ``3.17 Up`` (Corkum, Phys. Rev. Lett. 71, 1994 (1993)),
    direct electrons reach ``2 Up`` and electrons backscattered at the first
    return reach ``10 Up`` (Paulus et al., J. Phys. B 27, L703 (1994); both
    citations from memory).

    Parameters
    ----------
    traj : ClassicalTrajectories
        Output of :func:`trajectories`.
    ionization_potential : float
        Ionization potential ``Ip > 0`` (hartree).

    Returns
    -------
    ThreeStepSummary
        Energies in hartree, times in a.u.
    """
    if not isinstance(traj, ClassicalTrajectories):
        raise TypeError(f"traj must be a ClassicalTrajectories, got {type(traj).__name__}")
    ip = float(ionization_potential)
    if not (np.isfinite(ip) and ip > 0.0):
        raise ValueError(f"ionization_potential must be positive and finite, got {ip}")

    t0 = traj.birth_time
    cutoff = _highest(_refined_peak(t0, traj.return_energy[:, k], traj.return_time[:, k])
                      for k in range(traj.max_returns))
    direct = _refined_peak(t0, 0.5 * traj.drift_momentum ** 2)
    backscattered = _highest(_refined_peak(t0, 0.5 * traj.backscattered_momentum[:, k] ** 2)
                             for k in range(traj.max_returns))
    short_branch, long_branch = _emission_branches(traj, ip)
    return ThreeStepSummary(
        max_return_energy=cutoff[1],
        cutoff_energy=ip + cutoff[1],
        cutoff_birth_time=cutoff[0],
        cutoff_return_time=cutoff[2],
        max_direct_energy=direct[1],
        max_backscattered_energy=backscattered[1],
        short_branch=short_branch,
        long_branch=long_branch,
    )


def _highest(peaks):
    """The peak with the largest value; NaN peaks (no returns) lose."""
    return max(peaks, key=lambda peak: -np.inf if np.isnan(peak[1]) else peak[1])


def _refined_peak(x, y, companion=None):
    """Maximum of sampled ``y(x)``: ``(x_peak, y_peak, companion(x_peak))``.

    A cubic spline through up to three finite samples on either side of the
    largest one is maximised between the neighbouring samples, which makes
    the error O(h**4) instead of the O(h**2) of the plain sampled maximum.
    Returns NaNs when ``y`` has no finite value.
    """
    companion = np.full_like(y, np.nan) if companion is None else companion
    finite = np.isfinite(y)
    if not finite.any():
        return (np.nan, np.nan, np.nan)
    i = int(np.argmax(np.where(finite, y, -np.inf)))
    lo = hi = i
    while lo > max(i - _PEAK_HALF_WIDTH, 0) and finite[lo - 1]:
        lo -= 1
    while hi < min(i + _PEAK_HALF_WIDTH, y.size - 1) and finite[hi + 1]:
        hi += 1
    if hi - lo < 2:
        return (x[i], y[i], companion[i])
    window = slice(lo, hi + 1)
    from scipy.interpolate import CubicSpline

    spline = CubicSpline(x[window], y[window])
    stationary = spline.derivative().roots(extrapolate=False)
    candidates = np.concatenate(
        [[x[i]], stationary[(stationary >= x[max(i - 1, lo)]) & (stationary <= x[min(i + 1, hi)])]]
    )
    best = candidates[np.argmax(spline(candidates))]
    other = companion[window]
    other_peak = (CubicSpline(x[window], other)(best) if np.all(np.isfinite(other))
                  else companion[i])
    return (float(best), float(spline(best)), float(other_peak))


def _emission_branches(traj, ip):
    """Short and long first-return branches, one array per field half cycle."""
    sign = np.sign(traj.birth_field)
    half_cycle = np.concatenate([[0], np.cumsum(sign[1:] != sign[:-1])])
    energy = traj.return_energy[:, 0]
    emission = traj.return_time[:, 0]
    short_branch, long_branch = [], []
    for label in np.unique(half_cycle):
        rows = np.flatnonzero((half_cycle == label) & np.isfinite(energy))
        if rows.size < 2:
            continue
        peak = rows[np.argmax(energy[rows])]
        # Long trajectories start earlier in the half cycle than the cutoff one.
        for branch, chosen in ((long_branch, rows[rows <= peak]),
                               (short_branch, rows[rows >= peak])):
            table = np.column_stack([emission[chosen], ip + energy[chosen]])
            branch.append(table[np.argsort(table[:, 1], kind="stable")])
    return tuple(short_branch), tuple(long_branch)
