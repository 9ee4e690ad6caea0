"""Recovery after a shock, and hysteresis: where the lever must go back to after a collapse.

Recovery: the stable state x* loses the fraction ``shock`` of itself (default
0.5, the scenario's ``[model] shock``); the run from (1 - shock) x* gives the
time to come back within 10% (and 1%) of x*, in the model's time unit, beside
the linear return time 1/|f'(x*)|. A start below a threshold collapses
instead, and the record says so. With ``[state] better = "lower"`` (a
pollutant, a nutrient, a pest) the harmful disturbance is a pulse upward (a
spill, a storm's load, an influx), so the shock is a rise: the run starts
from (1 + shock) x*, capped at the region's upper end.

:func:`shock_note` says when the test does not apply at all: when today's
state is already farther from its stable state than the shock would move it
(a cold room warming towards the outside air, a body speeding up to its
terminal velocity). Today's state is then itself the larger disturbance, the
run from it answers the recovery question directly (see
:mod:`sitegen.dynamics.milestones`), and a fractional loss of a temperature or
a speed has no meaning of its own.

Hysteresis: past a fold the state goes to another attractor (the "collapsed
state": another stable state, or the collapse level when none lies that way).
Moving the lever back past the first fold does not undo this; the collapsed
state persists until it in turn vanishes, at the other fold of the same
S-shaped branch structure (taken from the bifurcation records), or, where the
state sits at the collapse level, where the rate there turns to point back
(f(level; p) > 0 for a fall). If that happens nowhere inside the lever's range
the loss is irreversible there.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy.optimize import brentq

from sitegen.analysis.bifurcations import SADDLE_NODE
from sitegen.analysis.equilibria import find_equilibria
from sitegen.analysis.records import STABLE, Bifurcation, Equilibrium
from sitegen.dynamics.collapse import passed_fold, stable_positive
from sitegen.dynamics.records import WITHIN_1, WITHIN_10, Hysteresis, Recovery
from sitegen.dynamics.trajectories import attractor_of, integrate
from sitegen.model.model import Model
from sitegen.scenario.records import LOWER

DEFAULT_SHOCK = 0.5
PAST_STEP = 1e-6  # of the lever's range: "just past the fold"
SCAN_POINTS = 2049  # lever values scanned for the rate at the collapse level to turn


def current_stable_state(model: Model, equilibria: Sequence[Equilibrium]) -> Equilibrium | None:
    """The stable positive state today's state tends to, else the largest stable positive one.

    With ``better = "lower"`` (a pollutant or pest) the lowest stable positive state,
    the one to protect, whichever state today's tends to.
    """
    candidates = stable_positive(model, equilibria)
    if not candidates:
        return None
    if model.better == LOWER:
        return candidates[0]
    if model.current_state is not None:
        target = attractor_of(model, model.current_state, equilibria)
        for equilibrium in candidates:
            if equilibrium.value == target:
                return equilibrium
    return candidates[-1]


def recovery_after_shock(
    model: Model,
    shock: float = DEFAULT_SHOCK,
    equilibria: Sequence[Equilibrium] | None = None,
    collapse_level: float | None = None,
) -> Recovery | None:
    """Recovery record after removing ``shock`` (0..1) of the stable state; None without one."""
    if equilibria is None:
        equilibria, _ = find_equilibria(model)
    stable = current_stable_state(model, equilibria)
    if stable is None:
        return None
    low, high = model.region
    if model.better == LOWER:
        start = min(high, (1.0 + shock) * stable.value)
    else:
        start = max(low, (1.0 - shock) * stable.value)
    trajectory = integrate(model, start, equilibria, collapse_level)
    reached = trajectory.attractor == stable.value
    note = (
        ""
        if reached
        else (f"after the shock the state lies beyond a threshold and {trajectory.fate} instead")
    )
    return Recovery(
        shock,
        stable.value,
        start,
        trajectory.time_of(WITHIN_10) if reached else None,
        trajectory.time_of(WITHIN_1) if reached else None,
        stable.return_time,
        trajectory.fate,
        note,
    )


def shock_note(model: Model, shock: float, equilibria: Sequence[Equilibrium]) -> str | None:
    """Why the shock test does not apply (see the module docstring), or None when it does."""
    if model.current_state is None:
        return None
    stable = current_stable_state(model, equilibria)
    if stable is None:
        return None
    today = float(model.current_state)
    if attractor_of(model, today, equilibria) != stable.value:
        return None
    if abs(today - stable.value) <= shock * abs(stable.value):
        return None
    unit = model.state_unit
    return (
        f"today's state {today:.6g} {unit} is farther from its stable state "
        f"{stable.value:.6g} {unit} than "
        f"a shock of {100 * shock:.3g}% would move it: the run from today is the recovery, "
        "timed under the milestones, and no separate shock test is made"
    )


def _collapsed_state(
    model: Model, fold: Bifurcation, past: float, collapse_level: float | None
) -> tuple[float, float, bool]:
    """(collapsed state, flow direction at the fold state, True if it is an end level)."""
    low, high = model.region
    values = {fold.parameter: past}
    with np.errstate(all="ignore"):
        direction = float(np.sign(model.f(fold.state_value, values)))
    equilibria, _ = find_equilibria(model, values)
    stable = [e.value for e in equilibria if e.stability == STABLE]
    if direction < 0:
        below = [
            x
            for x in stable
            if x < fold.state_value and (collapse_level is None or x > collapse_level)
        ]
        if below:
            return max(below), direction, False
        return (low if collapse_level is None else collapse_level), direction, True
    above = [x for x in stable if x > fold.state_value]
    return (min(above) if above else high), direction, not above


def _rate_turns(
    model: Model, lever: str, level: float, direction: float, start: float, stop: float
) -> float | None:
    """First lever value from ``start`` towards ``stop`` where the rate at ``level``
    points back (sign opposite to ``direction``), refined by brentq; None if none."""
    grid = np.linspace(start, stop, SCAN_POINTS)
    with np.errstate(all="ignore"):
        rates = np.asarray(model.numeric()(level, *_args_over(model, lever, grid)), dtype=float)
        rates = rates + 0.0 * grid
    back = np.nonzero(-direction * rates > 0)[0]
    if back.size == 0:
        return None
    first = int(back[0])
    if first == 0:
        return float(grid[0])

    def rate_at(value: float) -> float:
        return float(model.f(level, {lever: value}))

    return float(brentq(rate_at, grid[first - 1], grid[first], xtol=1e-14, rtol=1e-14))


def _args_over(model: Model, lever: str, grid: np.ndarray) -> list[np.ndarray | float]:
    """Model arguments with the lever replaced by an array (broadcast by NumPy)."""
    return [grid if name == lever else float(model.values[name]) for name in model.parameters]


def hysteresis(
    model: Model,
    bifurcations: Sequence[Bifurcation],
    fold: Bifurcation | None = None,
    collapse_level: float | None = None,
) -> Hysteresis | None:
    """Where the lost state returns after passing ``fold`` (default: the fold today's
    lever lies beyond). None when no fold in the lever has been passed."""
    lever = model.lever
    if lever is None or lever not in model.ranges:
        return None
    if fold is None:
        fold = passed_fold(model, bifurcations)
    if fold is None:
        return None
    p_low, p_high = model.ranges[lever]
    back = -1.0 if fold.more_equilibria == "below" else 1.0  # the safe direction
    past = fold.parameter_value - back * PAST_STEP * (p_high - p_low)
    collapsed, direction, at_level = _collapsed_state(model, fold, past, collapse_level)
    if at_level:
        stop = p_low if back < 0 else p_high
        value = _rate_turns(model, lever, collapsed, direction, fold.parameter_value, stop)
    else:
        others = [
            b
            for b in bifurcations
            if b.parameter == lever
            and b.kind == SADDLE_NODE
            and b is not fold
            and back * (b.parameter_value - fold.parameter_value) > 0
            and direction * (b.state_value - fold.state_value) > 0
        ]
        nearest = min(
            others, key=lambda b: abs(b.parameter_value - fold.parameter_value), default=None
        )
        value = None if nearest is None else nearest.parameter_value
    if value is None:
        note = (
            f"no setting of {lever} inside its range [{p_low:g}, {p_high:g}] brings the "
            "lost state back: the loss is irreversible there"
        )
        return Hysteresis(
            lever, fold.parameter_value, fold.state_value, collapsed, None, None, True, note
        )
    distance = abs(value - fold.parameter_value)
    note = (
        f"the state lost at {lever} = {fold.parameter_value:.6g} returns only once {lever} "
        f"is brought back to {value:.6g}, {distance:.6g} beyond the first fold"
    )
    return Hysteresis(
        lever, fold.parameter_value, fold.state_value, collapsed, value, distance, False, note
    )
