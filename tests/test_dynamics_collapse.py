"""Collapse past a fold: integrated time beside the bottleneck (ghost) estimate."""

from __future__ import annotations

import itertools
import math

import pytest
from test_dynamics_support import Parameter, Spec, lever_records, model

from sitegen.dynamics.collapse import collapse_past_fold, ghost_time

EVENT_REL = 1e-7  # relative accuracy of integrated times
FORMULA_REL = 1e-12  # normal-form coefficients come from exact derivatives at a refined fold
FOLD_REL = 1e-8  # fold located by continuation and Newton refinement


def over_harvest(harvest: float, current: float | None = None) -> Spec:
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
        current=current,
    )


def test_logistic_over_harvest_collapse_time_and_ghost() -> None:
    # R24 (derived from R01's model and Strogatz 2015 sec. 4.3): from K = 1000 t to 0 under
    # H = 150 t/yr the collapse takes 20.57651203962183 yr; the ghost estimate is
    # 28.09925892416291 yr.
    built = model(over_harvest(150.0))
    _, records = lever_records(built)
    result = collapse_past_fold(built, records, start=1000.0)
    assert result is not None
    # Clark (1990) ch. 1 (from memory), R01: the fold is at H_c = rK/4 = 125, x = K/2.
    assert result.fold_value == pytest.approx(125.0, rel=FOLD_REL)
    assert result.fold_state == pytest.approx(500.0, rel=FOLD_REL)
    assert result.a == pytest.approx(25.0, rel=FORMULA_REL)  # epsilon = H - rK/4
    assert result.b == pytest.approx(0.5 / 1000.0, rel=FORMULA_REL)  # beta = r/K
    assert result.collapse_time == pytest.approx(20.57651203962183, rel=EVENT_REL)
    assert result.ghost_time == pytest.approx(28.09925892416291, rel=FOLD_REL)
    assert result.collapse_time < result.ghost_time


def test_no_collapse_while_a_stable_state_exists() -> None:
    built = model(over_harvest(100.0))
    _, records = lever_records(built)
    assert collapse_past_fold(built, records) is None


def test_collapse_starts_from_todays_state_by_default() -> None:
    # R24 closed form (derived) with x0 = 640 t: T = [atan((x0 - K/2) sqrt(b/a))
    # + atan((K/2) sqrt(b/a))] / sqrt(a b).
    built = model(over_harvest(150.0, current=640.0))
    _, records = lever_records(built)
    result = collapse_past_fold(built, records)
    assert result is not None and result.start == 640.0
    a, b = 25.0, 0.0005
    expected = (
        math.atan(140.0 * math.sqrt(b / a)) + math.atan(500.0 * math.sqrt(b / a))
    ) / math.sqrt(a * b)
    assert result.collapse_time == pytest.approx(expected, rel=EVENT_REL)


def ghost_spec(distance: float, curvature: float) -> Spec:
    # dx/dt = -(a + c x^2): past the saddle-node at a = 0 by ``distance``.
    return Spec(
        rate="-(a + c*x^2)",
        state_unit="1",
        low=-1.0,
        high=1.0,
        parameters={
            "a": Parameter(distance, "1/yr", (-0.5, 0.5)),
            "c": Parameter(curvature, "1/yr"),
        },
        lever="a",
    )


@pytest.mark.parametrize(
    ("a", "b", "ghost", "across"),
    [
        # Strogatz (2015) sec. 4.3 and Exercise 4.3.1 (confirmed), R22.
        (0.01, 1.0, 31.41592653589793, 29.42255348607469),
        (0.04, 2.5, 9.934588265796101, 9.138814434826873),
    ],
)
def test_bottleneck_published_values(a: float, b: float, ghost: float, across: float) -> None:
    # Strogatz (2015) sec. 4.3 (confirmed), R22: pi/sqrt(ab), and the time from 1 to -1.
    assert ghost_time(a, b) == pytest.approx(ghost, rel=1e-15)
    built = model(ghost_spec(a, b))
    _, records = lever_records(built)
    result = collapse_past_fold(built, records, start=1.0)
    assert result is not None
    assert result.ghost_time == pytest.approx(ghost, rel=FOLD_REL)
    assert result.collapse_time == pytest.approx(across, rel=EVENT_REL)


def test_bottleneck_estimate_improves_as_the_fold_nears() -> None:
    # Strogatz (2015) sec. 4.3 (confirmed), R22: the passage across [-1, 1] tends to
    # pi/sqrt(ab) as a -> 0, so the estimate's relative error must fall.
    errors = []
    for distance in (0.04, 0.01, 0.0025, 0.000625):
        built = model(ghost_spec(distance, 1.0))
        _, records = lever_records(built)
        result = collapse_past_fold(built, records, start=1.0)
        assert result is not None and result.collapse_time is not None
        exact = 2.0 * math.atan(1.0 / math.sqrt(distance)) / math.sqrt(distance)  # R22 form
        assert result.collapse_time == pytest.approx(exact, rel=EVENT_REL)
        errors.append(abs(result.ghost_time - result.collapse_time) / result.collapse_time)
    assert all(later < earlier for earlier, later in itertools.pairwise(errors))
    # The leading error term is 2 sqrt(a) / pi (derived from atan(1/s) = pi/2 - s + ...).
    assert errors[-1] == pytest.approx(2 * math.sqrt(0.000625) / math.pi, rel=0.05)
