"""How far the lever may go, the sustainable yield along the stable branch, stock status, rent.

Everything here follows the continued stable branch of the lever (from
:func:`sitegen.analysis.continuation.continue_equilibria`): the run of stable
points above the region's lower end that holds today's stable state. Where
that run ends inside the lever's range (a fold, a transcritical point, or the
state reaching the lower end) is the tipping point; its value is taken from
the refined bifurcation record when one matches.

Units: lever values in the lever's unit, states in the state unit, yields in
state per time unit, rent in currency per time unit (rent = price * yield -
cost * lever). Margins are positive while today's setting is on the safe side.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import sympy
from scipy.optimize import brentq, minimize_scalar, newton

from sitegen.analysis.equilibria import find_equilibria
from sitegen.analysis.records import Bifurcation, Branch, Equilibrium
from sitegen.dynamics.records import (
    EconomicYield,
    LeverLimit,
    StockStatus,
    SustainableYield,
)
from sitegen.dynamics.recovery import current_stable_state
from sitegen.model.model import Model
from sitegen.scenario.records import Economics, ReferencePoints

POSITIVE = 1e-9  # of the region's width: closer to the lower end is not a positive state
EDGE = 1e-9  # of the lever's range: a run ending this close to a range end is cut off there
MATCH = 1e-4  # of the range / region: a bifurcation record this close is the run's end
NEAR = 0.02  # of the lever's range: how far beyond the last branch point a fold may turn
REFINE_XATOL = 1e-12  # of the lever's range, for minimize_scalar on the branch
COMMON_PRACTICE = "half of B_MSY (common practice, no single source)"
DECLARED = "[reference] limit"
END_OF_REGION = "reaches the lower end"


@dataclass(frozen=True)
class StableRun:
    """A run of stable positive branch points, sorted by lever value.

    ``low_end`` / ``high_end`` give, for each end, the kind of point that ends
    the run there (None where it is cut off by the lever's range) and its
    refined (lever, state) values.
    """

    lever_values: np.ndarray
    states: np.ndarray
    low_end: tuple[str | None, float, float]
    high_end: tuple[str | None, float, float]

    def state_near(self, value: float) -> float:
        """Interpolated stable state at a lever value (a guess for Newton)."""
        return float(np.interp(value, self.lever_values, self.states))


Run = tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]


def _runs_of(model: Model, branch: Branch) -> list[Run]:
    """Contiguous stable positive stretches of one branch.

    Each is (lever values, states, point just before, point just after) where the
    outside points are the branch's neighbours of the run's ends (a copy of the
    end itself where the branch stops there): the special point ending the run
    lies between an end and its neighbour.
    """
    low, high = model.region
    keep = branch.stable & (branch.state_values > low + POSITIVE * (high - low))
    edges = np.flatnonzero(np.diff(np.concatenate([[0], keep.astype(int), [0]])))
    points = np.column_stack([branch.parameter_values, branch.state_values])
    last = len(points) - 1
    return [
        (
            branch.parameter_values[a:b],
            branch.state_values[a:b],
            points[max(a - 1, 0)],
            points[min(b, last)],
        )
        for a, b in zip(edges[::2], edges[1::2], strict=True)
        if b - a >= 2
    ]


def _end(
    model: Model,
    bifurcations: Sequence[Bifurcation],
    lever_value: float,
    state: float,
    neighbour: np.ndarray,
) -> tuple[str | None, float, float]:
    """What ends a run at (lever_value, state): None at a range end, else the kind
    of the bifurcation record between the end and its outside neighbour."""
    lever = model.lever
    assert lever is not None
    p_low, p_high = model.ranges[lever]
    p_width = p_high - p_low
    x_width = model.region[1] - model.region[0]
    if min(abs(lever_value - p_low), abs(lever_value - p_high)) <= EDGE * p_width:
        return None, float(lever_value), float(state)
    # The state of the special point lies between the end and its neighbour; at a fold
    # the parameter turns there, so it may lie a little beyond both points.
    x_slack = MATCH * x_width
    x_lo, x_hi = sorted((state, float(neighbour[1])))
    p_lo, p_hi = sorted((lever_value, float(neighbour[0])))
    matches = [
        b
        for b in bifurcations
        if b.parameter == lever
        and p_lo - NEAR * p_width <= b.parameter_value <= p_hi + NEAR * p_width
        and x_lo - x_slack <= b.state_value <= x_hi + x_slack
    ]
    if matches:
        best = min(matches, key=lambda b: abs(b.parameter_value - lever_value))
        return best.kind, float(best.parameter_value), float(best.state_value)
    # Without a bifurcation the run ends only by reaching the lower end inside the range;
    # a run leaving the region at its top, or meeting the lower end at the range's end
    # (a pollutant gone at zero loading), is cut off, not tipped.
    low = model.region[0]
    reaches_low = min(state, float(neighbour[1])) <= low + MATCH * x_width
    at_range_end = min(abs(neighbour[0] - p_low), abs(neighbour[0] - p_high)) <= EDGE * p_width
    if not reaches_low or at_range_end:
        return None, float(lever_value), float(state)
    return END_OF_REGION, float(lever_value), float(state)


def stable_run(
    model: Model,
    branches: Sequence[Branch],
    bifurcations: Sequence[Bifurcation],
    equilibria: Sequence[Equilibrium] | None = None,
) -> StableRun | None:
    """The stable positive run holding today's stable state (or nearest today's lever)."""
    lever = model.lever
    if lever is None or lever not in model.ranges:
        return None
    runs = [
        run for branch in branches if branch.parameter == lever for run in _runs_of(model, branch)
    ]
    if not runs:
        return None
    if equilibria is None:
        equilibria, _ = find_equilibria(model)
    today = float(model.values[lever])
    stable = current_stable_state(model, equilibria)
    p_width = model.ranges[lever][1] - model.ranges[lever][0]
    x_width = model.region[1] - model.region[0]

    def distance(run: Run) -> float:
        order = np.argsort(run[0])
        values, states = run[0][order], run[1][order]
        lever_gap = max(values[0] - today, today - values[-1], 0.0) / p_width
        if stable is None or lever_gap > 0:
            return 1.0 + lever_gap
        return abs(float(np.interp(today, values, states)) - stable.value) / x_width

    values, states, before, after = min(runs, key=distance)
    if values[0] > values[-1]:  # traced with the lever decreasing
        values, states, before, after = values[::-1], states[::-1], after, before
    return StableRun(
        values,
        states,
        _end(model, bifurcations, values[0], states[0], before),
        _end(model, bifurcations, values[-1], states[-1], after),
    )


def lever_limit(model: Model, run: StableRun | None) -> LeverLimit | None:
    """The tipping setting of the lever nearest today's, with today's margin to it.

    None when the stable run spans the whole range (no tipping point inside it).
    """
    if run is None or model.lever is None:
        return None
    today = float(model.values[model.lever])
    ends = [("smallest", run.low_end), ("largest", run.high_end)]
    limits = [(direction, end) for direction, end in ends if end[0] is not None]
    if not limits:
        return None
    direction, (kind, value, state) = min(limits, key=lambda item: abs(item[1][1] - today))
    margin = value - today if direction == "largest" else today - value
    percent = 100.0 * margin / abs(value) if value != 0 else None
    return LeverLimit(
        model.lever,
        direction,
        value,
        str(kind),
        state,
        today,
        margin,
        percent,
        (run.low_end[1], run.high_end[1]),
    )


def _yield_function(model: Model, expr: sympy.Expr) -> Callable[..., np.ndarray]:
    return sympy.lambdify(model.argument_symbols, expr, modules="numpy")


def _state_on_run(model: Model, run: StableRun, value: float) -> float:
    """The stable state at lever ``value`` by Newton from the branch's interpolation."""
    assert model.lever is not None
    args = model.args({model.lever: value})
    rate, slope = model.numeric(), model.numeric(1)
    guess = run.state_near(value)
    width = model.region[1] - model.region[0]
    with np.errstate(all="ignore"):
        return float(
            newton(
                lambda x: float(rate(x, *args)),
                guess,
                fprime=lambda x: float(slope(x, *args)),
                tol=1e-15 * width,
                rtol=1e-14,
                maxiter=100,
            )
        )


def _along_run(
    model: Model, run: StableRun, expr: sympy.Expr
) -> tuple[Callable[[float], float], np.ndarray]:
    """A scalar function of the lever along the run, and its values at the run's points."""
    function = _yield_function(model, expr)
    lever = model.lever
    assert lever is not None
    names = model.parameters
    columns = [run.lever_values if n == lever else float(model.values[n]) for n in names]
    with np.errstate(all="ignore"):
        sampled = np.asarray(function(run.states, *columns), dtype=float) + 0.0 * run.states

    def at(value: float) -> float:
        state = _state_on_run(model, run, value)
        return float(function(state, *model.args({lever: value})))

    return at, sampled


def _maximise(
    model: Model, run: StableRun, at: Callable[[float], float], sampled: np.ndarray
) -> tuple[float, bool]:
    """Lever value of the maximum of ``at`` along the run, and whether it is at an end."""
    assert model.lever is not None
    p_low, p_high = model.ranges[model.lever]
    best = int(np.argmax(sampled))
    count = run.lever_values.size
    if best == count - 1 and run.high_end[0] is not None:
        return run.high_end[1], True
    if best == 0 and run.low_end[0] is not None:
        return run.low_end[1], True
    left = run.lever_values[max(best - 1, 0)]
    right = run.lever_values[min(best + 1, count - 1)]
    found = minimize_scalar(
        lambda v: -at(v),
        bounds=(left, right),
        method="bounded",
        options={"xatol": REFINE_XATOL * (p_high - p_low)},
    )
    return float(found.x), False


def sustainable_yield(
    model: Model, run: StableRun | None, equilibria: Sequence[Equilibrium] | None = None
) -> SustainableYield | None:
    """MSY along the stable run; None without a declared yield or a stable run."""
    if run is None or model.yield_ is None or model.lever is None:
        return None
    at, sampled = _along_run(model, run, model.yield_)
    value, at_fold = _maximise(model, run, at, sampled)
    if at_fold:
        end = run.high_end if value == run.high_end[1] else run.low_end
        state = end[2]
        msy = float(_yield_function(model, model.yield_)(state, *model.args({model.lever: value})))
    else:
        state = _state_on_run(model, run, value)
        msy = at(value)
    if equilibria is None:
        equilibria, _ = find_equilibria(model)
    stable = current_stable_state(model, equilibria)
    today = None
    if stable is not None:
        today = float(_yield_function(model, model.yield_)(stable.value, *model.args()))
    return SustainableYield(model.lever, msy, value, state, today, at_fold)


def stock_status(
    current: float, msy: SustainableYield, reference: ReferencePoints | None = None
) -> StockStatus:
    """Today's state against B_MSY and the limit ([reference] limit, else B_MSY / 2)."""
    if reference is not None and reference.limit is not None:
        limit, source = reference.limit, DECLARED
    else:
        limit, source = 0.5 * msy.state_at_msy, COMMON_PRACTICE
    return StockStatus(
        current,
        msy.state_at_msy,
        current / msy.state_at_msy,
        limit,
        source,
        current / limit if limit else float("inf"),
        current < limit,
    )


def economic_yield(
    model: Model, run: StableRun | None, economics: Economics | None, msy: SustainableYield | None
) -> EconomicYield | None:
    """Open access (rent zero) and MEY along the stable run, beside MSY."""
    if run is None or economics is None or msy is None or model.yield_ is None:
        return None
    lever = model.symbol(str(model.lever))
    rent_expr = economics.price * model.yield_ - economics.cost * lever
    rent_at, rent_sampled = _along_run(model, run, rent_expr)
    yield_at, _ = _along_run(model, run, model.yield_)
    mey_lever, _ = _maximise(model, run, rent_at, rent_sampled)
    open_lever = open_state = open_yield = None
    # Open access: where rent falls from positive to zero beyond the MEY lever.
    beyond = run.lever_values > mey_lever
    values, rents = run.lever_values[beyond], rent_sampled[beyond]
    crossing = np.flatnonzero(rents <= 0)
    if crossing.size:
        k = int(crossing[0])
        left = values[k - 1] if k > 0 else mey_lever
        open_lever = float(brentq(rent_at, left, values[k], xtol=1e-12, rtol=1e-14))
        open_state = _state_on_run(model, run, open_lever)
        open_yield = yield_at(open_lever)
    return EconomicYield(
        economics.price,
        economics.cost,
        economics.currency,
        open_lever,
        open_state,
        open_yield,
        mey_lever,
        _state_on_run(model, run, mey_lever),
        yield_at(mey_lever),
        rent_at(mey_lever),
        msy.msy,
        msy.lever_at_msy,
    )
