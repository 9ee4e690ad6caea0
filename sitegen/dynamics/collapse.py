"""Time to collapse once the lever is past a fold, beside the bottleneck estimate.

Past a saddle-node the stable state and its threshold have met and vanished,
but the rate stays small near where they met (the "ghost" of the lost state),
so the fall is slow there. Near the fold (x_f, p_f) the rate is, to leading
order, f ~ f_p (p - p_f) + (f_xx / 2)(x - x_f)^2, i.e. of the normal form
-(a + b y^2) with

    a = |f_p| |p - p_f|   (state per time),  b = |f_xx| / 2   (1 / (state time)),

whose passage time over the whole line is pi / sqrt(a b) (Strogatz 2015,
sec. 4.3). That estimate overstates a real collapse, which starts and ends at
finite states, so the integrated time from the actual start to the collapse
level is reported beside it.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from sitegen.analysis.bifurcations import SADDLE_NODE
from sitegen.analysis.equilibria import find_equilibria
from sitegen.analysis.records import STABLE, Bifurcation, Equilibrium
from sitegen.dynamics.direction import low_stable_states
from sitegen.dynamics.records import COLLAPSE, WITHIN_10, Collapse
from sitegen.dynamics.trajectories import integrate
from sitegen.model.model import Model
from sitegen.scenario.records import LOWER

POSITIVE = 1e-9  # of the region's width: a state this close to the lower end is not "positive"


def ghost_time(a: float, b: float) -> float:
    """pi / sqrt(a b): passage time of dx/dt = -(a + b x^2) over the whole line (time units)."""
    return math.pi / math.sqrt(a * b)


def stable_positive(model: Model, equilibria: Sequence[Equilibrium]) -> list[Equilibrium]:
    """Stable equilibria strictly above the region's lower end."""
    low, high = model.region
    return [
        e for e in equilibria if e.stability == STABLE and e.value > low + POSITIVE * (high - low)
    ]


def passed_fold(model: Model, bifurcations: Sequence[Bifurcation]) -> Bifurcation | None:
    """The saddle-node in the lever that today's setting lies beyond (nearest one).

    "Beyond" means on the side with fewer equilibria (the side ``more_equilibria``
    does not name).
    """
    lever = model.lever
    if lever is None:
        return None
    value = float(model.values[lever])
    candidates = []
    for fold in bifurcations:
        if fold.parameter != lever or fold.kind != SADDLE_NODE:
            continue
        beyond = (fold.more_equilibria == "below" and value > fold.parameter_value) or (
            fold.more_equilibria == "above" and value < fold.parameter_value
        )
        if beyond:
            candidates.append(fold)
    if not candidates:
        return None
    return min(candidates, key=lambda f: abs(value - f.parameter_value))


def normal_form(model: Model, fold: Bifurcation, lever_value: float) -> tuple[float, float]:
    """(a, b) of the local normal form at ``fold`` for the lever at ``lever_value``."""
    values = dict(model.values, **{fold.parameter: fold.parameter_value})
    args = model.args(values)
    with np.errstate(all="ignore"):
        f_p = float(model.numeric(0, (fold.parameter,))(fold.state_value, *args))
        f_xx = float(model.numeric(2)(fold.state_value, *args))
    return abs(f_p) * abs(lever_value - fold.parameter_value), abs(f_xx) / 2.0


def collapse_past_fold(
    model: Model,
    bifurcations: Sequence[Bifurcation],
    start: float | None = None,
    collapse_level: float | None = None,
    equilibria: Sequence[Equilibrium] | None = None,
) -> Collapse | None:
    """The collapse record at today's lever value, or None when there is no collapse.

    None when a stable positive state exists, or when no saddle-node in the lever
    has been passed. ``start`` defaults to today's state, else the fold's state
    (the former stable state where it was lost); ``collapse_level`` to the
    region's lower end. With ``better = "lower"`` it is a flip instead: None while
    a low stable state exists; the time is to within 10% of the high state, which
    is recorded as the level reached.
    """
    if model.lever is None:
        return None
    if equilibria is None:
        equilibria, _ = find_equilibria(model)
    lower = model.better == LOWER
    if lower:
        # A pollutant or pest: the danger is losing the low state, whatever else is stable.
        if np.isfinite(low_stable_states(model, list(model.args()))[0]):
            return None
    elif stable_positive(model, equilibria):
        return None
    fold = passed_fold(model, bifurcations)
    if fold is None:
        return None
    lever_value = float(model.values[model.lever])
    a, b = normal_form(model, fold, lever_value)
    ghost = ghost_time(a, b) if a > 0 and b > 0 else math.inf
    if start is None:
        start = model.current_state if model.current_state is not None else fold.state_value
    trajectory = integrate(model, float(start), equilibria, collapse_level)
    taken = trajectory.time_of(COLLAPSE)
    level = trajectory.collapse_level
    note = ""
    if lower:
        # The flip ends near the high state: time to come within 10% of it.
        taken = trajectory.time_of(WITHIN_10)
        level = trajectory.attractor if trajectory.attractor is not None else model.region[1]
        if taken is None:
            note = (
                f"the state does not settle near a high state from this start ({trajectory.fate})"
            )
        elif fold.state_value < start:
            note = "the start lies above the ghost of the lost low state: no bottleneck is crossed"
    elif taken is None:
        note = f"the state does not reach the collapse level from this start ({trajectory.fate})"
    elif fold.state_value > start:
        note = "the start lies below the ghost of the lost state, so the bottleneck is not crossed"
    return Collapse(
        model.lever,
        lever_value,
        fold.parameter_value,
        fold.state_value,
        abs(lever_value - fold.parameter_value),
        a,
        b,
        ghost,
        taken,
        float(start),
        level,
        note,
    )
