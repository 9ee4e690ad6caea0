"""Equilibrium branches against one parameter, and their folds and branch points.

Branches are traced with the pseudo-arclength engine of :mod:`sitegen.analysis.arclength`
(re-exported here) in u = (state, parameter), the state in the model's state unit and the
parameter in its own unit, inside the box (parameter range) x (model.region). The Jacobian
(f_x, f_p) and the refinement systems use the model's analytic derivatives. A point is stable
where f_x < 0 (f_x in 1/time_unit); where f_x = 0 exactly it is not marked stable.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import sympy
from scipy.optimize import brentq

from sitegen.analysis.arclength import (
    BOX_SLACK,
    StepControl,
    SystemMap,
    Trace,
    extended_newton,
    null_tangent,
    trace_curve,
)
from sitegen.analysis.records import Branch
from sitegen.analysis.scan import scan_grid, scan_roots
from sitegen.model.model import Model, NumericFunction

__all__ = [
    "RateFunctions",
    "SpecialPoint",
    "StepControl",
    "SystemMap",
    "Trace",
    "continue_equilibria",
    "null_tangent",
    "seed_values",
    "trace_curve",
]

EDGE = 1e-9  # scaled: special points this close to a parameter-range end are cut-off artefacts
SEED_VALUES = 13  # parameter values seeded with scan_roots (>= 9 so isolated branches are seen)
SEED_OFFSET = 0.381966  # irrational-ish offset: interior seeds avoid symmetric points like p = 0
RESIDUAL = 1e-9  # accepted residual of refined points, as a displacement in box widths
SAME_POINT = 1e-7  # scaled distance under which two special points are one


class RateFunctions:
    """f and its derivatives with some parameters free and the others at the model's values.

    ``rate(x_order, wrt, state, *free_values)`` broadcasts over its array arguments.
    Derivatives of min/max/abs contain DiracDelta, which NumPy cannot evaluate; it is zero away
    from the kink, and at the kink f_x jumps anyway, so it is replaced by 0 here.
    """

    def __init__(self, model: Model, free: Sequence[str]) -> None:
        self.model = model
        self.slots = [model.parameters.index(name) for name in free]
        self.base = list(model.args())
        self._functions: dict[tuple[int, tuple[str, ...]], NumericFunction] = {}

    def function(self, x_order: int, wrt: tuple[str, ...]) -> NumericFunction:
        key = (x_order, wrt)
        if key not in self._functions:
            expr = self.model.derivative(x_order, wrt)
            if expr.has(sympy.DiracDelta):
                expr = expr.replace(sympy.DiracDelta, lambda *_: sympy.S.Zero)
                self._functions[key] = sympy.lambdify(self.model.argument_symbols, expr, "numpy")
            else:
                self._functions[key] = self.model.numeric(x_order, wrt)
        return self._functions[key]

    def __call__(
        self,
        x_order: int,
        wrt: tuple[str, ...],
        state: np.ndarray | float,
        *free_values: np.ndarray | float,
    ) -> np.ndarray:
        function = self._functions.get((x_order, wrt)) or self.function(x_order, wrt)
        args: list[object] = self.base.copy()
        for slot, value in zip(self.slots, free_values, strict=True):
            args[slot] = value
        with np.errstate(all="ignore"):
            out = np.asarray(function(state, *args), dtype=float)
        # A derivative free of some argument (f_p = -1) comes back smaller: broadcast it.
        if np.ndim(state) or any(np.ndim(v) for v in free_values):
            shape = np.broadcast_shapes(np.shape(state), *(np.shape(v) for v in free_values))
            if out.shape != shape:
                out = out + np.zeros(shape)
        return out


@dataclass(frozen=True)
class SpecialPoint:
    """Where f_x changes sign along a branch: a fold (``turning``) or a branch point.

    ``parameter_value`` is in the parameter's unit, ``state_value`` in the state unit.
    """

    parameter: str
    parameter_value: float
    state_value: float
    turning: bool


def seed_values(low: float, high: float, count: int = SEED_VALUES) -> np.ndarray:
    """Both ends of [low, high] and count - 2 interior values at irregular positions."""
    inner = (np.arange(count - 2) + SEED_OFFSET) / (count - 2)
    return np.concatenate([[low], low + (high - low) * inner, [high]])


def newton_states(rate: RateFunctions, x: np.ndarray, *values: np.ndarray) -> np.ndarray:
    """Vectorised Newton on f(., values) = 0 from x (8 steps; non-finite steps skipped)."""
    for _ in range(8):
        with np.errstate(all="ignore"):
            step = rate(0, (), x, *values) / rate(1, (), x, *values)
        x = x - np.where(np.isfinite(step), step, 0.0)
    return x


def _on_branch(
    rate: RateFunctions,
    name: str,
    trace: Trace,
    seed: np.ndarray,
    low: np.ndarray,
    width: np.ndarray,
) -> bool:
    """Whether a seed (x, p), itself an equilibrium, lies on a traced branch.

    For each chord near the seed (scaled), Newton along the line from the chord's nearest point
    through the seed finds the branch point that the chord stands for; the seed is on the branch
    when that point is the seed. Unlike interpolating at the seed's p, this works next to a
    fold, where chords cut the tip off.
    """
    s = (trace.points - low) / width
    target = (seed - low) / width
    a, d = s[:-1], s[1:] - s[:-1]
    with np.errstate(invalid="ignore", divide="ignore"):
        w = np.nan_to_num(np.clip(np.sum((target - a) * d, axis=1) / np.sum(d * d, axis=1), 0, 1))
    foot = a + w[:, None] * d
    gap = np.linalg.norm(target - foot, axis=1)
    if np.any(gap <= SAME_POINT):
        return True
    near = gap <= 0.05  # chord errors are far smaller; other branches this close are polished
    if not np.any(near):
        return False
    normal = (target - foot[near]) / gap[near, None]
    tau = -gap[near]  # start on the chord: target + tau * normal is the foot
    for _ in range(10):
        u = low + width * (target + tau[:, None] * normal)
        slope = (
            rate(1, (), u[:, 0], u[:, 1]) * normal[:, 0] * width[0]
            + rate(0, (name,), u[:, 0], u[:, 1]) * normal[:, 1] * width[1]
        )
        with np.errstate(all="ignore"):
            step = rate(0, (), u[:, 0], u[:, 1]) / slope
        step = np.where(np.isfinite(step), step, 0.0)
        tau = tau - step
        if np.max(np.abs(step)) <= 1e-3 * SAME_POINT:  # settled well below the decision scale
            break
    return bool(np.any(np.abs(tau) <= SAME_POINT))


def _refine_fold(
    rate: RateFunctions, name: str, start: np.ndarray, width: np.ndarray
) -> np.ndarray | None:
    """Newton on (f, f_x) = 0 in (x, p), in scaled steps; None unless it truly vanishes."""

    def system(v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        x, p = v
        values = np.array([rate(0, (), x, p), rate(1, (), x, p)])
        jacobian = np.array(
            [
                [rate(1, (), x, p), rate(0, (name,), x, p)],
                [rate(2, (), x, p), rate(1, (name,), x, p)],
            ]
        )
        return values, jacobian

    u = extended_newton(system, start, width)
    if u is None:
        return None
    x, p = u
    scale_f = abs(rate(1, (), x, p)) * width[0] + abs(rate(0, (name,), x, p)) * width[1]
    scale_fx = abs(rate(2, (), x, p)) * width[0] + abs(rate(1, (name,), x, p)) * width[1]
    if abs(rate(0, (), x, p)) > RESIDUAL * scale_f or abs(rate(1, (), x, p)) > RESIDUAL * scale_fx:
        return None
    return u


def _refine_branch_point(
    rate: RateFunctions, name: str, a: np.ndarray, b: np.ndarray, width: np.ndarray
) -> np.ndarray | None:
    """brentq on f_x(x(p), p) = 0 between the points a and b, x(p) by Newton on f."""
    if a[1] == b[1]:
        return None

    def state_at(p: float) -> float:
        guess = a[0] + (p - a[1]) / (b[1] - a[1]) * (b[0] - a[0])
        return float(newton_states(rate, np.array([guess]), np.array([p]))[0])

    def slope(p: float) -> float:
        return float(rate(1, (), state_at(p), p))

    ends = slope(a[1]), slope(b[1])
    if not (np.all(np.isfinite(ends)) and ends[0] * ends[1] < 0):
        return None
    p = brentq(
        slope, min(a[1], b[1]), max(a[1], b[1]), xtol=1e-15 * width[1], rtol=1e-15, maxiter=200
    )
    x = state_at(p)
    jump = abs(ends[0]) + abs(ends[1])  # a kink leaves |f_x| near half the jump: refused
    scale_f = max(
        abs(rate(1, (), v[0], v[1])) * width[0] + abs(rate(0, (name,), v[0], v[1])) * width[1]
        for v in (a, b)
    )
    if abs(slope(p)) > RESIDUAL * jump or abs(rate(0, (), x, p)) > RESIDUAL * scale_f:
        return None
    return np.array([x, p])


def _special_points(
    rate: RateFunctions, name: str, trace: Trace, low: np.ndarray, width: np.ndarray
) -> list[SpecialPoint]:
    """Folds and branch points where f_x changes sign between points of a trace."""
    x, p = trace.points[:, 0], trace.points[:, 1]
    fx = rate(1, (), x, p)
    usable = np.flatnonzero(np.isfinite(fx) & (fx != 0))  # zeros skipped: compare across them
    first, second = usable[:-1], usable[1:]
    found: list[SpecialPoint] = []
    for i, j in zip(
        first[fx[first] * fx[second] < 0], second[fx[first] * fx[second] < 0], strict=True
    ):
        turning = bool(trace.tangents[i, 1] * trace.tangents[j, 1] < 0)
        a, b = trace.points[i], trace.points[j]
        u = (
            _refine_fold(rate, name, 0.5 * (a + b), width)
            if turning
            else _refine_branch_point(rate, name, a, b, width)
        )
        if u is None:
            continue  # f_x jumped across zero (a kink of a non-smooth rate), or no convergence
        s = (u - low) / width
        near = np.linalg.norm((u - 0.5 * (a + b)) / width) <= np.linalg.norm((b - a) / width) + 1e-6
        inside = np.all(s >= -BOX_SLACK) and np.all(s <= 1 + BOX_SLACK)
        at_edge = min(abs(s[1]), abs(1 - s[1])) <= EDGE
        if near and inside and not at_edge:
            found.append(SpecialPoint(name, float(u[1]), float(u[0]), turning))
    return found


def _seed_states(model: Model, rate: RateFunctions, parameter: str, value: float) -> np.ndarray:
    """Equilibria at one parameter value: ``scan_roots``, or sign changes on its grid.

    The fallback serves rates that ``scan_roots`` cannot evaluate (it may need f'', which for
    min/max rules holds DiracDelta). Seeds are polished by Newton so that the check for seeds
    already on a traced branch can tell them apart.
    """
    try:
        return scan_roots(model, {parameter: value})
    except (NameError, TypeError, ValueError, ZeroDivisionError):
        grid = scan_grid(*model.region)
        f = rate(0, (), grid, value)
        i = np.flatnonzero(np.isfinite(f[:-1]) & np.isfinite(f[1:]) & (f[:-1] * f[1:] < 0))
        crossings = grid[i] - f[i] * (grid[i + 1] - grid[i]) / (f[i + 1] - f[i])
        polished = newton_states(rate, crossings, np.full(crossings.size, value))
        return np.concatenate([grid[f == 0], polished[np.isfinite(polished)]])


def continue_equilibria(
    model: Model, parameter: str, control: StepControl | None = None
) -> tuple[tuple[Branch, ...], tuple[SpecialPoint, ...]]:
    """All equilibrium branches in (parameter range) x (model.region), and their special points.

    Seeds come from ``scan_roots`` at :data:`SEED_VALUES` parameter values (ends included), so
    branches not connected to each other are all found; a seed already on a traced branch is
    skipped. Special points are where f_x changes sign: folds (the parameter turns round;
    refined by Newton on (f, f_x) = 0) and branch points (transcritical or pitchfork, where
    f_p = 0 too; refined by brentq on f_x along the branch). Each is reported once, sorted by
    parameter value; points at an end of the parameter range are cut-off artefacts, not
    reported.
    """
    if parameter not in model.ranges:
        raise ValueError(f"parameter '{parameter}' has no range to continue over")
    p_low, p_high = model.ranges[parameter]
    low = np.array([model.region[0], p_low], dtype=float)
    high = np.array([model.region[1], p_high], dtype=float)
    width = high - low
    rate = RateFunctions(model, (parameter,))

    def residual(u: np.ndarray) -> np.ndarray:
        return rate(0, (), u[0], u[1])[None]

    def jacobian(u: np.ndarray) -> np.ndarray:
        return np.stack([rate(1, (), u[0], u[1]), rate(0, (parameter,), u[0], u[1])])[None]

    traces: list[Trace] = []
    for value in seed_values(p_low, p_high):
        for root in _seed_states(model, rate, parameter, float(value)):
            seed = np.array([root, value])
            if any(_on_branch(rate, parameter, trace, seed, low, width) for trace in traces):
                continue
            trace = trace_curve(residual, jacobian, seed, low, high, control)
            if trace is not None and len(trace.points) > 1:
                traces.append(trace)
    points: list[SpecialPoint] = []
    for trace in traces:
        for point in _special_points(rate, parameter, trace, low, width):
            if not any(
                abs(point.parameter_value - q.parameter_value) <= SAME_POINT * width[1]
                and abs(point.state_value - q.state_value) <= SAME_POINT * width[0]
                for q in points
            ):
                points.append(point)
    branches = tuple(
        Branch(
            parameter,
            trace.points[:, 1].copy(),
            trace.points[:, 0].copy(),
            rate(1, (), trace.points[:, 0], trace.points[:, 1]) < 0,
        )
        for trace in traces
    )
    return branches, tuple(sorted(points, key=lambda q: (q.parameter_value, q.state_value)))
