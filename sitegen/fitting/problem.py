"""The fitting problem: free parameters, their scales and bounds, and the log residuals.

Free parameters are searched on a transformed scale u: log(p) for a parameter
whose range lies above zero (growth rates and capacities are scale parameters;
common practice, no source), p itself otherwise; the bounds are the range's
ends on that scale. The starting state, when ``[data] start = "estimate"``, is
the free parameter "start", searched between [state] max / 1000 (or min, if
larger) and [state] max.

Residuals are the concentrated (variable-projection) log residuals: each
index's q is solved in closed form given the states (see
:func:`sitegen.fitting.simulate.log_residuals`), so only the model's own
parameters are searched.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sitegen.fitting.simulate import Run, log_residuals, run_years
from sitegen.model.model import Model
from sitegen.scenario.records import START_ESTIMATE, DataSpec, Scenario

START = "start"


@dataclass(frozen=True)
class Problem:
    """Everything the objective needs. ``log_index`` (k, years) has 0 where not observed."""

    model: Model
    data: DataSpec
    free: tuple[str, ...]
    lower: np.ndarray
    upper: np.ndarray
    logged: np.ndarray
    log_index: np.ndarray
    observed: np.ndarray

    @property
    def observations(self) -> int:
        return int(self.observed.sum())

    def natural(self, u: np.ndarray) -> np.ndarray:
        """Parameter values (n, p) from the search scale."""
        u = np.atleast_2d(u)
        return np.where(self.logged, np.exp(u), u)

    def scaled(self, values: np.ndarray) -> np.ndarray:
        """The search scale from parameter values (n, p)."""
        values = np.atleast_2d(values)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(self.logged, np.log(np.abs(values)), values)

    def run(self, u: np.ndarray) -> Run:
        """The model through the data's years for each row of ``u``."""
        values = self.natural(u)
        named = {name: values[:, j] for j, name in enumerate(self.free)}
        arguments: list[np.ndarray | float] = [
            named.get(name, float(self.model.values[name])) for name in self.model.parameters
        ]
        start = self.data.start
        if start == START_ESTIMATE:
            first = named[START]
        elif isinstance(start, str):
            first = np.broadcast_to(named.get(start, float(self.model.values[start])), len(values))
        else:
            first = np.full(len(values), float(start))
        return run_years(self.model, self.data, arguments, np.asarray(first, dtype=float))

    def residuals(
        self, u: np.ndarray, log_index: np.ndarray | None = None
    ) -> tuple[np.ndarray, list[np.ndarray], Run]:
        """Log residuals (n, observations) for each row of ``u``, each index's log q, the run.

        ``log_index`` (n or 1, k, years) replaces the data's (for the bootstrap).
        """
        run = self.run(u)
        states = run.at(self.data.timing)
        logs = self.log_index[None] if log_index is None else log_index
        parts, log_qs = [], []
        for k in range(self.log_index.shape[0]):
            residual, log_q = log_residuals(states, logs[:, k, :], self.observed[k])
            parts.append(residual)
            log_qs.append(log_q)
        return np.concatenate(parts, axis=1), log_qs, run


def build_problem(scenario: Scenario, model: Model) -> Problem:
    """The problem of fitting ``model`` (the scenario's base model) to its ``[data]``."""
    data = scenario.data
    assert data is not None
    free = list(data.estimate)
    lower, upper = [], []
    for name in data.estimate:
        low, high = scenario.parameter(name).range or (0.0, 0.0)
        lower.append(low)
        upper.append(high)
    if data.start == START_ESTIMATE:
        high = float(scenario.state.max or 0.0)
        free.append(START)
        lower.append(max(scenario.state.min, high / 1000.0))
        upper.append(high)
    low_array, high_array = np.array(lower), np.array(upper)
    logged = low_array > 0
    with np.errstate(divide="ignore"):
        lower_u = np.where(logged, np.log(np.where(logged, low_array, 1.0)), low_array)
        upper_u = np.where(logged, np.log(np.where(logged, high_array, 1.0)), high_array)
    values = np.array([series.values for series in data.indices], dtype=float)
    observed = np.isfinite(values)
    log_index = np.where(observed, np.log(np.where(observed, values, 1.0)), 0.0)
    return Problem(model, data, tuple(free), lower_u, upper_u, logged, log_index, observed)
