"""Analysis benchmarks: whole analyses, and continuation against a SymPy solve per grid value."""

from __future__ import annotations

import time

import mpmath
import numpy as np
import sympy

from bench.registry import Result, benchmark
from sitegen.analysis.analyse import analyse_model
from sitegen.analysis.continuation import continue_equilibria
from sitegen.model.model import Model, build_model
from sitegen.scenario.loader import load_text

LOGISTIC_QUOTA = """
[scenario]
title = "Benchmark: logistic stock with a quota (illustrative)"
summary = "Illustrative numbers."
assessment_year = 2026
[state]
symbol = "B"
name = "biomass"
unit = "t"
current = 700
[parameters.r]
value = 0.5
unit = "1/yr"
name = "growth rate"
range = [0.2, 0.8]
[parameters.K]
value = 1000
unit = "t"
name = "carrying capacity"
range = [600, 1400]
[parameters.H]
value = 100
unit = "t/yr"
name = "quota"
range = [0, 200]
[model]
rate = "r*B*(1 - B/K) - H"
lever = "H"
yield = "H"
"""

INSECT_OUTBREAK = """
[scenario]
title = "Benchmark: insect outbreak model (dimensionless, illustrative)"
summary = "Illustrative numbers."
assessment_year = 2026
[state]
symbol = "x"
name = "scaled density"
unit = "1"
max = 12
[parameters.r]
value = 0.5
unit = "1"
name = "scaled growth rate"
range = [0.3, 0.7]
[parameters.k]
value = 10
unit = "1"
name = "scaled capacity"
range = [4, 12]
[model]
rate = "r*x*(1 - x/k) - x^2/(1 + x^2)"
lever = "r"
time_unit = "1"
"""


def _model(text: str) -> Model:
    return build_model(load_text(text, "bench.toml", "bench"))


def _best(function: object, repeats: int) -> float:
    best = float("inf")
    for _ in range(repeats):
        started = time.perf_counter()
        function()  # type: ignore[operator]
        best = min(best, time.perf_counter() - started)
    return best


def roots_by_continuation(model: Model, parameter: str, grid: np.ndarray) -> list[np.ndarray]:
    """Equilibria at every grid value from the continued branches, Newton-polished."""
    branches, _ = continue_equilibria(model, parameter)
    names = model.parameters
    index = names.index(parameter)
    f, fx = model.numeric(), model.numeric(1)
    found_p: list[np.ndarray] = []
    found_x: list[np.ndarray] = []
    for branch in branches:
        p, x = branch.parameter_values, branch.state_values
        lo, hi = p[:-1], p[1:]
        crosses = (grid[:, None] - lo[None, :]) * (grid[:, None] - hi[None, :]) <= 0
        g_index, s_index = np.nonzero(crosses & (hi != lo)[None, :])
        weight = (grid[g_index] - lo[s_index]) / (hi[s_index] - lo[s_index])
        x0 = x[s_index] + weight * (x[s_index + 1] - x[s_index])
        found_p.append(grid[g_index])
        found_x.append(x0)
    p_all = np.concatenate(found_p) if found_p else np.array([])
    x_all = np.concatenate(found_x) if found_x else np.array([])
    args = [np.full_like(p_all, v) for v in model.args()]
    args[index] = p_all
    for _ in range(8):
        step = f(x_all, *args) / fx(x_all, *args)
        x_all = x_all - np.where(np.isfinite(step), step, 0.0)
    result = []
    for value in grid:
        roots = np.sort(x_all[p_all == value])
        if roots.size:
            keep = np.concatenate([[True], np.diff(roots) > 1e-9 * max(1.0, abs(roots[-1]))])
            roots = roots[keep]
        result.append(roots)
    return result


def roots_by_sympy(model: Model, parameter: str, grid: np.ndarray) -> list[np.ndarray]:
    """The naive approach: a SymPy solve at every grid value, real roots in the region."""
    low, high = model.region
    result = []
    for value in grid:
        rate = model.substituted(model.rate, dict(model.values, **{parameter: float(value)}))
        roots = []
        for root in sympy.solve(rate, model.state):
            number = complex(sympy.N(root, 30))
            if abs(number.imag) < 1e-20 and low <= number.real <= high:
                roots.append(number.real)
        result.append(np.array(sorted(roots)))
    return result


def _compare(model: Model, parameter: str, points: int, name: str) -> Result:
    low, high = model.ranges[parameter]
    grid = np.linspace(low, high, points)[1:-1]
    started = time.perf_counter()
    reference = roots_by_sympy(model, parameter, grid)
    naive_s = time.perf_counter() - started
    ours_s = _best(lambda: roots_by_continuation(model, parameter, grid), 3)
    ours = roots_by_continuation(model, parameter, grid)
    worst = 0.0
    mismatched = 0
    for exact, mine in zip(reference, ours, strict=True):
        if exact.size != mine.size:
            mismatched += 1
            continue
        if exact.size:
            scale = np.maximum(np.abs(exact), 1e-300)
            worst = max(worst, float(np.max(np.abs(mine - exact) / scale)))
    ratio = naive_s / ours_s
    met = ratio >= 100 and mismatched == 0
    return Result(
        f"continuation vs SymPy solve per value ({name}, {grid.size} values)",
        ours_s,
        "s",
        naive_s,
        "SymPy solve at each value",
        ratio,
        ">= 100x faster, same roots",
        met,
        f"largest relative error of roots {worst:.2e}; grid values with a "
        f"different root count: {mismatched}",
    )


@benchmark("analysis")
def run(quick: bool) -> list[Result]:
    mpmath.mp.dps = 15
    repeats = 1 if quick else 3
    logistic = _model(LOGISTIC_QUOTA)
    insect = _model(INSECT_OUTBREAK)
    results = [
        Result(
            "analyse: logistic with quota (3 ranged parameters, 2 maps)",
            _best(lambda: analyse_model(logistic), repeats),
            "s",
            None,
            "",
            None,
            "reference only",
            True,
        ),
        Result(
            "analyse: insect outbreak with its two-parameter map",
            _best(lambda: analyse_model(insect), repeats),
            "s",
            None,
            "",
            None,
            "reference only",
            True,
        ),
    ]
    points = 42 if quick else 202
    results.append(_compare(logistic, "H", points, "logistic quota in H"))
    results.append(_compare(insect, "r", 42 if quick else 102, "insect outbreak in r"))
    return results
