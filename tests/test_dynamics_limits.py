"""Lever limits, MSY along the stable branch, stock status and economic yields."""

from __future__ import annotations

import math

import pytest
from test_dynamics_support import Parameter, Spec, lever_records, model, scenario

from sitegen.analysis.bifurcations import SADDLE_NODE, TRANSCRITICAL
from sitegen.dynamics.limits import (
    COMMON_PRACTICE,
    DECLARED,
    economic_yield,
    lever_limit,
    stable_run,
    stock_status,
    sustainable_yield,
)
from sitegen.model.model import build_model

EXACT_REL = 1e-9  # values at refined folds and transcritical points
OPTIMUM_REL = 1e-6  # lever and state at an interior maximum (flat there: ~sqrt(eps) accuracy)
VALUE_REL = 1e-10  # the maximal yield or rent itself (second order in the lever error)


def quota(harvest: float) -> Spec:
    return Spec(
        rate="r*x*(1 - x/K) - H",
        parameters={
            "r": Parameter(0.5, "1/yr"),
            "K": Parameter(1000.0, "t"),
            "H": Parameter(harvest, "t/yr", (0.0, 160.0)),
        },
        high=1200.0,
        lever="H",
        yield_="H",
        current=640.0,
    )


def effort(extra: tuple[str, ...] = ()) -> Spec:
    return Spec(
        rate="r*x*(1 - x/K) - q*E*x",
        parameters={
            "r": Parameter(0.8, "1/yr"),
            "K": Parameter(5000.0, "t"),
            "q": Parameter(0.002, "1/vd"),
            "E": Parameter(150.0, "vd/yr", (0.0, 500.0)),
        },
        high=6000.0,
        lever="E",
        yield_="q*E*x",
        current=3000.0,
        extra=extra,
    )


def records(spec: Spec):  # type: ignore[no-untyped-def]
    built = model(spec)
    branches, bifurcations = lever_records(built)
    return built, stable_run(built, branches, bifurcations)


def test_quota_limit_and_msy_at_the_fold() -> None:
    # Schaefer (1954), R02 (confirmed): MSY = rK/4 = 125 at B_MSY = K/2 = 500; with a quota
    # the maximum sits on the fold (Clark 1990 ch. 1, from memory, R01: H_c = rK/4).
    built, run = records(quota(100.0))
    limit = lever_limit(built, run)
    assert limit is not None
    assert limit.direction == "largest" and limit.kind == SADDLE_NODE
    assert limit.limit == pytest.approx(125.0, rel=EXACT_REL)
    assert limit.state_at_limit == pytest.approx(500.0, rel=EXACT_REL)
    assert limit.margin == pytest.approx(25.0, rel=EXACT_REL)
    assert limit.margin_percent == pytest.approx(20.0, rel=EXACT_REL)
    msy = sustainable_yield(built, run)
    assert msy is not None and msy.at_fold
    assert msy.msy == pytest.approx(125.0, rel=EXACT_REL)
    assert msy.state_at_msy == pytest.approx(500.0, rel=EXACT_REL)
    assert msy.current_yield == 100.0


def test_effort_limit_msy_and_equilibrium() -> None:
    # Schaefer (1954), R03 (confirmed): transcritical at E = r/q = 400; E_MSY = r/(2q) = 200;
    # MSY = rK/4 = 1000 t/yr at B = K/2; today x* = K(1 - qE/r) = 3125 t, Y = 937.5 t/yr.
    built, run = records(effort())
    limit = lever_limit(built, run)
    assert limit is not None
    assert limit.kind == TRANSCRITICAL and limit.direction == "largest"
    assert limit.limit == pytest.approx(400.0, rel=EXACT_REL)
    assert limit.margin == pytest.approx(250.0, rel=EXACT_REL)
    msy = sustainable_yield(built, run)
    assert msy is not None and not msy.at_fold
    assert msy.lever_at_msy == pytest.approx(200.0, rel=OPTIMUM_REL)
    assert msy.state_at_msy == pytest.approx(2500.0, rel=OPTIMUM_REL)
    assert msy.msy == pytest.approx(1000.0, rel=VALUE_REL)
    assert msy.current_yield == pytest.approx(937.5, rel=1e-12)


def test_stock_status_common_practice_limit() -> None:
    # R03 B_MSY = 2500 t; with no [reference] limit, half of B_MSY (common practice, no source).
    built, run = records(effort())
    msy = sustainable_yield(built, run)
    assert msy is not None
    status = stock_status(3000.0, msy, None)
    assert status.limit_source == COMMON_PRACTICE
    assert status.limit == pytest.approx(1250.0, rel=OPTIMUM_REL)
    assert status.ratio_to_b_msy == pytest.approx(1.2, rel=OPTIMUM_REL)
    assert not status.below_limit


def test_stock_status_declared_limit() -> None:
    spec = effort(("[reference]", "limit = 3200.0"))
    built, run = records(spec)
    msy = sustainable_yield(built, run)
    assert msy is not None
    status = stock_status(3000.0, msy, scenario(spec).reference)
    assert status.limit_source == DECLARED and status.limit == 3200.0 and status.below_limit


def test_fox_msy_under_effort() -> None:
    # Fox (1970) (confirmed), R08: for r x ln(K/x), B_MSY = K/e = 735.7588823428846 t and
    # MSY = rK/e = 220.7276647028654 t/yr; R09 (derived): E_MSY = r/q = 300.
    spec = Spec(
        rate="r*x*log(K/x) - q*E*x",
        parameters={
            "r": Parameter(0.3, "1/yr"),
            "K": Parameter(2000.0, "t"),
            "q": Parameter(0.001, "1/vd"),
            "E": Parameter(150.0, "vd/yr", (0.0, 600.0)),
        },
        high=2500.0,
        lever="E",
        yield_="q*E*x",
    )
    built, run = records(spec)
    msy = sustainable_yield(built, run)
    assert msy is not None
    assert msy.state_at_msy == pytest.approx(735.7588823428846, rel=OPTIMUM_REL)
    assert msy.msy == pytest.approx(220.7276647028654, rel=VALUE_REL)
    assert msy.lever_at_msy == pytest.approx(300.0, rel=OPTIMUM_REL)
    # R09 (derived): x* = K e^(-qE/r) > 0 for every finite effort, so no tipping point.
    assert lever_limit(built, run) is None
    assert msy.current_yield == pytest.approx(181.9591979137900, rel=1e-12)


def test_allee_effort_limit_is_a_fold() -> None:
    # R14 (derived; model as Courchamp et al. 2008, from memory): F_c = r(K - A)^2/(4AK) = 0.4
    # at x = 60, a saddle-node (not a transcritical point as in R03).
    spec = Spec(
        rate="r*x*(x/A - 1)*(1 - x/K) - F*x",
        parameters={
            "r": Parameter(0.5, "1/yr"),
            "A": Parameter(20.0, "t"),
            "K": Parameter(100.0, "t"),
            "F": Parameter(0.3, "1/yr", (0.0, 0.6)),
        },
        high=120.0,
        lever="F",
        yield_="F*x",
    )
    built, run = records(spec)
    limit = lever_limit(built, run)
    assert limit is not None and limit.kind == SADDLE_NODE
    assert limit.limit == pytest.approx(0.4, rel=EXACT_REL)
    assert limit.state_at_limit == pytest.approx(60.0, rel=EXACT_REL)


def test_gordon_schaefer_open_access_and_mey() -> None:
    # Gordon (1954) (confirmed), R05: x_inf = c/(pq) = 3000 t, E_inf = 2800, Y_inf = 840 t/yr.
    # Gordon (1954), Clark (1990) ch. 2, R06: x_MEY = 6500 t (derived), E_MEY = 1400
    # (confirmed), Y_MEY = 910 t/yr, rent 490000 $/yr (derived); E_inf / E_MEY = 2 (confirmed).
    spec = Spec(
        rate="r*x*(1 - x/K) - q*E*x",
        parameters={
            "r": Parameter(0.4, "1/yr"),
            "K": Parameter(10000.0, "t"),
            "q": Parameter(1e-4, "1/vd"),
            "E": Parameter(1000.0, "vd/yr", (0.0, 5000.0)),
        },
        high=12000.0,
        lever="E",
        yield_="q*E*x",
        extra=("[economics]", "price = 1000.0", "cost = 300.0", 'currency = "$"'),
    )
    loaded = scenario(spec)
    built = build_model(loaded)
    branches, bifurcations = lever_records(built)
    run = stable_run(built, branches, bifurcations)
    msy = sustainable_yield(built, run)
    result = economic_yield(built, run, loaded.economics, msy)
    assert result is not None and msy is not None
    assert result.open_access_state == pytest.approx(3000.0, rel=1e-9)
    assert result.open_access_lever == pytest.approx(2800.0, rel=1e-9)
    assert result.open_access_yield == pytest.approx(840.0, rel=1e-9)
    assert result.mey_state == pytest.approx(6500.0, rel=OPTIMUM_REL)
    assert result.mey_lever == pytest.approx(1400.0, rel=OPTIMUM_REL)
    assert result.mey_yield == pytest.approx(910.0, rel=OPTIMUM_REL)
    assert result.mey_rent == pytest.approx(490000.0, rel=VALUE_REL)
    assert result.open_access_lever / result.mey_lever == pytest.approx(2.0, rel=OPTIMUM_REL)
    # "MEY is more conservative than MSY": x_MEY > B_MSY = K/2 when c > 0 (R06, derived).
    assert result.mey_state > msy.state_at_msy
    assert result.msy == pytest.approx(1000.0, rel=VALUE_REL)  # rK/4 (Schaefer 1954, R02)
    assert math.isfinite(result.mey_rent)
