"""The fit of a scenario to its ``[data]``: estimates, intervals, derived figures, diagnostics.

Method (observation error only): the model is run year by year under the
observed removals (:mod:`sitegen.fitting.simulate`), each index is predicted as
q times the state (at the start of the year, or mid-year with ``timing =
"mid"``), and the sum of squared log residuals is minimised
(:mod:`sitegen.fitting.estimate`) with q in closed form.

Uncertainty: 95% intervals from the Jacobian, and a residual bootstrap: the
fitted log residuals of each index are resampled with replacement, added to the
fitted log predictions, and every replicate is refitted (seed: ``[uncertainty]
seed``, else ``DEFAULT_SEED``; ``[data] replicates``, default 500). Replicates
whose refit does not converge are left out and counted.

Contrast: when no index climbs back by ``CONTRAST_RISE`` (on its three-year
running mean) from an earlier low, the data are a one-way trip and the report
says plainly that r and K (growth and size) are poorly determined together.
"""

from __future__ import annotations

import time

import numpy as np

from sitegen.fitting.derived import derived_figures
from sitegen.fitting.estimate import BestFit, best_fit, jacobian_intervals, refit_batch
from sitegen.fitting.problem import START, Problem, build_problem
from sitegen.fitting.records import Derived, Estimate, FitReport, IndexFit
from sitegen.model.model import Model, build_model
from sitegen.scenario.records import FitEntry, Scenario

DEFAULT_SEED = 0
CONTRAST_RISE = 0.2  # a 20% recovery from a low counts as contrast (common practice, no source)
POOR_RELATIVE_SE = 0.5
POOR_CORRELATION = 0.9
AT_BOUND = 1e-6  # of the search span
DERIVED_LABELS = {
    "lever_limit": "lever limit",
    "margin": "today's margin to the lever limit",
    "msy": "maximum sustainable yield (MSY)",
    "b_msy": "state at MSY (B_MSY)",
    "state": "fitted state at the start of the last data year",
}


def _arguments(model: Model, problem: Problem, values: np.ndarray) -> list[np.ndarray | float]:
    named = {n: values[:, j] for j, n in enumerate(problem.free) if n != START}
    return [named.get(n, float(model.values[n])) for n in model.parameters]


def _contrast(problem: Problem) -> bool:
    """True when some index recovers by CONTRAST_RISE from an earlier low."""
    for k in range(problem.log_index.shape[0]):
        logs = problem.log_index[k][problem.observed[k]]
        if logs.size < 3:
            continue
        mean = np.convolve(logs, np.ones(3) / 3.0, mode="valid")
        if np.max(mean - np.minimum.accumulate(mean)) >= np.log1p(CONTRAST_RISE):
            return True
    return False


def _interval(values: np.ndarray) -> tuple[float, float] | None:
    values = values[np.isfinite(values)]
    if values.size < 2:
        return None
    low, high = np.percentile(values, [2.5, 97.5])
    return float(low), float(high)


def _correlations(names: tuple[str, ...], matrix: np.ndarray) -> dict[str, float]:
    result = {}
    for i in range(len(names)):
        for j in range(i + 1, len(names)):
            result[f"{names[i]}/{names[j]}"] = float(matrix[i, j])
    return result


def _previous(scenario: Scenario) -> FitEntry | None:
    earlier = [e for e in scenario.fits if e.assessment_year < scenario.assessment_year]
    return earlier[-1] if earlier else None


def _bootstrap(
    problem: Problem, fit: BestFit, replicates: int, rng: np.random.Generator
) -> tuple[np.ndarray, np.ndarray]:
    """Refitted search-scale values (B, p) and whether each replicate converged."""
    run = problem.run(fit.u[None])
    states = run.at(problem.data.timing)[0]
    residuals, log_qs, _ = problem.residuals(fit.u[None])
    logs = np.zeros((replicates, *problem.log_index.shape))
    used = 0
    for k in range(problem.log_index.shape[0]):
        mask = problem.observed[k]
        count = int(mask.sum())
        own = residuals[0, used : used + count]
        used += count
        predicted = log_qs[k][0] + np.log(states[mask])
        picks = rng.integers(0, count, size=(replicates, count))
        logs[:, k, mask] = predicted[None, :] + own[picks]
    return refit_batch(problem, fit.u, logs)


def fit_scenario(scenario: Scenario, replicates: int | None = None) -> FitReport | None:
    """Fit the scenario's base model to its ``[data]`` (None without ``[data]``).

    ``replicates`` overrides ``[data] replicates`` (0: Jacobian intervals only).
    """
    data = scenario.data
    if data is None:
        return None
    seconds: dict[str, float] = {}
    clock = time.perf_counter()
    model = build_model(scenario)
    problem = build_problem(scenario, model)
    seed = scenario.uncertainty.seed if scenario.uncertainty is not None else DEFAULT_SEED
    fit = best_fit(problem, seed)
    seconds["fit"] = time.perf_counter() - clock
    values = problem.natural(fit.u)
    standard_u = np.sqrt(np.clip(np.diag(fit.covariance), 0.0, None))
    residuals, log_qs, run = problem.residuals(fit.u[None])
    states = run.at(data.timing)[0]
    point = derived_figures(model, _arguments(model, problem, values), 1)
    point["state"] = run.start[0, -1:]

    count = data.replicates if replicates is None else replicates
    clock = time.perf_counter()
    boot_values = np.empty((0, len(problem.free)))
    boot_derived: dict[str, np.ndarray] = {}
    failed = 0
    if count > 0:
        u, converged = _bootstrap(problem, fit, count, np.random.default_rng(seed))
        failed = int(count - converged.sum())
        kept = u[converged]
        boot_values = problem.natural(kept) if kept.size else boot_values
        if kept.size:
            boot_derived = derived_figures(
                model, _arguments(model, problem, boot_values), len(kept)
            )
            boot_derived["state"] = problem.run(kept).start[:, -1]
    seconds["bootstrap"] = time.perf_counter() - clock

    previous = _previous(scenario)
    span = problem.upper - problem.lower
    bounds = problem.natural(np.vstack([problem.lower, problem.upper]))
    jacobian_low, jacobian_high = jacobian_intervals(problem, fit.u, fit.covariance)
    estimates = []
    for j, name in enumerate(problem.free):
        value = float(values[0, j])
        parameter = scenario.parameter(name) if name != START else None
        estimates.append(
            Estimate(
                name,
                parameter.label if parameter else f"{scenario.state.name} at the start",
                parameter.unit if parameter else scenario.state.unit,
                value,
                (float(bounds[0, j]), float(bounds[1, j])),
                float(value * standard_u[j] if problem.logged[j] else standard_u[j]),
                (float(jacobian_low[j]), float(jacobian_high[j])),
                _interval(boot_values[:, j]) if boot_values.size else None,
                bool(
                    min(fit.u[j] - problem.lower[j], problem.upper[j] - fit.u[j])
                    <= AT_BOUND * span[j]
                ),
                previous.estimates.get(name) if previous else None,
            )
        )
    lever_unit = model.units.get(str(model.lever), "")
    yield_unit = f"{model.state_unit}/{model.time_unit}"
    units = {"lever_limit": lever_unit, "margin": lever_unit, "msy": yield_unit}
    derived = tuple(
        Derived(
            name,
            DERIVED_LABELS[name],
            units.get(name, model.state_unit),
            float(point[name][0]),
            _interval(boot_derived[name]) if name in boot_derived else None,
            previous.derived.get(name) if previous else None,
        )
        for name in DERIVED_LABELS
    )
    indices = []
    used = 0
    for k, series in enumerate(data.indices):
        mask = problem.observed[k]
        n = int(mask.sum())
        own = residuals[0, used : used + n]
        used += n
        q = float(np.exp(log_qs[k][0]))
        indices.append(
            IndexFit(
                series.name,
                q,
                tuple(y for y, m in zip(data.years, mask, strict=True) if m),
                tuple(float(v) for v in np.asarray(series.values)[mask]),
                tuple(float(v) for v in q * states[mask]),
                tuple(float(v) for v in own),
            )
        )
    correlation = np.array(fit.covariance)
    scale = np.outer(standard_u, standard_u)
    with np.errstate(all="ignore"):
        correlation = np.where(scale > 0, correlation / scale, np.nan)
    boot_corr: dict[str, float] = {}
    if len(boot_values) > 2 and len(problem.free) > 1:
        with np.errstate(all="ignore"):
            boot_corr = _correlations(problem.free, np.corrcoef(boot_values.T))
    pairs = _correlations(problem.free, correlation)
    relative = np.where(
        problem.logged, standard_u, standard_u / np.maximum(np.abs(values[0]), 1e-300)
    )
    poor = {n for j, n in enumerate(problem.free) if not relative[j] <= POOR_RELATIVE_SE}
    for pair, value in pairs.items():
        if abs(value) > POOR_CORRELATION:
            poor.update(pair.split("/"))
    lacks = not _contrast(problem)
    notes = _notes(problem, fit, estimates, lacks, pairs, bool(run.floored[0]), failed, count)
    dof = problem.observations - len(problem.free) - len(data.indices)
    return FitReport(
        slug=scenario.slug,
        assessment_year=scenario.assessment_year,
        state=scenario.state.symbol,
        state_unit=model.state_unit,
        lever=str(model.lever),
        lever_unit=lever_unit,
        time_unit=model.time_unit,
        years=data.years,
        removals=data.removals,
        data_source=data.source,
        data_hash=data.data_hash,
        timing=data.timing,
        estimates=tuple(estimates),
        derived=derived,
        indices=tuple(indices),
        states=tuple(float(v) for v in run.start[0]),
        residual_sd=float(np.sqrt(2.0 * fit.cost / dof)) if dof > 0 else float("nan"),
        observations=problem.observations,
        free_parameters=len(problem.free),
        converged=fit.converged,
        message=fit.message,
        starts=fit.starts,
        starts_agreeing=fit.agreeing,
        correlation=pairs,
        bootstrap_correlation=boot_corr,
        lacks_contrast=lacks,
        poorly_determined=tuple(n for n in problem.free if n in poor),
        collapsed=bool(run.floored[0]),
        replicates=count,
        replicates_failed=failed,
        seed=seed,
        notes=tuple(notes),
        previous=previous,
        seconds=seconds,
    )


def _notes(
    problem: Problem,
    fit: BestFit,
    estimates: list[Estimate],
    lacks: bool,
    pairs: dict[str, float],
    collapsed: bool,
    failed: int,
    count: int,
) -> list[str]:
    notes = []
    if not fit.converged:
        notes.append(
            "the fit did not converge (" + fit.message + "): try narrower ranges for the "
            "estimated parameters, a fixed starting state (start = a parameter or a number), "
            "or fewer parameters in estimate"
        )
    for estimate in estimates:
        if estimate.at_bound:
            notes.append(
                f"{estimate.name} sits at an end of its range: the data would take it further; "
                "widen the range if that is plausible"
            )
    if lacks:
        pair = ", ".join(f"{k} {v:+.2f}" for k, v in pairs.items())
        notes.append(
            "the index never recovers from a low (a one-way trip): the data lack contrast, "
            "so growth and size (r and K) are poorly determined; a fast-growing small stock "
            "and a slow-growing large one fit about equally well"
            + (f" (correlation {pair})" if pair else "")
        )
    if collapsed:
        notes.append(
            "at the best fit the stock is driven to zero within the data years "
            "(held at a floor just above zero): the removals exceed what the model can supply"
        )
    if fit.agreeing == 1 and fit.starts > 1:
        notes.append(
            f"only one of {fit.starts} starting points reached the best fit: the "
            "sum of squares has several minima; treat the estimates with care"
        )
    if failed:
        notes.append(f"{failed} of {count} bootstrap replicates did not converge and are left out")
    return notes
