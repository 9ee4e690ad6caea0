"""The model run year by year under the observed removals, for many parameter sets at once.

Within year ``years[i]`` the lever is held at ``removals[i]`` (a removal rate in
the lever's unit, constant through the year) and dx/dt = f(x; p) is integrated
over one time unit by classical fourth-order Runge-Kutta with ``SUBSTEPS``
steps (the model's NumPy function, vectorised over the parameter sets). The
data's years are taken to be the model's time unit.

A stock driven to (or below) the lower end of the region is held at a floor
just above it, ``FLOOR_SHARE`` of the region's width: it cannot recover from
there under removals, its log is finite, and the log residuals of the years
after are then very large, which is the penalty that steers the fit away from
parameters that empty the stock. Non-finite rates are treated the same way.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from sitegen.model.model import Model
from sitegen.scenario.records import DataSpec

SUBSTEPS = 8  # RK4 steps per year: local error about (r h)^5 / 120, h = 1/8 yr
FLOOR_SHARE = 1e-9  # of the region's width: the floor a collapsed stock is held at


@dataclass(frozen=True)
class Run:
    """States of ``n`` parameter sets: ``start[:, i]`` at the start of year i, ``mid`` mid-year.

    ``floored[k]`` is True when set k's stock was driven to the floor at some time.
    """

    start: np.ndarray
    mid: np.ndarray
    floored: np.ndarray

    def at(self, timing: str) -> np.ndarray:
        """The states the index is compared with (``timing`` "start" or "mid")."""
        return self.mid if timing == "mid" else self.start


def floor_of(model: Model) -> float:
    """The floor a collapsed stock is held at (state unit)."""
    low, high = model.region
    return low + FLOOR_SHARE * (high - low) if low > 0 else FLOOR_SHARE * (high - low)


def run_years(
    model: Model,
    data: DataSpec,
    arguments: Sequence[np.ndarray | float],
    start: np.ndarray,
) -> Run:
    """Integrate every parameter set through the data's years.

    ``arguments`` are the model's parameter arguments in ``model.parameters``
    order (arrays of one length n, or floats); the lever's entry is replaced by
    each year's removal. ``start`` is the state at the start of the first year.
    """
    assert model.lever is not None
    rate = model.numeric()
    lever = model.parameters.index(model.lever)
    floor = floor_of(model)
    x = np.maximum(np.asarray(start, dtype=float).copy(), floor)
    count = x.size
    years = len(data.years)
    starts = np.empty((count, years))
    mids = np.empty((count, years))
    floored = np.zeros(count, dtype=bool)
    step = 1.0 / SUBSTEPS
    trial = list(arguments)

    def f(state: np.ndarray) -> np.ndarray:
        value = np.asarray(rate(state, *trial), dtype=float) + 0.0 * state
        return np.where(np.isfinite(value), value, -np.inf)

    with np.errstate(all="ignore"):
        for year, removal in enumerate(data.removals):
            trial[lever] = removal
            starts[:, year] = x
            for sub in range(SUBSTEPS):
                if sub == SUBSTEPS // 2:
                    mids[:, year] = x
                k1 = f(x)
                k2 = f(x + 0.5 * step * k1)
                k3 = f(x + 0.5 * step * k2)
                k4 = f(x + step * k3)
                x = x + step * (k1 + 2.0 * k2 + 2.0 * k3 + k4) / 6.0
                low = ~np.isfinite(x) | (x <= floor)
                floored |= low
                x = np.where(low, floor, x)
    return Run(starts, mids, floored)


def log_residuals(
    predicted: np.ndarray, log_index: np.ndarray, observed: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Log residuals and log q of one index, q in closed form.

    ``predicted`` (n, years) states; ``log_index`` (..., years) log observations
    (any value where not observed); ``observed`` (years,) mask. For each set,
    log q = mean over observed years of (log I - log x), which minimises the sum
    of squared log residuals in q (set the derivative in log q to zero).
    Returns residuals (n, observed years) and log q (n,).
    """
    log_x = np.log(predicted[:, observed])
    gap = log_index[..., observed] - log_x
    log_q = gap.mean(axis=-1)
    return gap - log_q[:, None], log_q
