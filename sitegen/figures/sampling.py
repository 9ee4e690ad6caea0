"""Solutions x(t) sampled on fixed time grids, for the dynamics figures.

Figures plot, and tabulate, the same points: each solution is evaluated on one
fixed grid of :data:`GRID_POINTS` times (vectorised dense output of the solver,
or a fixed-step RK4 across many parameter samples at once). The grid stays
under Matplotlib's 128-vertex simplification threshold, so every tabulated
point is a vertex of the drawn line.

Units: states in the model's state unit, times in its ``time_unit``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp

from sitegen.dynamics.trajectories import ATOL_RELATIVE, RTOL
from sitegen.model.model import Model

GRID_POINTS = 121  # below 128: Matplotlib draws every point, none simplified away
RK4_MAX_STEPS = 20_000
RK4_STABILITY = 1.0  # step * max |f_x|; RK4 is stable up to about 2.8, accurate well below


@dataclass(frozen=True)
class Sampled:
    """One solution on the grid: ``times`` / ``states`` (finite points only).

    ``stop`` is the time of a terminal event (the state reached ``stop_level``:
    the collapse level or the region's upper end), None when it ran to the end.
    """

    start: float
    times: np.ndarray
    states: np.ndarray
    stop: float | None
    stop_level: float | None


def nice_end(value: float) -> float:
    """``value`` rounded up to a round multiple of a power of ten (axis-friendly)."""
    if not math.isfinite(value) or value <= 0:
        return 1.0
    power = 10.0 ** math.floor(math.log10(value))
    for step in (1.0, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0, 10.0):
        if value <= step * power * (1 + 1e-9):
            return step * power
    return 10.0 * power


def time_grid(end: float, points: int = GRID_POINTS) -> np.ndarray:
    """``points`` evenly spaced times from 0 to ``end`` (time units)."""
    return np.linspace(0.0, end, points)


def _event(level: float, direction: float) -> object:
    def event(_t: float, y: np.ndarray) -> float:
        return float(y[0] - level)

    event.terminal = True  # type: ignore[attr-defined]
    event.direction = direction  # type: ignore[attr-defined]
    return event


def sample_runs(
    model: Model, starts: Sequence[float], end: float, collapse_level: float | None = None
) -> tuple[Sampled, ...]:
    """Each start integrated to ``end`` (LSODA, the dynamics stage's tolerances) and
    its dense output evaluated on :func:`time_grid` in one vectorised call.

    A run stops at the collapse level (default: the region's lower end) or the
    region's upper end; its grid points after that are dropped and the stop
    point itself is appended, so the line ends where the state does.
    """
    low, high = model.region
    level = low if collapse_level is None else float(collapse_level)
    args = model.args()
    rate, slope = model.numeric(), model.numeric(1)
    span = max(abs(low), abs(high), high - low)

    def fun(_t: float, y: np.ndarray) -> np.ndarray:
        with np.errstate(all="ignore"):
            return np.atleast_1d(np.asarray(rate(y, *args), dtype=float) + 0.0 * y)

    def jac(_t: float, y: np.ndarray) -> np.ndarray:
        with np.errstate(all="ignore"):
            return np.atleast_2d(np.asarray(slope(y[0], *args), dtype=float))

    grid = time_grid(end)
    runs = []
    for start in starts:  # a handful of starts, each its own solver run
        solution = solve_ivp(
            fun,
            (0.0, end),
            [float(start)],
            method="LSODA",
            jac=jac,
            events=[_event(level, -1.0), _event(high, 1.0)],
            rtol=RTOL,
            atol=ATOL_RELATIVE * span,
            dense_output=True,
        )
        last = float(solution.t[-1])
        times = grid[grid <= last]
        states = solution.sol(times)[0] if times.size > 1 else np.array([float(start)])
        times = times if times.size > 1 else np.array([0.0])
        stop = stop_level = None
        if solution.status == 1:
            hit = 0 if solution.t_events[0].size else 1
            stop, stop_level = float(solution.t_events[hit][0]), (level, high)[hit]
            if times[-1] < stop:
                times, states = np.append(times, stop), np.append(states, stop_level)
        keep = np.isfinite(states)
        runs.append(Sampled(float(start), times[keep], states[keep], stop, stop_level))
    return tuple(runs)


def rk4_many(
    model: Model,
    arguments: Sequence[np.ndarray | float],
    start: float,
    end: float,
    points: int = GRID_POINTS,
) -> tuple[np.ndarray, np.ndarray]:
    """Fixed-step RK4 from ``start`` for every parameter sample at once.

    ``arguments`` are the model's parameter arguments (arrays of samples or
    scalars, as :func:`sitegen.dynamics.uncertainty.sample_arguments` gives).
    The step keeps step * max |f_x| <= :data:`RK4_STABILITY` over the region
    (stiff lakes and aquifers need many steps; capped at :data:`RK4_MAX_STEPS`).
    States are clamped to the region, so a collapsed sample rests at its lower
    end. Returns (times, states) with states shaped (samples, points).
    """
    low, high = model.region
    rate, slope = model.numeric(), model.numeric(1)
    count = max([np.size(a) for a in arguments] + [1])
    probe = np.linspace(low, high, 65)[:, None]
    with np.errstate(all="ignore"):
        slopes = np.abs(np.asarray(slope(probe, *arguments), dtype=float) + 0.0 * probe)
    stiffest = float(np.nanmax(np.where(np.isfinite(slopes), slopes, np.nan), initial=0.0))
    intervals = points - 1
    per_interval = max(
        1, min(RK4_MAX_STEPS // intervals, math.ceil(stiffest * end / intervals / RK4_STABILITY))
    )
    h = end / (intervals * per_interval)
    x = np.full(count, float(start))

    def f(y: np.ndarray) -> np.ndarray:
        with np.errstate(all="ignore"):
            value = np.asarray(rate(y, *arguments), dtype=float) + 0.0 * y
        return np.where(np.isfinite(value), value, 0.0)

    states = np.empty((count, points))
    states[:, 0] = x
    for k in range(1, points):  # loops over time steps only; samples are vectorised
        for _ in range(per_interval):
            k1 = f(x)
            k2 = f(np.clip(x + 0.5 * h * k1, low, high))
            k3 = f(np.clip(x + 0.5 * h * k2, low, high))
            k4 = f(np.clip(x + h * k3, low, high))
            x = np.clip(x + h / 6.0 * (k1 + 2 * k2 + 2 * k3 + k4), low, high)
        states[:, k] = x
    return time_grid(end, points), states
