"""Vectorised root bracketing and the lever-limit search behind the Monte Carlo.

Used by :mod:`sitegen.dynamics.uncertainty` (which re-exports every public name
here) and by :mod:`sitegen.dynamics.sensitivity`. Everything is vectorised over
samples; the only Python loops run over blocks of samples (``BLOCK_SAMPLES``, to
keep the sample-by-state arrays inside the CPU cache) and over bisection or
Newton steps, never over single samples.

Arguments: ``arguments`` is the model's parameter arguments in ``model.parameters``
order, each either a 1-D array of one length n (one value per sample) or a plain
float shared by all samples; states are in the model's state unit, lever values in
the lever's unit, rates in state unit per ``time_unit``.

Conventions: a *stable* root is a sign change of the rate f from + (below) to
<= 0 (above) between neighbouring grid points; the **upper stable state** is the
highest such root (tangent roots are ignored, they have probability zero); a
state whose rate is still positive at the upper end of the region *escapes*
upward and counts as persisting. The **lever limit** of a sample is the largest
lever value at which a stable positive state still exists (``-inf`` when none
exists at the lower end of the search, ``+inf`` when one still exists at its
expanded upper end), assuming stability is monotone in the lever.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from sitegen.model.model import Model

GRID_POINTS = 513  # uniform grid points on the region, for the sign-change scan
NEAR_LOW_POINTS = 24  # extra geometric points just above the lower end (stocks near zero)
BLOCK_SAMPLES = 1024  # samples per block: keeps a block's grid arrays in cache
STATE_BISECTIONS = 60  # halvings of one grid cell: below double precision
COARSE_GRID_POINTS = 97  # state grid of the cheap first lever bisection
LEVER_BISECTIONS = 34  # halvings of the lever search interval: about 6e-11 of it
LEVER_EXPANSIONS = 6  # doublings of the lever search's upper end for samples stable there
FOLD_NEWTON_STEPS = 8
FOLD_ACCEPT_RELATIVE = 0.05  # a polished fold is kept when this close above the bisection


# -- vectorised root finding ---------------------------------------------------------------


def state_grid(model: Model, points: int = GRID_POINTS) -> np.ndarray:
    """Uniform grid on the region plus a few geometric points just above its lower end."""
    low, high = model.region
    span = high - low
    near_low = low + span * np.geomspace(1e-10, 1e-2, NEAR_LOW_POINTS)
    return np.unique(np.concatenate([np.linspace(low, high, points), near_low]))


def _block(
    arguments: Sequence[np.ndarray | float], rows: slice, column: bool
) -> list[np.ndarray | float]:
    """Arguments restricted to a block of samples, as columns (n, 1) when ``column``."""
    out: list[np.ndarray | float] = []
    for value in arguments:
        if isinstance(value, np.ndarray) and value.ndim == 1:
            part = value[rows]
            out.append(part[:, None] if column else part)
        else:
            out.append(value)
    return out


def sample_count(arguments: Sequence[np.ndarray | float]) -> int:
    """The number of samples n: the common length of the 1-D arguments (1 when none).

    Raises :class:`ValueError` when the per-sample arguments differ in length.
    """
    sizes = {a.size for a in arguments if isinstance(a, np.ndarray) and a.ndim == 1}
    if len(sizes) > 1:
        raise ValueError("all per-sample arguments must have the same length")
    return sizes.pop() if sizes else 1


def rate_values(
    function: Callable[..., object], x: np.ndarray, arguments: Sequence[np.ndarray | float]
) -> np.ndarray:
    """``function(x, *arguments)`` as a float array of the broadcast shape.

    Lambdified constants come back as plain numbers; they are broadcast to the shape.
    """
    shape = np.broadcast_shapes(np.shape(x), *[np.shape(a) for a in arguments])
    with np.errstate(all="ignore"):
        values = np.asarray(function(x, *arguments), dtype=float)
    # Broadcasting (a read-only view) only when needed: a full-grid copy costs a pass.
    return values if values.shape == shape else np.broadcast_to(values, shape)


@dataclass(frozen=True)
class _Scan:
    """Per-sample results of one grid scan."""

    stable: np.ndarray  # bool: a + to - sign change exists
    escapes: np.ndarray  # bool: f > 0 at the upper end (the state leaves upward)
    cell: np.ndarray  # int: grid cell of the highest + to - change (0 where none)
    peak: np.ndarray  # int: grid index of the largest f (a fold's x seed)


def _scan(
    model: Model,
    grid: np.ndarray,
    arguments: Sequence[np.ndarray | float],
    count: int,
    light: bool = False,
) -> _Scan:
    """Sign-change scan of f on the sample-by-state grid, block by block.

    ``light`` skips the cell and peak indices (the lever test needs only existence).
    """
    rate = model.numeric()
    stable = np.zeros(count, dtype=bool)
    escapes = np.zeros(count, dtype=bool)
    cell = np.zeros(count, dtype=np.intp)
    peak = np.zeros(count, dtype=np.intp)
    cells = grid.size - 1
    for start in range(0, count, BLOCK_SAMPLES):
        rows = slice(start, min(start + BLOCK_SAMPLES, count))
        values = rate_values(rate, grid[None, :], _block(arguments, rows, column=True))
        if values.shape[0] != rows.stop - rows.start:  # no per-sample argument at all
            values = np.broadcast_to(values, (rows.stop - rows.start, grid.size))
        # + below and <= 0 above: a downward crossing, i.e. a stable root (NaN is neither).
        down = (values[:, :-1] > 0) & (values[:, 1:] <= 0)
        stable[rows] = down.any(axis=1)
        escapes[rows] = values[:, -1] > 0
        if light:
            continue
        cell[rows] = cells - 1 - np.argmax(down[:, ::-1], axis=1)
        peak[rows] = np.argmax(np.where(np.isfinite(values), values, -np.inf), axis=1)
    return _Scan(stable, escapes, cell, peak)


def upper_stable_states(
    model: Model, arguments: Sequence[np.ndarray | float], grid: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Per sample: the upper stable state (NaN if none) and whether the state escapes upward.

    ``arguments`` are the model's parameter arguments (arrays of one length n, or
    scalars). The bracket from the scan is narrowed by bisection for all samples
    at once.
    """
    grid = state_grid(model) if grid is None else grid
    count = sample_count(arguments)
    scan = _scan(model, grid, arguments, count)
    states = np.full(count, np.nan)
    chosen = np.nonzero(scan.stable)[0]
    if chosen.size:
        low = grid[scan.cell[chosen]]
        high = grid[scan.cell[chosen] + 1]
        picked = [a[chosen] if isinstance(a, np.ndarray) and a.ndim == 1 else a for a in arguments]
        rate = model.numeric()
        for _ in range(STATE_BISECTIONS):
            middle = 0.5 * (low + high)
            above = rate_values(rate, middle, picked) > 0
            low = np.where(above, middle, low)
            high = np.where(above, high, middle)
        states[chosen] = 0.5 * (low + high)
    return states, scan.escapes & ~scan.stable


def persists(model: Model, arguments: Sequence[np.ndarray | float], grid: np.ndarray) -> np.ndarray:
    """Per sample: True when a stable positive state exists or the state escapes upward."""
    scan = _scan(model, grid, arguments, sample_count(arguments), light=True)
    return scan.stable | scan.escapes


# -- the lever limit -----------------------------------------------------------------------


def lever_search_interval(model: Model) -> tuple[float, float]:
    """Where the lever bisection starts: the lever's range, else [min(0, v), 2|v| or 1]."""
    assert model.lever is not None
    if model.lever in model.ranges:
        low, high = model.ranges[model.lever]
        return float(low), float(high)
    value = float(model.values[model.lever])
    return min(0.0, value), (2.0 * abs(value) if value else 1.0)


def lever_limits(
    model: Model, arguments: Sequence[np.ndarray | float], grid: np.ndarray | None = None
) -> tuple[np.ndarray, tuple[float, float], int]:
    """Per sample: the largest lever value that keeps a stable positive state.

    Returns the limits (``-inf`` below the search, ``+inf`` above it), the initial
    search interval, and how many limits were Newton-polished at a fold
    (f = f_x = 0). Three passes, all vectorised over the samples:

    1. the search interval is checked (and expanded upward) on the full grid;
    2. bisection on a coarse state grid, which is cheap and exact except that two
       roots inside one coarse cell are missed (a limit biased low by about 5e-4
       relative for the logistic with a quota);
    3. Newton on (x, lever) for f = f_x = 0 from there, kept where it converges
       (double precision at a fold; a transcritical point also solves f = f_x = 0).
       Samples where Newton does not settle keep the bisection value.
    """
    assert model.lever is not None
    fine = state_grid(model) if grid is None else grid
    coarse = state_grid(model, COARSE_GRID_POINTS)
    index = model.parameters.index(model.lever)
    count = sample_count(arguments)
    low_0, high_0 = lever_search_interval(model)

    def test(
        levers: np.ndarray, rows: np.ndarray | None = None, on: np.ndarray = coarse
    ) -> np.ndarray:
        trial = [
            a[rows] if rows is not None and isinstance(a, np.ndarray) and a.ndim == 1 else a
            for a in arguments
        ]
        trial[index] = levers
        return persists(model, trial, on)

    low = np.full(count, low_0)
    high = np.full(count, high_0)
    below = ~test(low, on=fine)
    still = test(high, on=fine) & ~below
    for _ in range(LEVER_EXPANSIONS):
        if not still.any():
            break
        # Samples still stable at the top: move the bottom to the old top, the top up.
        low = np.where(still, high, low)
        high = np.where(still, low_0 + 2.0 * (high - low_0), high)
        still = still & test(high, on=fine)
    active = ~below & ~still
    for _ in range(LEVER_BISECTIONS):
        middle = 0.5 * (low + high)
        ok = test(middle)
        low = np.where(ok & active, middle, low)
        high = np.where(~ok & active, middle, high)
    polished_values, polished = _polish_folds(model, arguments, coarse, index, low, active)
    limits = np.where(polished, polished_values, low)
    limits[below] = -np.inf
    limits[still] = np.inf
    return limits, (low_0, high_0), int(np.count_nonzero(polished))


def _polish_folds(
    model: Model,
    arguments: Sequence[np.ndarray | float],
    grid: np.ndarray,
    index: int,
    low: np.ndarray,
    active: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Newton on (x, lever) for f = f_x = 0, seeded at the peak of f at the lever ``low``.

    Kept only where finite, inside the region, at a maximum of f (f_xx < 0, so the
    stable branch ends there), not below ``low`` (where a stable state was seen) and
    within ``FOLD_ACCEPT_RELATIVE`` of it.
    """
    lever = model.lever
    assert lever is not None
    trial = list(arguments)
    trial[index] = low
    scan = _scan(model, grid, trial, low.size)
    x = grid[scan.peak]
    levers = low.copy()
    f, f_x = model.numeric(), model.numeric(1)
    f_l, f_xx, f_xl = model.numeric(0, (lever,)), model.numeric(2), model.numeric(1, (lever,))
    with np.errstate(all="ignore"):
        for _ in range(FOLD_NEWTON_STEPS):
            trial[index] = levers
            a, b = rate_values(f_x, x, trial), rate_values(f_l, x, trial)
            c, d = rate_values(f_xx, x, trial), rate_values(f_xl, x, trial)
            r0 = rate_values(f, x, trial)
            det = a * d - b * c
            # Solve [[f_x, f_l], [f_xx, f_xl]] (dx, dlever) = (f, f_x).
            x = x - (d * r0 - b * a) / det
            levers = levers - (a * a - c * r0) / det
        trial[index] = levers
        curvature = rate_values(f_xx, x, trial)
        residual = np.abs(rate_values(f, x, trial)) + np.abs(rate_values(f_x, x, trial)) * (
            grid[-1] - grid[0]
        )
        scale = np.abs(rate_values(f_l, x, trial)) * np.maximum(np.abs(levers), 1e-300)
    size = np.maximum(np.abs(low), 1e-300)
    good = (
        active
        & np.isfinite(levers)
        & np.isfinite(x)
        & (curvature < 0)
        & (x > grid[0])
        & (x < grid[-1])
        & (levers >= low * (1 - 1e-12) - 1e-300)
        & (levers - low <= FOLD_ACCEPT_RELATIVE * size)
        & (residual <= 1e-9 * scale)
    )
    return levers, good
