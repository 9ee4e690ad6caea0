"""Trajectories and their event times against closed-form solutions."""

from __future__ import annotations

import math

import pytest
from test_dynamics_support import Parameter, Spec, model

from sitegen.dynamics.records import (
    COLLAPSE,
    COLLAPSES,
    SETTLES,
    THRESHOLD,
    WITHIN_1,
    WITHIN_10,
)
from sitegen.dynamics.trajectories import integrate, integrate_many, region_starts

EVENT_REL = 1e-7  # relative accuracy of event times (solver rtol 1e-10, event root finding)
STATE_REL = 1e-9  # relative accuracy of the attractor (equilibria are polished to 30 digits)

LOGISTIC_QUOTA = Spec(
    rate="r*x*(1 - x/K) - H",
    parameters={
        "r": Parameter(0.5, "1/yr"),
        "K": Parameter(1000.0, "t"),
        "H": Parameter(100.0, "t/yr", (0.0, 160.0)),
    },
    high=1200.0,
    lever="H",
    yield_="H",
)
LOGISTIC = Spec(
    rate="r*x*(1 - x/K)",
    parameters={"r": Parameter(0.5, "1/yr"), "K": Parameter(1000.0, "t")},
    high=1200.0,
)


def logistic_quota_passage(x0: float, x1: float) -> float:
    """Passage time of r x (1 - x/K) - H from x0 to x1 by partial fractions
    (independent reference computation, derived; R01's extinction formula at x1 = 0)."""
    r, big_k, harvest = 0.5, 1000.0, 100.0
    root = math.sqrt(1.0 - 4.0 * harvest / (r * big_k))
    upper, lower = big_k / 2 * (1 + root), big_k / 2 * (1 - root)
    return (
        big_k
        / (r * (upper - lower))
        * math.log((upper - x0) * (lower - x1) / ((upper - x1) * (lower - x0)))
    )


def test_extinction_time_from_below_the_threshold() -> None:
    # Clark (1990) ch. 1 and Murray (2002) sec. 1.6 (from memory); extinction time derived
    # (partial fractions), R01: 8.608178819280081 yr from 250 t.
    trajectory = integrate(model(LOGISTIC_QUOTA), 250.0)
    assert trajectory.fate == COLLAPSES
    assert trajectory.attractor is None
    assert trajectory.time_of(COLLAPSE) == pytest.approx(8.608178819280081, rel=EVENT_REL)
    assert trajectory.time_of(WITHIN_10) is None


def test_partial_fraction_formula_reproduces_r01() -> None:
    # R01 (derived): the general passage formula reduces to the published extinction time.
    assert logistic_quota_passage(250.0, 0.0) == pytest.approx(8.608178819280081, rel=1e-14)


def test_watched_level_crossing_time() -> None:
    # Independent reference computation (derived from the model of R01): 250 t -> 200 t.
    trajectory = integrate(model(LOGISTIC_QUOTA), 250.0, thresholds=[200.0])
    assert trajectory.time_of(THRESHOLD) == pytest.approx(
        logistic_quota_passage(250.0, 200.0), rel=EVENT_REL
    )


def test_above_the_threshold_the_stock_settles_at_the_upper_state() -> None:
    # R01 (Clark 1990 ch. 1, from memory): upper equilibrium 500 + 100 sqrt 5 = 723.6067977499790.
    upper = 723.6067977499790
    trajectory = integrate(model(LOGISTIC_QUOTA), 300.0)
    assert trajectory.fate == SETTLES
    assert trajectory.attractor == pytest.approx(upper, rel=STATE_REL)
    # 10% band entered at 0.9 x+, 1% band at 0.99 x+ (derived passage times).
    assert trajectory.time_of(WITHIN_10) == pytest.approx(
        logistic_quota_passage(300.0, 0.9 * upper), rel=EVENT_REL
    )
    assert trajectory.time_of(WITHIN_1) == pytest.approx(
        logistic_quota_passage(300.0, 0.99 * upper), rel=EVENT_REL
    )


def test_logistic_travel_time_100_to_900() -> None:
    # Verhulst (1838); Boyce & DiPrima sec. 2.5 (from memory), R04: 2 ln 81 = 8.788898309344878
    # yr from 100 t to 900 t, i.e. to within 10% of K = 1000 t.
    trajectory = integrate(model(LOGISTIC), 100.0)
    assert trajectory.time_of(WITHIN_10) == pytest.approx(8.788898309344878, rel=EVENT_REL)


def test_logistic_travel_time_10_to_half_k() -> None:
    # Verhulst (1838), R04 (from memory): 2 ln 99 = 9.190239700269180 yr from 10 t to K/2.
    trajectory = integrate(model(LOGISTIC), 10.0, thresholds=[500.0])
    assert trajectory.time_of(THRESHOLD) == pytest.approx(9.190239700269180, rel=EVENT_REL)


COOLING = {
    # Stewart, Calculus: Early Transcendentals 7th ed., sec. 3.8 (from memory), R25.
    "soda": (44.0, 72.0, math.log(28 / 17) / 30, 50.0, 92.61356586299682),
    "turkey": (75.0, 185.0, math.log(22 / 15) / 30, 100.0, 116.0549226933294),
}


@pytest.mark.parametrize("case", sorted(COOLING))
def test_newton_cooling_time_to_a_temperature(case: str) -> None:
    # Newton (1701); Stewart sec. 3.8 (from memory), R25: the time to reach a temperature.
    ambient, start, k, level, minutes = COOLING[case]
    spec = Spec(
        rate="-k*(T - A)",
        symbol="T",
        state_unit="degF",
        time_unit="min",
        parameters={"k": Parameter(k, "1/min"), "A": Parameter(ambient, "degF")},
        high=200.0,
        collapse_level=level,
    )
    trajectory = integrate(model(spec), start, collapse_level=level)
    assert trajectory.time_of(COLLAPSE) == pytest.approx(minutes, rel=EVENT_REL)


def test_cooling_within_ten_percent_closed_form() -> None:
    # R25 closed form t = (1/k) ln((T0 - A)/(T1 - A)) with T1 = 1.1 A (derived).
    ambient, start, k = 44.0, 72.0, math.log(28 / 17) / 30
    spec = Spec(
        rate="-k*(T - A)",
        symbol="T",
        state_unit="degF",
        time_unit="min",
        parameters={"k": Parameter(k, "1/min"), "A": Parameter(ambient, "degF")},
        high=200.0,
    )
    trajectory = integrate(model(spec), start)
    expected = math.log((start - ambient) / (0.1 * ambient)) / k
    assert trajectory.time_of(WITHIN_10) == pytest.approx(expected, rel=EVENT_REL)
    assert trajectory.attractor == pytest.approx(ambient, rel=STATE_REL)


def test_budworm_runs_either_side_of_the_threshold() -> None:
    # Strogatz (2015) sec. 3.7 and Ludwig et al. (1978); R16 (derived): from 1.9 to the refuge
    # 4 - sqrt 11, from 2.1 to the outbreak 4 + sqrt 11 (threshold at 2).
    spec = Spec(
        rate="r*x*(1 - x/k) - c*x^2/(1 + x^2)",
        state_unit="1",
        parameters={"r": Parameter(0.5, "1/yr"), "k": Parameter(10.0), "c": Parameter(1.0, "1/yr")},
        high=12.0,
    )
    runs = integrate_many(model(spec), [1.9, 2.1])
    assert [run.fate for run in runs] == [SETTLES, SETTLES]
    assert runs[0].attractor == pytest.approx(4 - math.sqrt(11), rel=STATE_REL)
    assert runs[1].attractor == pytest.approx(4 + math.sqrt(11), rel=STATE_REL)


def test_region_starts_include_todays_state() -> None:
    built = model(Spec(**{**LOGISTIC_QUOTA.__dict__, "current": 640.0}))
    starts = region_starts(built)
    assert 640.0 in starts
    assert starts.min() > 0.0 and starts.max() < 1200.0
