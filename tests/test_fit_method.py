"""The fit against the outside world: recovery of known parameters, an independent
regression method, the closed-form q, and the Schaefer reference points.

Sources beside each check. The self-consistency test uses the Jacobian intervals
(no bootstrap, to stay fast) and the batched refit (checked here against the
multistart least-squares fit on the same data).
"""

from __future__ import annotations

import json
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from sitegen.analysis.bifurcations import build_bifurcations
from sitegen.analysis.continuation import continue_equilibria
from sitegen.analysis.equilibria import find_equilibria
from sitegen.dynamics.limits import lever_limit, stable_run
from sitegen.fitting import fit_scenario, fit_summary, fit_text
from sitegen.fitting.derived import derived_figures
from sitegen.fitting.estimate import best_fit, covariance_at, jacobian_intervals, refit_batch
from sitegen.fitting.problem import build_problem
from sitegen.fitting.simulate import log_residuals, run_years
from sitegen.model.model import build_model
from sitegen.scenario.loader import load_scenario
from sitegen.scenario.records import DataSpec, IndexSeries, Scenario

ROOT = Path(__file__).resolve().parents[1]
SPRAT = ROOT / "scenarios" / "coastal-sprat.toml"
TRUE = {"r": 0.5, "K": 1000.0}
YEARS = tuple(range(2002, 2027))
# Moderate, heavy (above MSY = 125), then light catches: a decline and a recovery.
CONTRAST = tuple([70.0] * 7 + [145.0] * 7 + [50.0] * 6 + [110.0] * 5)
Q = 0.8
NOISE_SD = 0.15


@pytest.fixture(scope="module")
def sprat() -> Scenario:
    return load_scenario(SPRAT)


def with_data(scenario: Scenario, removals: tuple[float, ...], index: np.ndarray) -> Scenario:
    data = DataSpec(
        "test",
        YEARS,
        "H",
        removals,
        (IndexSeries("survey", tuple(index)),),
        ("r", "K"),
        "K",
        replicates=0,
        data_hash="0" * 64,
    )
    return replace(scenario, data=data)


def true_states(scenario: Scenario, removals: tuple[float, ...]) -> np.ndarray:
    model = build_model(scenario)
    data = with_data(scenario, removals, np.ones(len(YEARS))).data
    assert data is not None
    return run_years(model, data, [TRUE["r"], TRUE["K"], 0.0], np.array([TRUE["K"]])).start[0]


def test_known_parameters_recovered_within_intervals(sprat: Scenario) -> None:
    """Self-consistency (common practice, no source): 95% intervals cover the truth in
    at least 90% of 50 data sets simulated with log-normal noise (seed 8)."""
    states = true_states(sprat, CONTRAST)
    rng = np.random.default_rng(8)
    noisy = Q * states[None, :] * np.exp(rng.normal(0.0, NOISE_SD, (50, len(YEARS))))
    problem = build_problem(with_data(sprat, CONTRAST, noisy[0]), build_model(sprat))
    start = problem.scaled(np.array([[0.4, 850.0]]))[0]  # not the truth
    fitted, converged = refit_batch(problem, start, np.log(noisy)[:, None, :])
    assert converged.all()
    covered = np.zeros(2)
    for u, series in zip(fitted, np.log(noisy), strict=True):
        one = replace(problem, log_index=series[None])
        low, high = jacobian_intervals(one, u, covariance_at(one, u))
        covered += (low <= [TRUE["r"], TRUE["K"]]) & ([TRUE["r"], TRUE["K"]] <= high)
    assert (covered >= 45).all(), covered
    # The batched refit finds the multistart least-squares optimum (same data, set 1).
    best = best_fit(replace(problem, log_index=np.log(noisy[:1])), seed=1)
    assert np.allclose(problem.natural(best.u)[0], problem.natural(fitted[0])[0], rtol=1e-4)


def walters_hilborn(index: np.ndarray, catch: np.ndarray) -> tuple[float, float, float]:
    """Regression form of the surplus-production model (Walters and Hilborn 1976; Hilborn
    and Walters 1992, ch. 8): with U = qB and B' = B + rB(1 - B/K) - C,
    U_{t+1}/U_t - 1 = r - (r/(qK)) U_t - q C_t/U_t, fitted by ordinary least squares."""
    y = index[1:] / index[:-1] - 1.0
    design = np.column_stack([np.ones(len(y)), index[:-1], catch[:-1] / index[:-1]])
    (a, b, c), *_ = np.linalg.lstsq(design, y, rcond=None)
    q = -c
    return float(a), float(-a / (b * q)), float(q)


def test_regression_method_checks_itself_on_difference_equation_data() -> None:
    """On data made by the difference equation itself the regression is exact."""
    biomass = [1000.0]
    for catch in CONTRAST[:-1]:
        b = biomass[-1]
        biomass.append(b + 0.5 * b * (1 - b / 1000.0) - catch)
    r, k, q = walters_hilborn(Q * np.array(biomass), np.array(CONTRAST))
    assert (r, k, q) == pytest.approx((0.5, 1000.0, Q), rel=1e-9)


def test_fit_agrees_with_the_regression_method_on_noise_free_data(sprat: Scenario) -> None:
    """Noise-free continuous logistic data: the fit recovers r and K, and the regression
    (a one-year Euler step of the same model) agrees to within its discretisation error,
    bounded by r h / 2 relative for a step of h = 1 year (the leading term of Euler's
    local error for the logistic, from memory; here it is 0.25 and the regression is
    about 11% off)."""
    states = true_states(sprat, CONTRAST)
    scenario = with_data(sprat, CONTRAST, Q * states)
    report = fit_scenario(scenario, replicates=0)
    assert report is not None
    fitted_r, fitted_k = report.estimate("r").value, report.estimate("K").value
    assert (fitted_r, fitted_k) == pytest.approx((0.5, 1000.0), rel=1e-5)
    assert report.indices[0].q == pytest.approx(Q, rel=1e-5)
    r, k, q = walters_hilborn(Q * states, np.array(CONTRAST))
    bound = 0.5 * TRUE["r"] * 1.0  # r h / 2, h = 1 year
    assert abs(r / fitted_r - 1) < bound and abs(k / fitted_k - 1) < bound
    assert abs(q / Q - 1) < bound
    assert r != pytest.approx(fitted_r, rel=1e-3)  # the regression's discretisation shows


def test_closed_form_q_matches_direct_minimisation() -> None:
    """log q = mean(log I - log x) minimises the sum of squared log residuals (checked
    with scipy.optimize.minimize_scalar, an independent numerical minimisation)."""
    rng = np.random.default_rng(3)
    states = rng.uniform(100.0, 900.0, (1, 20))
    index = 0.37 * states[0] * np.exp(rng.normal(0.0, 0.2, 20))
    observed = np.ones(20, dtype=bool)
    observed[[3, 11]] = False
    _, log_q = log_residuals(states, np.log(index)[None], observed)

    def cost(value: float) -> float:
        gap = np.log(index[observed]) - value - np.log(states[0, observed])
        return float(gap @ gap)

    direct = minimize_scalar(cost, bracket=(-3.0, 0.0), tol=1e-12)
    assert log_q[0] == pytest.approx(direct.x, abs=1e-7)


def test_derived_figures_match_schaefer_and_the_branch_route(sprat: Scenario) -> None:
    """Schaefer (1954): with a fixed catch the limit and MSY are r K / 4 and B_MSY = K / 2.
    The branch route of sitegen.dynamics.limits gives the same lever limit."""
    model = build_model(sprat)
    r = np.array([0.5, 0.35, 0.62])
    k = np.array([1000.0, 800.0, 1200.0])
    found = derived_figures(model, [r, k, 100.0], 3)
    assert found["lever_limit"] == pytest.approx(r * k / 4, rel=1e-9)
    assert found["msy"] == pytest.approx(r * k / 4, rel=1e-6)
    assert found["b_msy"] == pytest.approx(k / 2, rel=1e-3)
    assert found["margin"] == pytest.approx(r * k / 4 - 100.0, rel=1e-9)
    other = model.with_values({"r": 0.35, "K": 800.0})
    branches, points = continue_equilibria(other, "H")
    records, _ = build_bifurcations(
        other, "H", [(p.parameter_value, p.state_value) for p in points], []
    )
    run = stable_run(other, branches, records, find_equilibria(other)[0])
    limit = lever_limit(other, run)
    assert limit is not None and limit.limit == pytest.approx(found["lever_limit"][1], rel=1e-7)


def test_one_way_trip_is_reported_as_poorly_determined(sprat: Scenario) -> None:
    """A steady decline under heavy catches carries little information on r and K
    separately (Hilborn and Walters 1992, ch. 8, "one-way trip")."""
    heavy = tuple([95.0] * len(YEARS))
    states = true_states(sprat, heavy)
    noisy = Q * states * np.exp(np.random.default_rng(5).normal(0.0, 0.05, len(YEARS)))
    report = fit_scenario(with_data(sprat, heavy, noisy), replicates=0)
    assert report is not None and report.lacks_contrast
    assert any("poorly determined" in note and "r/K" in note for note in report.notes)
    demo = fit_scenario(load_scenario(SPRAT), replicates=0)
    assert demo is not None and not demo.lacks_contrast


def test_catches_that_empty_the_stock_do_not_break_the_fit(sprat: Scenario) -> None:
    """Removals above any surplus the ranges allow drive the model stock to zero; the
    fit floors it and says so (our convention)."""
    ruin = tuple([70.0] * 10 + [300.0] * 15)
    index = np.linspace(800.0, 50.0, len(YEARS))
    report = fit_scenario(with_data(sprat, ruin, index), replicates=4)
    assert report is not None and report.collapsed
    assert any("driven to zero" in note for note in report.notes)
    assert np.isfinite([e.value for e in report.estimates]).all()
    assert json.dumps(fit_summary(report), allow_nan=False)


def test_summary_is_plain_sorted_and_carries_units(sprat: Scenario) -> None:
    report = fit_scenario(sprat, replicates=40)
    assert report is not None
    summary = fit_summary(report)
    text = json.dumps(summary, allow_nan=False, sort_keys=True)
    assert json.dumps(summary, allow_nan=False) == text  # keys already sorted
    assert text == json.dumps(fit_summary(fit_scenario(sprat, replicates=40)), sort_keys=True)
    for name in (*summary["estimates"], *summary["derived"]):
        group = "estimates" if name in summary["estimates"] else "derived"
        assert summary["units"][f"{group}.{name}"]
    assert summary["units"]["derived.lever_limit"] == "kt/yr"
    low, high = summary["derived"]["lever_limit"]["interval_bootstrap"]
    assert low < summary["derived"]["lever_limit"]["value"] < high
    assert "r" in fit_text(report) and "bootstrap" in fit_text(report)
