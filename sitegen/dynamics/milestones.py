"""Milestones on the way from today's state: "how long until ...".

From today's state (``[state] current``) the state moves monotonically (a
one-dimensional autonomous flow cannot turn back) towards the stable state it
tends to, or out of the region. Along that run this module times:

- the first crossing of each declared ``[reference]`` level (limit, target,
  trigger): the time a cold room passes its safe temperature, a soil meets its
  clean-up target, a falling body passes a safe landing speed;
- the lever setting at which each reference level is itself an equilibrium
  (the root of f(level; lever) = 0 in the lever's range): the sustainable
  pumping rate that holds a water table at its limit, the largest inflow
  concentration that keeps a reservoir at its standard;
- the time to cover 50% and 95% of the way from today's state to the attractor
  x*, i.e. to reach x0 + 0.5 (x* - x0) and x0 + 0.95 (x* - x0). For a linear
  model dx/dt = -k (x - x*) these are the half-life ln 2 / k and ln 20 / k;
  here they come from the integrated trajectory, for any model.

Times are in the model's ``time_unit`` from today. They are located as events
of SciPy's ``solve_ivp`` (LSODA, switching to BDF where stiff, analytic f_x as
Jacobian) with relative tolerance 1e-12, so event times carry relative errors
of order 1e-10. The run stops at the furthest level it can reach; a level that
lies behind today's state or beyond the attractor is reported with time None
and a note, never with a guessed time.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

import numpy as np
from scipy.optimize import brentq

from sitegen.analysis.equilibria import find_equilibria
from sitegen.analysis.records import Equilibrium
from sitegen.dynamics.policies import has_kinks, true_roots
from sitegen.dynamics.records import (
    AT_REST,
    FALLING,
    HALF_WAY,
    MOST_OF_THE_WAY,
    RISING,
    LeverAtLevel,
    Milestone,
    Milestones,
)
from sitegen.dynamics.trajectories import (
    HORIZON_FACTOR,
    EventFunction,
    attractor_of,
    rate_functions,
    segments,
    time_scale,
)
from sitegen.model.model import Model, build_model
from sitegen.scenario.records import Scenario

RTOL = 1e-12
ATOL_RELATIVE = 1e-15  # of the region's size
SAME = 1e-12  # of the region's size: a level this close to the attractor is "at" it
FRACTIONS = ((HALF_WAY, 0.5), (MOST_OF_THE_WAY, 0.95))
REFERENCE_KINDS = ("limit", "trigger", "target")
LEVER_SCAN = 2049  # lever values scanned for sign changes of f(level; lever)


def reference_levels(scenario: Scenario) -> list[tuple[str, float]]:
    """The declared ``[reference]`` levels as (kind, level in state units)."""
    reference = scenario.reference
    if reference is None:
        return []
    found = [(kind, getattr(reference, kind)) for kind in REFERENCE_KINDS]
    return [(kind, float(level)) for kind, level in found if level is not None]


def _crossing(level: float, direction: float, terminal: bool) -> EventFunction:
    def event(_t: float, y: np.ndarray) -> float:
        return float(y[0] - level)

    event.direction = direction  # type: ignore[attr-defined]
    event.terminal = terminal  # type: ignore[attr-defined]
    return event


def _settles(attractor: float | None, level: float, tolerance: float) -> str | None:
    if attractor is None:
        return None
    if abs(attractor - level) <= tolerance:
        return "at"
    return "above" if attractor > level else "below"


def _run_times(
    model: Model,
    start: float,
    levels: Sequence[float],
    stops: Sequence[float],
    sign: float,
    equilibria: Sequence[Equilibrium],
) -> tuple[list[float | None], float]:
    """First crossing time of each level (None if not crossed) and the end time.

    The furthest level and the ``stops`` (the region's ends) end the run; the
    horizon starts at ``HORIZON_FACTOR`` time scales and doubles as needed.
    """
    low, high = model.region
    fun, jac = rate_functions(model)
    furthest = max(levels, key=lambda level: abs(level - start))
    events = [_crossing(level, sign, level == furthest) for level in levels]
    events += [_crossing(stop, sign, True) for stop in stops]
    found: list[float | None] = [None] * len(levels)
    span = max(abs(low), abs(high), high - low)
    end = HORIZON_FACTOR * time_scale(model, equilibria)
    t_end = 0.0
    for solution in segments(fun, jac, start, end, events, RTOL, ATOL_RELATIVE * span):
        if solution.status < 0:
            raise RuntimeError(f"the solver stopped: {solution.message}")
        for index, hits in enumerate(solution.t_events[: len(levels)]):
            if hits.size and found[index] is None:
                found[index] = float(hits[0])
        t_end = float(solution.t[-1])
    return found, t_end


def milestones_of(
    model: Model,
    start: float,
    levels: Sequence[tuple[str, float]],
    equilibria: Sequence[Equilibrium] | None = None,
    collapse_level: float | None = None,
) -> Milestones:
    """Milestones of ``model`` from ``start`` (state units): the crossings of ``levels``
    (kind, level) and the times to 50% and 95% of the way to the attractor."""
    low, high = model.region
    if equilibria is None:
        equilibria, _ = find_equilibria(model)
    floor = low if collapse_level is None else float(collapse_level)
    attractor = attractor_of(model, start, equilibria)
    tolerance = SAME * max(abs(low), abs(high), high - low)
    rate = float(model.f(start))
    if (attractor is not None and abs(attractor - start) <= tolerance) or rate == 0.0:
        marks = tuple(
            Milestone(kind, level, None, _settles(attractor, level, tolerance), "at rest today")
            for kind, level in levels
        )
        return Milestones(model.name, start, attractor, AT_REST, marks, 0.0, "at rest today")
    sign = 1.0 if rate > 0 else -1.0
    wanted = list(levels)
    if attractor is not None:
        wanted += [(kind, start + share * (attractor - start)) for kind, share in FRACTIONS]
        end, closed = attractor, False  # approached, never reached
    else:
        end, closed = (high if sign > 0 else floor), True

    def ahead(level: float) -> bool:
        beyond_start = sign * (level - start) > 0
        before_end = sign * (end - level) > 0 or (closed and level == end)
        return beyond_start and before_end

    reachable = [level for _, level in wanted if ahead(level)]
    times: dict[float, float | None] = {}
    end_time = 0.0
    if reachable:
        stops = [high] if sign > 0 else [floor]
        found, end_time = _run_times(model, start, reachable, stops, sign, equilibria)
        times = dict(zip(reachable, found, strict=True))
    marks = []
    for kind, level in wanted:
        time = times.get(level)
        note = ""
        if not ahead(level):
            side = "above" if start > level else "below"
            note = (
                f"today's state is already {side} it and moves away"
                if sign * (level - start) <= 0
                else f"the state settles at {attractor:.6g} before reaching it"
            )
        elif time is None:
            note = f"not reached within {end_time:.6g} {model.time_unit}"
        marks.append(Milestone(kind, level, time, _settles(attractor, level, tolerance), note))
    direction = RISING if sign > 0 else FALLING
    return Milestones(model.name, start, attractor, direction, tuple(marks), end_time)


def lever_settings(model: Model, levels: Sequence[tuple[str, float]]) -> tuple[LeverAtLevel, ...]:
    """For each (kind, level): the lever setting in its range at which the level is an
    equilibrium, nearest today's setting (scan for sign changes, then brentq)."""
    lever = model.lever
    if lever is None or lever not in model.ranges:
        return ()
    p_low, p_high = model.ranges[lever]
    grid = np.linspace(p_low, p_high, LEVER_SCAN)
    today = float(model.values[lever])
    names = model.parameters
    settings = []
    for kind, level in levels:
        arguments = [grid if n == lever else float(model.values[n]) for n in names]
        with np.errstate(all="ignore"):
            rates = np.asarray(model.numeric()(level, *arguments), dtype=float) + 0.0 * grid
        roots = list(grid[rates == 0.0])
        changes = np.nonzero(np.sign(rates[:-1]) * np.sign(rates[1:]) < 0)[0]

        def rate_at(value: float, at: float = level) -> float:
            return float(model.f(at, {lever: value}))

        roots += [brentq(rate_at, grid[i], grid[i + 1], xtol=1e-14, rtol=1e-14) for i in changes]
        if not roots:
            note = f"no {lever} in [{p_low:g}, {p_high:g}] holds the state at this level"
            settings.append(LeverAtLevel(kind, level, lever, None, None, note))
            continue
        value = float(min(roots, key=lambda root: abs(root - today)))
        slope = float(np.asarray(model.numeric(1)(level, *model.args({lever: value}))))
        settings.append(LeverAtLevel(kind, level, lever, value, slope < 0))
    return tuple(settings)


def _equilibria(model: Model) -> list[Equilibrium]:
    equilibria, _ = find_equilibria(model)
    if has_kinks(model):
        equilibria, _ = true_roots(model, equilibria)
    return equilibria


def milestone_table(
    scenario: Scenario, model: Model, equilibria: Sequence[Equilibrium]
) -> tuple[Milestones, ...]:
    """Milestones from today's state for the base ``model`` and every policy.

    Needs ``[state] current``; ``equilibria`` are the base model's (already found).
    """
    if model.current_state is None:
        raise ValueError("no current state: no milestones")
    start = float(model.current_state)
    levels = reference_levels(scenario)
    collapse_level = scenario.state.collapse_level
    base = milestones_of(model, start, levels, equilibria, collapse_level)
    rows = [replace(base, lever_settings=lever_settings(model, levels))]
    for policy in scenario.policies:
        policy_model = build_model(scenario, policy)
        rows.append(
            milestones_of(policy_model, start, levels, _equilibria(policy_model), collapse_level)
        )
    return tuple(rows)
