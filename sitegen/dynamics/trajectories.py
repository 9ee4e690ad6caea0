"""Integrated solutions x(t) of dx/dt = f(x) with the events a manager asks about.

Each run uses SciPy's ``solve_ivp`` with LSODA, which switches to a stiff
(BDF) method by itself where the dynamics are stiff (lakes, aquifers), with
tight tolerances (relative 1e-10, absolute 1e-12 of the region's size) and
the analytic slope f_x as Jacobian. Event times are found by the solver's root
finder on its dense output.

Events, all times in the model's ``time_unit`` from the start:

- collapse: the state falls to the declared ``collapse_level`` (or the region's
  lower end when none is declared); the run stops there;
- upper end: the state leaves the region above; the run stops there;
- threshold: the state crosses a watched level (by default the unstable
  equilibria of the model; a 1-D flow cannot cross its own equilibria, so this
  fires only for levels taken from another setting, e.g. the base model's
  threshold watched under a new lever value);
- within 10% / within 1%: |x - x*| first drops to 10% / 1% of |x*| for the
  stable state x* the start tends to (of the region's width when x* = 0); the
  run stops at the 1% band.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from typing import Any

import numpy as np
from scipy.integrate import solve_ivp

from sitegen.analysis.equilibria import basins_of, find_equilibria
from sitegen.analysis.records import STABLE, Equilibrium
from sitegen.dynamics.records import (
    COLLAPSE,
    COLLAPSES,
    LEAVES,
    SETTLES,
    STILL_MOVING,
    THRESHOLD,
    UPPER_END,
    WITHIN_1,
    WITHIN_10,
    Event,
    Trajectory,
)
from sitegen.model.model import Model

RTOL = 1e-10
ATOL_RELATIVE = 1e-12  # of the region's size
BANDS = ((WITHIN_10, 0.10), (WITHIN_1, 0.01))
HORIZON_FACTOR = 40.0  # first horizon, in units of the slowest time scale
MAX_EXTENSIONS = 12  # the horizon doubles at most this many times
DEFAULT_STARTS = 9

EventFunction = Callable[[float, np.ndarray], float]


def time_scale(model: Model, equilibria: Sequence[Equilibrium]) -> float:
    """A typical time scale of the model (time units): the slowest return time,
    or the region's width over the largest |f| when no stable state has one."""
    low, high = model.region
    grid = np.linspace(low, high, 257)
    rates = np.abs(model.f(grid))
    finite = rates[np.isfinite(rates)]
    fastest = float(np.max(finite)) if finite.size else 0.0
    crossing = (high - low) / fastest if fastest > 0 else 1.0
    returns = [e.return_time for e in equilibria if e.return_time is not None]
    return max([crossing, *returns])


def _band_scale(model: Model, attractor: float) -> float:
    low, high = model.region
    return abs(attractor) if attractor != 0 else high - low


def attractor_of(model: Model, start: float, equilibria: Sequence[Equilibrium]) -> float | None:
    """The stable state a start tends to (None when it leaves the region)."""
    for equilibrium in equilibria:
        if equilibrium.value == start and equilibrium.stability == STABLE:
            return equilibrium.value
    basins, _ = basins_of(model, equilibria)
    for basin in basins:
        if basin.low <= start <= basin.high and basin.low != basin.high:
            if start in (basin.low, basin.high) and start not in {e.value for e in equilibria}:
                # A start on a basin's edge belongs to it when the flow points inside
                # (a body at rest that starts to fall, a stock at the lower end that grows).
                rate = float(model.f(start))
                inward = (start == basin.low and rate > 0) or (start == basin.high and rate < 0)
                if not inward:
                    continue
            return basin.attractor
    return None


def _level_event(level: float, direction: float, terminal: bool) -> EventFunction:
    def event(_t: float, y: np.ndarray) -> float:
        return float(y[0] - level)

    event.direction = direction  # type: ignore[attr-defined]
    event.terminal = terminal  # type: ignore[attr-defined]
    return event


def _band_event(centre: float, width: float, terminal: bool) -> EventFunction:
    def event(_t: float, y: np.ndarray) -> float:
        return float(abs(y[0] - centre) - width)

    event.direction = -1.0  # type: ignore[attr-defined]
    event.terminal = terminal  # type: ignore[attr-defined]
    return event


def rate_functions(
    model: Model,
) -> tuple[Callable[[float, np.ndarray], np.ndarray], Callable[[float, np.ndarray], np.ndarray]]:
    """Right-hand side and Jacobian of ``model`` for ``solve_ivp``.

    A step may overshoot the lower end before an event stops the run; rates such
    as r*B*log(K/B) are undefined there, so they are evaluated at the nearest
    inside point instead.
    """
    low, high = model.region
    inside = low + 1e-12 * (high - low)
    args = model.args()
    rate, slope = model.numeric(), model.numeric(1)

    def fun(_t: float, y: np.ndarray) -> np.ndarray:
        with np.errstate(all="ignore"):
            value = np.asarray(rate(y, *args), dtype=float) + 0.0 * y
            if not np.all(np.isfinite(value)):
                value = np.asarray(rate(np.maximum(y, inside), *args), dtype=float) + 0.0 * y
        return np.atleast_1d(value)

    def jac(_t: float, y: np.ndarray) -> np.ndarray:
        with np.errstate(all="ignore"):
            value = float(np.asarray(slope(y[0], *args), dtype=float))
            if not np.isfinite(value):
                value = float(np.asarray(slope(max(float(y[0]), inside), *args), dtype=float))
        return np.atleast_2d(value if np.isfinite(value) else 0.0)

    return fun, jac


def segments(
    fun: Callable[..., Any],
    jac: Callable[..., Any],
    start: float,
    end: float,
    events: Sequence[EventFunction],
    rtol: float,
    atol: float,
) -> Iterator[Any]:
    """``solve_ivp`` runs from ``start`` at t = 0, the horizon doubling after each one.

    Yields each run's solution; stops after a terminal event (status 1), a solver
    failure (status below 0, for the caller to report) or ``MAX_EXTENSIONS``
    extensions. LSODA switches to a stiff method where the rate is stiff.
    """
    t0, y0 = 0.0, start
    for _ in range(MAX_EXTENSIONS + 1):
        solution = solve_ivp(
            fun, (t0, end), [y0], method="LSODA", jac=jac, events=events, rtol=rtol, atol=atol
        )
        yield solution
        if solution.status != 0:
            return
        t0, y0 = float(solution.t[-1]), float(solution.y[0, -1])
        end = t0 + 2.0 * (t0 if t0 > 0 else 1.0)


def integrate(
    model: Model,
    start: float,
    equilibria: Sequence[Equilibrium] | None = None,
    collapse_level: float | None = None,
    thresholds: Sequence[float] | None = None,
    horizon: float | None = None,
) -> Trajectory:
    """Integrate from ``start`` (state units) until it settles, collapses or leaves.

    ``equilibria`` default to :func:`find_equilibria` at the model's values;
    ``collapse_level`` to the region's lower end; ``thresholds`` to the unstable
    and semi-stable interior equilibria. ``horizon`` (time units) is the first
    end time tried; it doubles (at most ``MAX_EXTENSIONS`` times) until the run
    reaches the 1% band, collapses or leaves the region.
    """
    low, high = model.region
    if equilibria is None:
        equilibria, _ = find_equilibria(model)
    level = low if collapse_level is None else float(collapse_level)
    if thresholds is None:
        thresholds = [e.value for e in equilibria if e.stability != STABLE and low < e.value < high]
    attractor = attractor_of(model, start, equilibria)
    fun, jac = rate_functions(model)

    events: list[EventFunction] = [_level_event(level, -1.0, True), _level_event(high, 1.0, True)]
    kinds: list[tuple[str, float]] = [(COLLAPSE, level), (UPPER_END, high)]
    for threshold in thresholds:
        events.append(_level_event(float(threshold), 0.0, False))
        kinds.append((THRESHOLD, float(threshold)))
    found: list[Event] = []
    if attractor is not None:
        scale = _band_scale(model, attractor)
        for kind, fraction in BANDS:
            if abs(start - attractor) <= fraction * scale:
                found.append(Event(kind, attractor, 0.0))  # already inside the band
            else:
                events.append(_band_event(attractor, fraction * scale, kind == WITHIN_1))
                kinds.append((kind, attractor))
    if start <= level and attractor is None:
        found.append(Event(COLLAPSE, level, 0.0))
        return Trajectory(
            start,
            np.array([0.0]),
            np.array([start]),
            tuple(found),
            None,
            COLLAPSES,
            level,
            "the start is at or below the collapse level",
        )
    if any(e.kind == WITHIN_1 for e in found):
        return Trajectory(
            start,
            np.array([0.0]),
            np.array([start]),
            tuple(found),
            attractor,
            SETTLES,
            level,
            "the start is within 1% of its stable state",
        )

    span = max(abs(low), abs(high), high - low)
    end = horizon if horizon is not None else HORIZON_FACTOR * time_scale(model, equilibria)
    times: list[np.ndarray] = []
    states: list[np.ndarray] = []
    fate, note = STILL_MOVING, ""
    t_end = 0.0
    for solution in segments(fun, jac, start, end, events, RTOL, ATOL_RELATIVE * span):
        if solution.status < 0:
            note = f"the solver stopped: {solution.message}"
            break
        times.append(solution.t)
        states.append(solution.y[0])
        t_end = float(solution.t[-1])
        for (kind, at_level), hits in zip(kinds, solution.t_events, strict=True):
            if hits.size and not any(e.kind == kind and e.level == at_level for e in found):
                found.append(Event(kind, at_level, float(hits[0])))
        if solution.status == 1:  # a terminal event
            stop = {e.kind for e in found}
            fate = COLLAPSES if COLLAPSE in stop else LEAVES if UPPER_END in stop else SETTLES
            break
    else:
        note = f"still moving at t = {t_end:.6g} {model.time_unit}"
    found.sort(key=lambda e: e.time)
    return Trajectory(
        start,
        np.concatenate(times) if times else np.array([0.0]),
        np.concatenate(states) if states else np.array([start]),
        tuple(found),
        attractor,
        fate,
        level,
        note,
    )


def region_starts(model: Model, count: int = DEFAULT_STARTS) -> np.ndarray:
    """Initial states across the region: ``count`` evenly spaced interior points,
    plus today's state when the scenario gives one (sorted, state units)."""
    low, high = model.region
    starts = np.linspace(low, high, count + 2)[1:-1]
    if model.current_state is not None:
        starts = np.append(starts, model.current_state)
    return np.unique(starts)


def integrate_many(
    model: Model,
    starts: Sequence[float] | np.ndarray | None = None,
    collapse_level: float | None = None,
) -> tuple[Trajectory, ...]:
    """One :class:`Trajectory` per start (default :func:`region_starts`).

    Each start is its own solver run because each has its own events and end
    time; the equilibria are found once and shared.
    """
    chosen = region_starts(model) if starts is None else np.asarray(starts, dtype=float)
    equilibria, _ = find_equilibria(model)
    return tuple(integrate(model, float(x0), equilibria, collapse_level) for x0 in chosen)
