"""Recovery after a shock and hysteresis after a collapse."""

from __future__ import annotations

import math

import pytest
from test_dynamics_support import Parameter, Spec, lever_records, model

from sitegen.dynamics.records import COLLAPSES
from sitegen.dynamics.recovery import hysteresis, recovery_after_shock

EVENT_REL = 1e-7  # relative accuracy of integrated times
RETURN_REL = 1e-12  # return times from 30-digit equilibria
FOLD_REL = 1e-8  # folds refined by the continuation


def effort(level: float) -> Spec:
    return Spec(
        rate="r*x*(1 - x/K) - q*E*x",
        parameters={
            "r": Parameter(0.8, "1/yr"),
            "K": Parameter(5000.0, "t"),
            "q": Parameter(0.002, "1/vd"),
            "E": Parameter(level, "vd/yr", (0.0, 500.0)),
        },
        high=6000.0,
        lever="E",
        yield_="q*E*x",
    )


def test_recovery_time_under_effort() -> None:
    # Schaefer (1954), R03 (confirmed): x* = K(1 - qE/r) = 3125 t and return time 1/(r - qE)
    # = 2 yr. Time from x*/2 back to 0.9 x*: the logistic travel time (Verhulst 1838, R04
    # formula, from memory) with rate r - qE = 0.5 and capacity x*: 2 ln 9 (derived).
    result = recovery_after_shock(model(effort(150.0)), 0.5)
    assert result is not None
    assert result.stable_state == pytest.approx(3125.0, rel=1e-12)
    assert result.start == pytest.approx(1562.5, rel=1e-12)
    assert result.return_time == pytest.approx(2.0, rel=RETURN_REL)
    assert result.time_to_10 == pytest.approx(2.0 * math.log(9.0), rel=EVENT_REL)


def test_recovery_time_ratio_under_effort() -> None:
    # Murray (2002) sec. 1.6 (from memory), R03: T_R(E)/T_R(0) = 1/(1 - qE/r) = 1.6.
    fished = recovery_after_shock(model(effort(150.0)), 0.5)
    unfished = recovery_after_shock(model(effort(0.0)), 0.5)
    assert fished is not None and unfished is not None
    assert fished.return_time / unfished.return_time == pytest.approx(1.6, rel=RETURN_REL)
    # The same ratio holds for the integrated 10% recovery times (logistic similarity, derived).
    assert fished.time_to_10 / unfished.time_to_10 == pytest.approx(1.6, rel=EVENT_REL)


def test_recovery_from_a_tenth_of_k() -> None:
    # Verhulst (1838), R04 (from memory): 100 t -> 900 t takes 2 ln 81 = 8.788898309344878 yr.
    spec = Spec(
        rate="r*x*(1 - x/K)",
        high=1200.0,
        parameters={"r": Parameter(0.5, "1/yr"), "K": Parameter(1000.0, "t")},
    )
    result = recovery_after_shock(model(spec), 0.9)
    assert result is not None
    assert result.time_to_10 == pytest.approx(8.788898309344878, rel=EVENT_REL)
    assert result.return_time == pytest.approx(2.0, rel=RETURN_REL)  # R04: 1/r = 2 yr


def test_cooling_recovery_closed_form() -> None:
    # Newton's law of cooling, R25 (Stewart sec. 3.8, from memory): T = A + (T0 - A) e^(-kt);
    # from A/2 to within 10% of A takes ln(5)/k (derived).
    k = math.log(28 / 17) / 30
    spec = Spec(
        rate="-k*(T - A)",
        symbol="T",
        state_unit="degF",
        time_unit="min",
        high=200.0,
        parameters={"k": Parameter(k, "1/min"), "A": Parameter(44.0, "degF")},
    )
    result = recovery_after_shock(model(spec), 0.5)
    assert result is not None
    assert result.time_to_10 == pytest.approx(math.log(5.0) / k, rel=EVENT_REL)
    assert result.return_time == pytest.approx(1.0 / k, rel=RETURN_REL)


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
    )


def test_a_large_shock_under_a_quota_collapses() -> None:
    # R01 (Clark 1990 ch. 1, from memory): below x- = 276.39 t the stock goes extinct.
    result = recovery_after_shock(model(quota(100.0)), 0.7)
    assert result is not None
    assert result.start < 276.3932022500210
    assert result.fate == COLLAPSES and result.time_to_10 is None


def test_quota_collapse_is_irreversible_inside_the_range() -> None:
    # R01/R24 model: after extinction f(0) = -H <= 0 for every quota H >= 0 (derived).
    built = model(quota(150.0))
    _, records = lever_records(built)
    result = hysteresis(built, records)
    assert result is not None
    assert result.fold_value == pytest.approx(125.0, rel=FOLD_REL)
    assert result.irreversible and result.return_value is None
    assert result.collapsed_state == 0.0


def lake(b: float, loading: float) -> Spec:
    return Spec(
        rate="a - b*x + c*x^2/(1 + x^2)",
        state_unit="1",
        high=3.0,
        parameters={
            "a": Parameter(loading, "1/yr", (0.0, 0.2)),
            "b": Parameter(b, "1/yr"),
            "c": Parameter(1.0, "1/yr"),
        },
        lever="a",
    )


def test_lake_hysteresis_is_reversible_at_b_06() -> None:
    # Carpenter, Ludwig & Brock (1999) (from memory), R19 (derived): at b = 0.6 the clear
    # state is lost at a_high = 0.1020918438251307 and returns at a_low = 0.08972441837399073.
    built = model(lake(0.6, 0.11))
    _, records = lever_records(built)
    result = hysteresis(built, records)
    assert result is not None and not result.irreversible
    assert result.fold_value == pytest.approx(0.1020918438251307, rel=FOLD_REL)
    assert result.return_value == pytest.approx(0.08972441837399073, rel=FOLD_REL)
    assert result.distance == pytest.approx(0.1020918438251307 - 0.08972441837399073, rel=1e-6)
    assert result.collapsed_state > 0.7875529384989432  # on the turbid branch


def test_lake_at_b_045_is_irreversible() -> None:
    # Carpenter et al. (1999) (from memory), R19 (derived): at b = 0.45, a_low < 0, so no
    # non-negative loading restores the clear state.
    built = model(lake(0.45, 0.06))
    _, records = lever_records(built)
    result = hysteresis(built, records)
    assert result is not None
    assert result.fold_value == pytest.approx(0.05369514792960103, rel=FOLD_REL)
    assert result.irreversible and result.return_value is None
