"""Figures derived from fitted parameters, for many parameter sets at once.

For each set: the lever limit (the largest lever value that keeps a stable
positive state, by the vectorised search of
:func:`sitegen.dynamics.uncertainty_roots.lever_limits`, the same one the Monte
Carlo uses), today's margin (limit minus today's lever setting, lever units;
positive on the safe side), MSY and B_MSY (the largest equilibrium yield on the
upper stable state over ``MSY_GRID`` lever values from the low end of the
lever's range up to the limit, refined by a parabola through the best point and
its neighbours). Where the yield is largest at the last grid lever (at the
limit itself, as for a fixed quota), MSY is the yield at the limit and B_MSY
the fold's state, extrapolated from the stable states at ``BELOW_FOLD`` and 4
``BELOW_FOLD`` below the limit with the square-root law of a fold,
x(L) = x_fold + c sqrt(L_fold - L) (Strogatz 2015, sec. 3.1): x_fold = 2 x_1 - x_4
(error of order ``BELOW_FOLD``; the two states are far enough from the fold for
the grid scan to resolve the two roots either side).
Units: lever values in the lever's unit, MSY in the yield's unit (state per
time), B_MSY in the state unit.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import sympy

from sitegen.dynamics.uncertainty_roots import lever_limits, upper_stable_states
from sitegen.model.model import Model

MSY_GRID = 41
BELOW_FOLD = 1e-4  # relative: the last grid lever sits this far below the limit
NAMES = ("lever_limit", "margin", "msy", "b_msy")


def derived_figures(
    model: Model, arguments: Sequence[np.ndarray | float], count: int
) -> dict[str, np.ndarray]:
    """Lever limit, margin, MSY and B_MSY per parameter set (NaN where they do not exist).

    ``arguments`` are the model's parameter arguments (arrays of length ``count``
    or floats), the lever's entry at today's setting.
    """
    assert model.lever is not None
    lever = model.parameters.index(model.lever)
    today = float(model.values[model.lever])
    limits, _, _ = lever_limits(model, arguments)
    limits = np.broadcast_to(limits, (count,)).astype(float)
    result = {"lever_limit": np.where(np.isfinite(limits), limits, np.nan)}
    result["margin"] = result["lever_limit"] - today
    result["msy"] = np.full(count, np.nan)
    result["b_msy"] = np.full(count, np.nan)
    if model.yield_ is None:
        return result
    low = float(model.ranges[model.lever][0])
    high = np.where(np.isfinite(limits), limits, float(model.ranges[model.lever][1]))
    has = np.isfinite(limits) | (limits == np.inf)
    share = np.linspace(0.0, 1.0, MSY_GRID)
    share[-1] = 1.0 - BELOW_FOLD
    grid = low + (high[:, None] - low) * share[None, :]  # (count, MSY_GRID)
    flat = [
        np.repeat(np.broadcast_to(a, (count,)), MSY_GRID) if i != lever else grid.ravel()
        for i, a in enumerate(arguments)
    ]
    near_fold = [
        np.broadcast_to(a, (count,)) if i != lever else low + (high - low) * (1 - 4 * BELOW_FOLD)
        for i, a in enumerate(arguments)
    ]
    states, _ = upper_stable_states(model, flat)
    farther, _ = upper_stable_states(model, near_fold)
    yield_function = sympy.lambdify(model.argument_symbols, model.yield_, modules="numpy")
    with np.errstate(all="ignore"):
        yields = np.asarray(yield_function(states, *flat), dtype=float) + 0.0 * states
    yields = np.where(np.isfinite(yields), yields, -np.inf).reshape(count, MSY_GRID)
    states = states.reshape(count, MSY_GRID)
    best = np.argmax(yields, axis=1)
    rows = np.arange(count)
    inner = (best > 0) & (best < MSY_GRID - 1)
    left, right = np.clip(best - 1, 0, MSY_GRID - 1), np.clip(best + 1, 0, MSY_GRID - 1)
    y0, y1, y2 = yields[rows, left], yields[rows, best], yields[rows, right]
    curvature = y0 - 2.0 * y1 + y2
    with np.errstate(all="ignore"):
        offset = np.where(inner & (curvature < 0), 0.5 * (y0 - y2) / curvature, 0.0)
    offset = np.clip(offset, -1.0, 1.0)
    msy = y1 - 0.25 * (y0 - y2) * offset
    neighbour = np.where(offset >= 0, right, left)
    b_msy = states[rows, best] + np.abs(offset) * (states[rows, neighbour] - states[rows, best])
    at_limit = (best == MSY_GRID - 1) & np.isfinite(limits)
    fold_state = 2.0 * states[:, -1] - farther
    limit_arguments = [
        np.broadcast_to(a, (count,)) if i != lever else high for i, a in enumerate(arguments)
    ]
    with np.errstate(all="ignore"):
        fold_yield = np.asarray(yield_function(fold_state, *limit_arguments), dtype=float)
    msy = np.where(at_limit, fold_yield + 0.0 * fold_state, msy)
    b_msy = np.where(at_limit, fold_state, b_msy)
    valid = has & np.isfinite(msy) & np.isfinite(b_msy)
    result["msy"] = np.where(valid, msy, np.nan)
    result["b_msy"] = np.where(valid, b_msy, np.nan)
    return result
