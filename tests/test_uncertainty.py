"""Monte Carlo of collapse risk, stable states and lever limits (sitegen.dynamics.uncertainty).

Published values used here (copied from the project's references, R01/R02):

- R01: logistic growth with constant harvest, f = r x (1 - x/K) - H, saddle-node at
  H_c = rK/4 and upper (stable) equilibrium x+ = (K/2)(1 + sqrt(1 - 4H/(rK))).
  Source: Clark (1990), Mathematical Bioeconomics, 2nd ed., ch. 1; Murray (2002),
  Mathematical Biology I, 3rd ed., sec. 1.6 -- status: from memory (closed forms standard).
- R02: MSY of the Schaefer model, MSY = rK/4. Source: Schaefer (1954), Bull. Inter-Am.
  Trop. Tuna Comm. 1(2): 27-56 -- status: confirmed.

Hence with r ~ Normal(mu, sd) and K, H fixed, a sample collapses exactly when
rK/4 < H, so the collapse risk is P(r < 4H/K) = Phi((4H/K - mu)/sd).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from sitegen.dynamics.uncertainty import (
    TOLERANCE_NOTE,
    draw_samples,
    run_uncertainty,
    safe_lever_setting,
)
from sitegen.scenario.loader import load_text
from sitegen.scenario.records import UncertainParameter, UncertaintySpec

BINOMIAL_SES = 4.0  # collapse risk within 4 binomial standard errors of the exact CDF
STATE_RELATIVE = 1e-9  # bisected roots vs the closed form, per sample
LIMIT_RELATIVE = 1e-9  # Newton-polished fold vs rK/4, per sample
MEAN_SES = 5.0  # sample means within 5 standard errors of the distribution's mean
VARIANCE_RELATIVE = 0.03  # sample variances within 3% of the distribution's variance
MOMENT_SAMPLES = 200_000

R, K, SD = 0.5, 1000.0, 0.05


def scenario_text(
    quota: float, samples: int = 10_000, seed: int = 7, policies: str = "", extra: str = ""
) -> str:
    """Logistic stock with a constant quota H and a normal uncertainty on r only."""
    return f"""
[scenario]
title = "Test stock (illustrative)"
summary = "Invented numbers."
assessment_year = 2026
[state]
symbol = "B"
name = "biomass"
unit = "t"
current = 700
[parameters.r]
value = {R}
unit = "1/yr"
name = "growth rate"
[parameters.K]
value = {K}
unit = "t"
name = "carrying capacity"
[parameters.H]
value = {quota}
unit = "t/yr"
name = "quota"
range = [0, 200]
[model]
rate = "r*B*(1 - B/K) - H"
lever = "H"
yield = "H"
{policies}
[uncertainty]
samples = {samples}
seed = {seed}
{extra}
[uncertainty.r]
distribution = "normal"
sd = {SD}
"""


def report(quota: float = 120.0, **options: object):
    return run_uncertainty(load_text(scenario_text(quota, **options), "t.toml", "t"))


@pytest.fixture(scope="module")
def quota_120():
    return report(120.0)


def test_collapse_risk_matches_the_normal_cdf(quota_120) -> None:
    # R01/R02 (Schaefer 1954 fold H_c = rK/4): collapse iff r < 4H/K.
    outcome = quota_120.outcome("base")
    exact = stats.norm.cdf(4 * 120.0 / K, loc=R, scale=SD)
    se = np.sqrt(exact * (1 - exact) / outcome.samples)
    assert abs(outcome.collapse_risk - exact) <= BINOMIAL_SES * se
    # The same draws decide it exactly (independent reference computation).
    r = quota_120.draws["r"]
    assert outcome.collapsed == int(np.count_nonzero(r * K / 4 < 120.0))


def test_stable_state_quantiles_match_the_closed_form(quota_120) -> None:
    # R01: x+ = (K/2)(1 + sqrt(1 - 4H/(rK))) on the same samples.
    outcome = quota_120.outcome("base")
    r = quota_120.draws["r"]
    alive = r * K / 4 > 120.0
    exact = np.full(r.size, np.nan)
    exact[alive] = K / 2 * (1 + np.sqrt(1 - 4 * 120.0 / (r[alive] * K)))
    assert np.array_equal(np.isnan(outcome.states), ~alive)
    assert np.allclose(outcome.states[alive], exact[alive], rtol=STATE_RELATIVE, atol=0)
    expected = np.quantile(exact[alive], [0.05, 0.5, 0.95])
    got = [outcome.stable_state.p05, outcome.stable_state.p50, outcome.stable_state.p95]
    assert np.allclose(got, expected, rtol=STATE_RELATIVE)
    # The yield is the quota wherever the stock persists.
    assert outcome.yield_.p05 == outcome.yield_.p95 == 120.0


def test_lever_limits_are_the_fold_rk_over_4(quota_120) -> None:
    # R02 (Schaefer 1954, confirmed): MSY = H_c = rK/4, per sample.
    outcome = quota_120.outcome("base")
    exact = quota_120.draws["r"] * K / 4
    assert np.allclose(outcome.lever_limits, exact, rtol=LIMIT_RELATIVE, atol=0)
    order = np.sort(exact)
    assert outcome.safe_lever == pytest.approx(order[int(0.05 * exact.size)], rel=LIMIT_RELATIVE)
    # The safe setting keeps the empirical risk at or under the tolerance.
    assert np.mean(exact < outcome.safe_lever) <= 0.05
    assert TOLERANCE_NOTE in outcome.notes


def test_collapse_agrees_with_the_lever_limit(quota_120) -> None:
    # Consistency: a sample collapses at H exactly when its lever limit is below H.
    outcome = quota_120.outcome("base")
    assert np.array_equal(np.isnan(outcome.states), outcome.lever_limits < 120.0)


def test_policies_use_the_same_draws_and_order_by_quota() -> None:
    policies = """
[[policies]]
name = "cautious"
values = {H = 80}
[[policies]]
name = "bold"
values = {H = 124}
"""
    result = report(100.0, samples=2000, policies=policies)
    risks = [result.outcome(n).collapse_risk for n in ("cautious", "base", "bold")]
    assert risks == sorted(risks)
    r = result.draws["r"]
    assert result.outcome("bold").collapsed == int(np.count_nonzero(r * K / 4 < 124.0))
    # Quota policies share the lever limits of the base model.
    assert np.array_equal(result.outcome("bold").lever_limits, result.outcome("base").lever_limits)


def test_identical_seeds_give_identical_output() -> None:
    first, second = report(110.0, samples=500, seed=11), report(110.0, samples=500, seed=11)
    assert first.outcomes == second.outcomes
    for a, b in zip(first.outcomes, second.outcomes, strict=True):
        assert np.array_equal(a.states, b.states, equal_nan=True)
        assert np.array_equal(a.lever_limits, b.lever_limits)
    other = report(110.0, samples=500, seed=12)
    assert not np.array_equal(other.draws["r"], first.draws["r"])
    assert other.outcomes[0].stable_state != first.outcomes[0].stable_state


def _spec(distribution: str, **numbers: float) -> UncertaintySpec:
    parameter = UncertainParameter("p", distribution, dict(numbers))
    return UncertaintySpec(MOMENT_SAMPLES, 5, 0.05, (parameter,))


@pytest.mark.parametrize(
    ("spec", "frozen"),
    [
        # scipy.stats parameterisations: lognorm(s=sdlog, scale=median).
        (_spec("lognormal", median=2.0, sdlog=0.3), stats.lognorm(s=0.3, scale=2.0)),
        (_spec("uniform", low=1.0, high=4.0), stats.uniform(loc=1.0, scale=3.0)),
        # triang(c=(mode-low)/(high-low), loc=low, scale=high-low).
        (
            _spec("triangular", low=1.0, mode=1.5, high=4.0),
            stats.triang(c=0.5 / 3.0, loc=1.0, scale=3.0),
        ),
        (_spec("normal", mean=0.5, sd=0.05), stats.norm(loc=0.5, scale=0.05)),
    ],
)
def test_sampling_moments_match_scipy(spec: UncertaintySpec, frozen) -> None:
    values = draw_samples(spec)["p"]
    mean, variance = frozen.stats(moments="mv")
    assert abs(values.mean() - mean) <= MEAN_SES * np.sqrt(variance / values.size)
    assert values.var() == pytest.approx(float(variance), rel=VARIANCE_RELATIVE)


def test_safe_setting_is_the_order_statistic() -> None:
    limits = np.array([5.0, 1.0, 3.0, 2.0, 4.0, -np.inf, 6.0, 7.0, 8.0, 9.0])
    # tolerance 0.2 of 10 samples: at most 2 may lie below, so the 3rd smallest (2.0).
    assert safe_lever_setting(limits, 0.2) == 2.0
    assert safe_lever_setting(limits, 0.0) == -np.inf
