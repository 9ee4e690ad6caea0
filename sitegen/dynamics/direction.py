"""The low stable state of a pollutant or pest (``[state] better = "lower"``), vectorised.

For a stock the upper stable state is the one to keep; for a pollutant, a nutrient
or a pest it is the *low* one, and the danger is a flip up to the high state. This
module finds, per sample of the Monte Carlo, whether a low state exists, where it
lies, and the lever setting at which it vanishes.

Conventions (states in the model's state unit, lever values in the lever's unit):

- the **lower end holds** when the rate is <= 0 at the region's lower end and at the
  next grid point (a decaying contaminant, a pest driven out): the low state is
  the lower end itself;
- otherwise the candidate is the *lowest* stable root (the first + to <= 0 sign
  change of f scanning upward). It is the low state unless the rate has an
  interior local minimum below it: that dip is the ghost of a low state and
  threshold that have met and vanished at a fold, so the root above it is the
  high state (the lake's turbid state once loading passes the fold). A rate with
  no such dip (one stable state, no fold) keeps its only state as the low one;
- a sample whose rate is still positive at the region's upper end has no low
  state (the state runs away upward);
- the **lever limit** of a sample is the lever setting at which its low state
  vanishes, found by bisection with "the low state exists" as the test. Which
  side is safe follows the sign of df/dlever: a lever that raises the rate (a
  loading) must stay *below* its limit ("largest"), one that lowers it (control
  mortality) must stay *above* it ("smallest").

Grid resolution: two roots closer than one grid cell are not resolved, so the
flip is seen slightly before the fold, by about f_xx dx^2 / (8 |f_lever|) in the
lever (dx the grid cell; about 1e-5 of the loading for the bundled lake).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from sitegen.dynamics.uncertainty_roots import (
    BLOCK_SAMPLES,
    LEVER_BISECTIONS,
    LEVER_EXPANSIONS,
    STATE_BISECTIONS,
    _block,
    lever_search_interval,
    rate_values,
    sample_count,
    state_grid,
)
from sitegen.model.model import Model

LARGEST = "largest"  # the low state exists below the limit (a loading)
SMALLEST = "smallest"  # the low state exists above the limit (a control effort)


def _low_scan(
    model: Model, grid: np.ndarray, arguments: Sequence[np.ndarray | float], count: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per sample: (low state exists, lower end holds, cell of the lowest stable root)."""
    rate = model.numeric()
    exists = np.zeros(count, dtype=bool)
    at_end = np.zeros(count, dtype=bool)
    cell = np.zeros(count, dtype=np.intp)
    inner = np.arange(grid.size - 2)
    for start in range(0, count, BLOCK_SAMPLES):
        rows = slice(start, min(start + BLOCK_SAMPLES, count))
        values = rate_values(rate, grid[None, :], _block(arguments, rows, column=True))
        if values.shape[0] != rows.stop - rows.start:  # no per-sample argument at all
            values = np.broadcast_to(values, (rows.stop - rows.start, grid.size))
        down = (values[:, :-1] > 0) & (values[:, 1:] <= 0)
        first = np.argmax(down, axis=1)
        holds = (values[:, 0] <= 0) & (values[:, 1] <= 0)
        # A dip (interior local minimum) below the lowest stable root is a lost low state.
        dip = (values[:, 1:-1] < values[:, :-2]) & (values[:, 1:-1] <= values[:, 2:])
        ghost = (dip & (inner[None, :] < first[:, None])).any(axis=1)
        exists[rows] = holds | (down.any(axis=1) & ~ghost)
        at_end[rows] = holds
        cell[rows] = first
    return exists, at_end, cell


def low_stable_states(
    model: Model, arguments: Sequence[np.ndarray | float], grid: np.ndarray | None = None
) -> np.ndarray:
    """Per sample: the low stable state (NaN where none exists; the lower end where it holds)."""
    grid = state_grid(model) if grid is None else grid
    count = sample_count(arguments)
    exists, at_end, cell = _low_scan(model, grid, arguments, count)
    states = np.full(count, np.nan)
    states[exists & at_end] = model.region[0]
    chosen = np.nonzero(exists & ~at_end)[0]
    if chosen.size:
        low, high = grid[cell[chosen]], grid[cell[chosen] + 1]
        picked = [a[chosen] if isinstance(a, np.ndarray) and a.ndim == 1 else a for a in arguments]
        rate = model.numeric()
        for _ in range(STATE_BISECTIONS):
            middle = 0.5 * (low + high)
            above = rate_values(rate, middle, picked) > 0
            low = np.where(above, middle, low)
            high = np.where(above, high, middle)
        states[chosen] = 0.5 * (low + high)
    return states


def low_state_exists(
    model: Model, arguments: Sequence[np.ndarray | float], grid: np.ndarray
) -> np.ndarray:
    """Per sample: True where a low stable state exists (see the module docstring)."""
    return _low_scan(model, grid, arguments, sample_count(arguments))[0]


def lever_side(model: Model) -> str:
    """LARGEST when raising the lever raises the rate (mean over the region), else SMALLEST."""
    assert model.lever is not None
    grid = state_grid(model)
    with np.errstate(all="ignore"):
        slope = rate_values(model.numeric(0, (model.lever,)), grid, model.args())
    return SMALLEST if float(np.nanmean(slope)) < 0 else LARGEST


def low_lever_limits(
    model: Model, arguments: Sequence[np.ndarray | float], grid: np.ndarray | None = None
) -> tuple[np.ndarray, tuple[float, float], str]:
    """Per sample: the lever setting at which the low state vanishes, the search, the side.

    For LARGEST the limit is the largest setting that keeps the low state (``-inf``:
    none even at the search's lower end; ``+inf``: kept at its expanded upper end);
    for SMALLEST the smallest such setting (``-inf``: kept even at the lower end;
    ``+inf``: lost even at the expanded upper end). The upper end doubles at most
    ``LEVER_EXPANSIONS`` times for the samples that need it.
    """
    assert model.lever is not None
    grid = state_grid(model) if grid is None else grid
    index = model.parameters.index(model.lever)
    count = sample_count(arguments)
    side = lever_side(model)
    low_0, high_0 = lever_search_interval(model)

    def ok(levers: np.ndarray) -> np.ndarray:
        trial = list(arguments)
        trial[index] = levers
        result = low_state_exists(model, trial, grid)
        # SMALLEST is searched as LARGEST of "the low state is lost".
        return result if side == LARGEST else ~result

    low = np.full(count, low_0)
    high = np.full(count, high_0)
    below = ~ok(low)  # LARGEST: lost at the bottom; SMALLEST: kept at the bottom
    still = ok(high) & ~below
    for _ in range(LEVER_EXPANSIONS):
        if not still.any():
            break
        low = np.where(still, high, low)
        high = np.where(still, low_0 + 2.0 * (high - low_0), high)
        still = still & ok(high)
    active = ~below & ~still
    for _ in range(LEVER_BISECTIONS):
        middle = 0.5 * (low + high)
        good = ok(middle)
        low = np.where(good & active, middle, low)
        high = np.where(~good & active, middle, high)
    limits = np.where(side == LARGEST, low, high)
    limits[below] = -np.inf
    limits[still] = np.inf
    return limits, (low_0, high_0), side


def safe_side_setting(limits: np.ndarray, tolerance: float, side: str) -> float:
    """The safest-permitted lever under the tolerance for either side.

    LARGEST: the largest L with (fraction of limits below L) <= tolerance, the
    (k + 1)-th smallest limit, k = floor(tolerance n); SMALLEST: the smallest L
    with (fraction of limits above L) <= tolerance, the (k + 1)-th largest.
    """
    ordered = np.sort(limits if side == LARGEST else -limits)
    k = int(np.floor(tolerance * ordered.size + 1e-9))
    value = float(ordered[min(k, ordered.size - 1)])
    return value if side == LARGEST else -value
