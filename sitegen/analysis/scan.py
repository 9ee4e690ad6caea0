"""Fast numeric roots of the rate on the region: sign-change scan, brentq, tangent roots.

This is the workhorse every other numeric step seeds from. It works in double
precision; :mod:`sitegen.analysis.equilibria` polishes the results to 30 digits.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np
from scipy.optimize import brentq

from sitegen.model.model import Model

BASE_POINTS = 2049
REFINED_POINTS = 8193
MERGE_RELATIVE = 1e-9


def scan_grid(low: float, high: float, points: int = BASE_POINTS) -> np.ndarray:
    """A grid on [low, high], uniform plus extra points near the lower end.

    Models with a root at or near zero (harvested stocks, decay) need resolution
    there; the geometric part covers six decades below 1% of the span.
    """
    span = high - low
    uniform = np.linspace(low, high, points)
    near_low = low + span * np.geomspace(1e-8, 1e-2, 64)
    return np.unique(np.concatenate([uniform, near_low]))


def _scaled_tolerance(values: np.ndarray) -> float:
    finite = values[np.isfinite(values)]
    scale = float(np.max(np.abs(finite))) if finite.size else 1.0
    return max(scale, 1e-300) * 1e-9


def scan_roots(
    model: Model,
    values: Mapping[str, float] | None = None,
    region: tuple[float, float] | None = None,
    points: int = BASE_POINTS,
) -> np.ndarray:
    """Sorted roots of f in the region (double precision), duplicates merged.

    Three sources: exact zeros on the grid, sign changes refined by ``brentq``,
    and tangent (even-multiplicity) roots found where f_x changes sign and |f|
    is negligible there.
    """
    low, high = region or model.region
    args = model.args(values)
    rate = model.numeric()
    slope = model.numeric(1)
    grid = scan_grid(low, high, points)
    with np.errstate(all="ignore"):
        f_grid = np.asarray(rate(grid, *args), dtype=float) + 0.0 * grid
    tolerance = _scaled_tolerance(f_grid)

    def f_scalar(x: float) -> float:
        with np.errstate(all="ignore"):  # np.float64: a rate like K/x gives inf at 0, no error
            return float(rate(np.float64(x), *args))

    roots: list[float] = list(grid[f_grid == 0.0])
    finite = np.isfinite(f_grid)
    sign = np.sign(f_grid)
    crossing = np.nonzero(finite[:-1] & finite[1:] & (sign[:-1] * sign[1:] < 0))[0]
    for index in crossing:
        try:
            roots.append(
                brentq(f_scalar, grid[index], grid[index + 1], xtol=1e-15, rtol=1e-15, maxiter=200)
            )
        except (ValueError, RuntimeError):
            continue
    resolution = MERGE_RELATIVE * max(abs(low), abs(high), high - low, 1e-300)
    for extremum in _tangent_roots(grid, args, slope, f_scalar, tolerance, model):
        roots.extend(_split_hump(model, extremum, args, f_scalar, resolution))
    return merge_close(np.array(sorted(roots)), low, high)


def _tangent_roots(
    grid: np.ndarray,
    args: tuple[float, ...],
    slope: object,
    f_scalar: object,
    tolerance: float,
    model: Model,
) -> list[float]:
    """Roots without a sign change: extrema of f where f itself is (nearly) zero."""
    with np.errstate(all="ignore"):
        d_grid = np.asarray(slope(grid, *args), dtype=float) + 0.0 * grid  # type: ignore[operator]
    finite = np.isfinite(d_grid)
    sign = np.sign(d_grid)
    turning = np.nonzero(finite[:-1] & finite[1:] & (sign[:-1] * sign[1:] < 0))[0]

    def d_scalar(x: float) -> float:
        with np.errstate(all="ignore"):
            return float(slope(x, *args))  # type: ignore[operator]

    found: list[float] = []
    for index in turning:
        try:
            extremum = brentq(
                d_scalar, grid[index], grid[index + 1], xtol=1e-15, rtol=1e-15, maxiter=200
            )
        except (ValueError, RuntimeError):
            continue
        value = f_scalar(extremum)  # type: ignore[operator]
        if abs(value) <= tolerance:
            found.append(extremum)
    # Exact zeros of f_x on the grid (e.g. f = x^2 at x = 0 on a symmetric grid).
    for x in grid[d_grid == 0.0]:
        if abs(f_scalar(x)) <= tolerance:  # type: ignore[operator]
            found.append(float(x))
    return found


def _split_hump(
    model: Model, x: float, args: tuple[float, ...], f_scalar: object, resolution: float
) -> list[float]:
    """The roots at an extremum x where |f| is negligible: x itself, or two simple roots.

    Where f(x) and f''(x) have opposite signs, the quadratic model of f vanishes at
    x +/- d, d = sqrt(2|f/f''|). If d is resolvable, x is the top of a hump between two
    close simple roots (just beside a fold), not a root: those two are bracketed and
    found instead. Otherwise x stands as an even-multiplicity root.
    """
    value = f_scalar(x)  # type: ignore[operator]
    with np.errstate(all="ignore"):
        bend = float(model.numeric(2)(np.float64(x), *args))
    if value == 0 or not np.isfinite(bend) or bend == 0 or value * bend > 0:
        return [x]
    d = math.sqrt(2 * abs(value / bend))
    if d <= resolution:
        return [x]
    roots: list[float] = []
    for a, b in ((x - 2 * d, x), (x, x + 2 * d)):
        ends = f_scalar(a), f_scalar(b)  # type: ignore[operator]
        if not (np.isfinite(ends[0]) and np.isfinite(ends[1]) and ends[0] * ends[1] < 0):
            continue
        try:
            roots.append(brentq(f_scalar, a, b, xtol=1e-15, rtol=1e-15, maxiter=200))
        except (ValueError, RuntimeError):
            continue
    return roots or [x]


def merge_close(roots: np.ndarray, low: float, high: float) -> np.ndarray:
    """Drop roots outside [low, high] and merge those closer than a relative 1e-9."""
    inside = roots[(roots >= low) & (roots <= high)]
    if inside.size == 0:
        return inside
    scale = max(abs(low), abs(high), high - low, 1e-300)
    keep = [inside[0]]
    for value in inside[1:]:
        if abs(value - keep[-1]) > MERGE_RELATIVE * scale:
            keep.append(value)
    return np.array(keep)


def count_equilibria(model: Model, values: Mapping[str, float] | None = None) -> int:
    """How many distinct equilibria lie in the region at these parameter values."""
    return int(scan_roots(model, values).size)
