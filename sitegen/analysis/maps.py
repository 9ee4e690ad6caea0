"""Two-parameter maps: fold curves, cusps and the number of stable states on a grid.

A fold curve is the set f = f_x = 0, traced by pseudo-arclength continuation in
u = (state, p_x, p_y) inside the box model.region x range(p_x) x range(p_y), seeded from the
one-parameter folds of :func:`~sitegen.analysis.continuation.continue_equilibria` on slices at
fixed values of the other parameter. Cusps are where f_xx changes sign along a fold curve,
refined by Newton on (f, f_x, f_xx) = 0. States are in the model's state unit, parameters in
their own units.

Stable-count rule (:func:`stable_counts`): on a state grid from the region's lower end L to its
upper end U, a stable equilibrium is counted for every place where f goes from + to - as the
state increases (f > 0 at one node and f < 0 at the next, or + 0 - over three nodes). An end of
the region counts as a stable state only when it is an equilibrium itself (f = 0 there) and the
flow just inside points at it: L when f(L) = 0 and f < 0 at the next node, U when f(U) = 0 and
f > 0 at the node before. So f(L) < 0 (the state runs out of the region, e.g. a harvested
stock collapsing to zero) is not a stable equilibrium, and a semi-stable double root (+ 0 +) is
not stable. "f = 0" means |f| <= 1e-12 times the largest |f| on that grid column; non-finite
values (log x at x = 0) count as neither sign. Two roots closer than one grid cell are not
resolved, so counts may be off in a strip about one state cell wide around the fold curves.
"""

from __future__ import annotations

import numpy as np

from sitegen.analysis.arclength import (
    BOX_SLACK,
    StepControl,
    SystemMap,
    Trace,
    extended_newton,
    trace_curve,
)
from sitegen.analysis.continuation import RateFunctions, continue_equilibria, seed_values
from sitegen.analysis.records import Cusp, FoldCurve, ParameterMap
from sitegen.analysis.scan import scan_grid
from sitegen.model.model import Model

FOLD_SLICES = 9  # slices per parameter whose one-parameter folds seed the fold curves
# Finer than branches: fold curves are drawn, and checked point by point against closed forms.
FOLD_CONTROL = StepControl(largest=0.02, tolerance=1e-13)
ON_CURVE = 2e-3  # scaled 3-D distance to a traced curve under which a seed is on it
SAME_CUSP = 1e-7  # scaled distance under which two cusps are one
RESIDUAL = 1e-9  # accepted residual of a cusp, as a displacement in box widths
STATE_POINTS = 1025  # uniform state nodes of the count grid (plus a geometric cluster near L)
BLOCK_ELEMENTS = 2_000_000  # grid values evaluated at once; bounds the memory of the count
ZERO = 1e-12  # |f| below this times the column's largest |f| counts as f = 0


def _fold_system(rate: RateFunctions, x_name: str, y_name: str) -> tuple[SystemMap, SystemMap]:
    def residual(u: np.ndarray) -> np.ndarray:
        return np.stack([rate(0, (), *u), rate(1, (), *u)])

    def jacobian(u: np.ndarray) -> np.ndarray:
        rows = [
            [rate(k, (), *u), rate(k - 1, (x_name,), *u), rate(k - 1, (y_name,), *u)]
            for k in (1, 2)
        ]
        return np.array([np.stack(row) for row in rows])

    return residual, jacobian


def _fold_seeds(model: Model, x_name: str, y_name: str) -> list[np.ndarray]:
    """(state, p_x, p_y) at the one-parameter folds of slices in either parameter."""
    seeds: list[np.ndarray] = []
    for free, fixed in ((x_name, y_name), (y_name, x_name)):
        for value in seed_values(*model.ranges[fixed], FOLD_SLICES):
            _, points = continue_equilibria(model.with_values({fixed: float(value)}), free)
            for point in points:
                if point.turning:
                    pair = {free: point.parameter_value, fixed: float(value)}
                    seeds.append(np.array([point.state_value, pair[x_name], pair[y_name]]))
    return seeds


def _near(trace: Trace, u: np.ndarray, low: np.ndarray, width: np.ndarray) -> bool:
    """Whether u lies within ON_CURVE (scaled) of the traced polyline."""
    s = (trace.points - low) / width
    target = (u - low) / width
    a, d = s[:-1], s[1:] - s[:-1]
    with np.errstate(invalid="ignore", divide="ignore"):
        w = np.clip(np.einsum("ij,ij->i", target - a, d) / np.einsum("ij,ij->i", d, d), 0, 1)
    w = np.nan_to_num(w)
    distance = np.linalg.norm(a + w[:, None] * d - target, axis=1)
    return bool(distance.size and distance.min() <= ON_CURVE)


def _refine_cusp(
    rate: RateFunctions, names: tuple[str, str], start: np.ndarray, width: np.ndarray
) -> np.ndarray | None:
    """Newton on (f, f_x, f_xx) = 0 in (state, p_x, p_y); None unless it truly vanishes."""

    def jacobian(v: np.ndarray) -> np.ndarray:
        return np.array(
            [
                [rate(k, (), *v), rate(k - 1, (names[0],), *v), rate(k - 1, (names[1],), *v)]
                for k in (1, 2, 3)
            ],
            dtype=float,
        )

    u = extended_newton(
        lambda v: (np.array([rate(k, (), *v) for k in (0, 1, 2)], dtype=float), jacobian(v)),
        start,
        width,
    )
    if u is None:
        return None
    scales = np.abs(jacobian(u) * width).sum(axis=1)
    values = np.abs([rate(k, (), *u) for k in (0, 1, 2)])
    return u if np.all(values <= RESIDUAL * scales) else None


def _cusps(
    rate: RateFunctions, names: tuple[str, str], trace: Trace, low: np.ndarray, width: np.ndarray
) -> list[Cusp]:
    """Cusps where f_xx changes sign between consecutive points of a fold curve."""
    u = trace.points.T
    fxx = rate(2, (), *u)
    usable = np.flatnonzero(np.isfinite(fxx) & (fxx != 0))
    first, second = usable[:-1], usable[1:]
    change = fxx[first] * fxx[second] < 0
    found: list[Cusp] = []
    for i, j in zip(first[change], second[change], strict=True):
        a, b = trace.points[i], trace.points[j]
        point = _refine_cusp(rate, names, 0.5 * (a + b), width)
        if point is None:
            continue  # f_xx jumped (non-smooth rate) or Newton did not converge
        s = (point - low) / width
        near = (
            np.linalg.norm((point - 0.5 * (a + b)) / width)
            <= np.linalg.norm((b - a) / width) + 1e-6
        )
        if near and np.all(s >= -BOX_SLACK) and np.all(s <= 1 + BOX_SLACK):
            found.append(
                Cusp({names[0]: float(point[1]), names[1]: float(point[2])}, float(point[0]))
            )
    return found


def stable_counts(
    model: Model,
    x_name: str,
    y_name: str,
    x_grid: np.ndarray,
    y_grid: np.ndarray,
    states: np.ndarray | None = None,
) -> np.ndarray:
    """Number of stable equilibria at each (x_grid[i], y_grid[j]), as an int array [j, i].

    f is evaluated on a (y, x, state) array, whole blocks of y rows at a time, and stable
    roots are counted by the rule in the module docstring. ``states`` defaults to the scan
    grid of the region (uniform, plus extra nodes near its lower end).
    """
    low, high = model.region
    states = scan_grid(low, high, STATE_POINTS) if states is None else np.asarray(states)
    rate = RateFunctions(model, (x_name, y_name))
    x_grid, y_grid = np.asarray(x_grid, dtype=float), np.asarray(y_grid, dtype=float)
    counts = np.zeros((y_grid.size, x_grid.size), dtype=int)
    rows = max(1, BLOCK_ELEMENTS // max(1, x_grid.size * states.size))
    for start in range(0, y_grid.size, rows):  # blocks bound memory; each is one NumPy call
        ys = y_grid[start : start + rows]
        f = rate(0, (), states[None, None, :], x_grid[None, :, None], ys[:, None, None])
        with np.errstate(invalid="ignore"):
            finite = np.where(np.isfinite(f), np.abs(f), 0.0)
            tolerance = ZERO * finite.max(axis=2, keepdims=True)
            positive, negative = f > tolerance, f < -tolerance
            zero = np.abs(f) <= tolerance
        crossing = positive[..., :-1] & negative[..., 1:]
        through_zero = positive[..., :-2] & zero[..., 1:-1] & negative[..., 2:]
        lower_end = zero[..., 0] & negative[..., 1]
        upper_end = zero[..., -1] & positive[..., -2]
        counts[start : start + rows] = (
            crossing.sum(axis=2) + through_zero.sum(axis=2) + lower_end + upper_end
        )
    return counts


def parameter_map(model: Model, x_name: str, y_name: str, grid_points: int = 81) -> ParameterMap:
    """Fold curves, cusps and stable counts in the (x_name, y_name) plane.

    Every fold curve crossing the box is found from the folds of :data:`FOLD_SLICES` slices
    in each parameter (seeds on an already traced curve are skipped). ``notes`` say where a
    curve leaves the box and what could not be followed. ``stable_counts[j, i]`` is at
    (x_grid[i], y_grid[j]), with grid_points values over each range.
    """
    for name in (x_name, y_name):
        if name not in model.ranges:
            raise ValueError(f"parameter '{name}' has no range to map over")
    if x_name == y_name:
        raise ValueError("a map needs two different parameters")
    if grid_points < 2:
        raise ValueError("grid_points must be at least 2")
    names = (x_name, y_name)
    low = np.array([model.region[0], *(model.ranges[n][0] for n in names)], dtype=float)
    high = np.array([model.region[1], *(model.ranges[n][1] for n in names)], dtype=float)
    width = high - low
    rate = RateFunctions(model, names)
    residual, jacobian = _fold_system(rate, x_name, y_name)
    notes: list[str] = []
    traces: list[Trace] = []
    for seed in _fold_seeds(model, x_name, y_name):
        if any(_near(trace, seed, low, width) for trace in traces):
            continue
        trace = trace_curve(residual, jacobian, seed, low, high, FOLD_CONTROL)
        if trace is None or len(trace.points) < 2:
            notes.append(
                f"a fold at {x_name} = {seed[1]:.6g}, {y_name} = {seed[2]:.6g} "
                "could not be continued into a fold curve"
            )
            continue
        traces.append(trace)
    curves: list[FoldCurve] = []
    cusps: list[Cusp] = []
    for number, trace in enumerate(traces, start=1):
        curves.append(
            FoldCurve(
                x_name,
                y_name,
                trace.points[:, 1].copy(),
                trace.points[:, 2].copy(),
                trace.points[:, 0].copy(),
            )
        )
        for end, point in zip(trace.ends, (trace.points[0], trace.points[-1]), strict=True):
            where = f"{x_name} = {point[1]:.6g}, {y_name} = {point[2]:.6g} (state {point[0]:.6g})"
            if end == "box":
                notes.append(f"fold curve {number} leaves the map at {where}")
            elif end in ("stalled", "steps"):
                notes.append(
                    f"fold curve {number} could not be followed past {where} "
                    f"({'the corrector failed' if end == 'stalled' else 'step limit'})"
                )
        for cusp in _cusps(rate, names, trace, low, width):
            if not any(
                all(
                    abs(cusp.parameters[n] - c.parameters[n]) <= SAME_CUSP * w
                    for n, w in zip(names, width[1:], strict=True)
                )
                and abs(cusp.state_value - c.state_value) <= SAME_CUSP * width[0]
                for c in cusps
            ):
                cusps.append(cusp)
    x_grid = np.linspace(low[1], high[1], grid_points)
    y_grid = np.linspace(low[2], high[2], grid_points)
    counts = stable_counts(model, x_name, y_name, x_grid, y_grid)
    return ParameterMap(
        x_name, y_name, tuple(curves), tuple(cusps), x_grid, y_grid, counts, tuple(notes)
    )
