"""``[state] better``: the key itself, and stage 4 for a pollutant (better = "lower").

Reference values (Carpenter, Ludwig & Brock 1999 lake model a - b x + x^q/(1 + x^q),
q = 2; source: Carpenter et al. 1999 from memory, all numbers *derived* by mpmath
bisection and cross-checked against the SymPy discriminant of the cubic
(1 + x^2)(a - b x) + x^2 = 0; R19 of the project's references):

- b = 0.6: the clear state is lost at a_high = 0.1020918438251307
  (x = 0.4084468617920715); the turbid state is lost at a_low = 0.08972441837399073;
- b = 0.45: a_high = 0.05369514792960103 and a_low = -0.05251151199588767 < 0
  (irreversible at non-negative loading).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from sitegen.dynamics.assess import assess
from sitegen.dynamics.policies import compare_policies
from sitegen.dynamics.report_text import uncertainty_lines
from sitegen.dynamics.uncertainty import run_uncertainty
from sitegen.errors import ScenarioError
from sitegen.scenario.loader import load_scenario, load_text
from tests.scenario_support import BASE
from tests.test_dynamics_support import Parameter, Spec, scenario_text

ROOT = Path(__file__).resolve().parents[1]
A_HIGH = 0.1020918438251307
X_HIGH = 0.4084468617920715
A_LOW = 0.08972441837399073
A_HIGH_IRREVERSIBLE = 0.05369514792960103


def lake_text(b: float, a: float, a_range: tuple[float, float], extra: tuple[str, ...] = ()) -> str:
    spec = Spec(
        rate="a - b*x + r*x^2/(1 + x^2)",
        parameters={
            "a": Parameter(a, "1/yr", a_range),
            "b": Parameter(b, "1/yr"),
            "r": Parameter(1.0, "1/yr"),
        },
        state_unit="1",
        high=3.0,
        current=0.2,
        lever="a",
        extra=extra,
    )
    return scenario_text(spec).replace("min = 0.0\n", 'min = 0.0\nbetter = "lower"\n', 1)


def test_default_is_higher() -> None:
    assert load_text(BASE, "t.toml", "t").state.better == "higher"


def test_lower_is_accepted() -> None:
    assert load_text(lake_text(0.6, 0.05, (0.0, 0.2)), "t.toml", "t").state.better == "lower"


def test_unknown_direction_is_refused() -> None:
    text = lake_text(0.6, 0.05, (0.0, 0.2)).replace('better = "lower"', 'better = "lowr"')
    with pytest.raises(ScenarioError) as caught:
        load_text(text, "t.toml", "t")
    assert caught.value.message == "unknown direction 'lowr' for better"
    assert caught.value.hint == "did you mean 'lower'? Allowed here: higher, lower."


def test_lake_limit_is_the_fold_where_the_clear_state_is_lost() -> None:
    result = assess(load_text(lake_text(0.6, 0.05, (0.0, 0.2)), "t.toml", "t"))
    assert result.better == "lower"
    limit = result.lever_limit
    assert limit is not None and limit.direction == "largest"
    assert limit.limit == pytest.approx(A_HIGH, rel=1e-9)
    assert limit.state_at_limit == pytest.approx(X_HIGH, rel=1e-6)
    assert limit.margin == pytest.approx(A_HIGH - 0.05, rel=1e-8)
    trip = result.hysteresis
    assert trip is not None and not trip.irreversible
    assert trip.return_value == pytest.approx(A_LOW, rel=1e-9)
    assert trip.collapsed_state > X_HIGH  # the state flips up, not down


def test_lake_irreversible_case() -> None:
    result = assess(load_text(lake_text(0.45, 0.02, (0.0, 0.1)), "t.toml", "t"))
    assert result.lever_limit is not None
    assert result.lever_limit.limit == pytest.approx(A_HIGH_IRREVERSIBLE, rel=1e-9)
    assert result.hysteresis is not None and result.hysteresis.irreversible


def test_lake_past_the_fold_is_a_flip() -> None:
    result = assess(load_text(lake_text(0.6, 0.11, (0.0, 0.2)), "t.toml", "t"))
    flip = result.collapse
    assert flip is not None and flip.collapse_time is not None
    assert flip.fold_value == pytest.approx(A_HIGH, rel=1e-9)
    assert flip.collapse_level > 1.0  # the turbid state, not the lower end


def _independent_a_high(b: np.ndarray) -> np.ndarray:
    """The clear-state fold a_high(b) by bisection on 2x/(1 + x^2)^2 = b, x in (0, 1/sqrt 3).

    NaN where b > 3 sqrt(3)/8 (no fold: the clear state never vanishes).
    """
    low, high = np.zeros_like(b), np.full_like(b, 1.0 / np.sqrt(3.0))
    for _ in range(80):
        middle = 0.5 * (low + high)
        rising = 2.0 * middle / (1.0 + middle**2) ** 2 < b
        low, high = np.where(rising, middle, low), np.where(rising, high, middle)
    x = 0.5 * (low + high)
    a_high = b * x - x**2 / (1.0 + x**2)
    return np.where(b < 3.0 * np.sqrt(3.0) / 8.0, a_high, np.nan)


def test_monte_carlo_flip_risk_matches_an_independent_count() -> None:
    extra = (
        "[uncertainty]",
        "samples = 2000",
        "seed = 3",
        "[uncertainty.b]",
        'distribution = "normal"',
        "sd = 0.03",
    )
    scenario = load_text(lake_text(0.6, 0.095, (0.0, 0.2), extra), "t.toml", "t")
    report = run_uncertainty(scenario)
    assert report is not None
    outcome = report.outcome("base")
    a_high = _independent_a_high(report.draws["b"])
    flipped = np.isfinite(a_high) & (a_high < 0.095)
    assert 0 < flipped.sum() < 2000
    assert abs(outcome.collapsed - int(flipped.sum())) <= 2  # grid-edge cases only
    finite = np.isfinite(a_high)
    assert np.allclose(outcome.lever_limits[finite], a_high[finite], rtol=0, atol=1e-4)


def test_policy_table_marks_the_lowest_state_best() -> None:
    extra = (
        "[[policies]]",
        'name = "less loading"',
        "values = { a = 0.02 }",
        "[[policies]]",
        'name = "more loading"',
        "values = { a = 0.09 }",
    )
    table = compare_policies(load_text(lake_text(0.6, 0.05, (0.0, 0.2), extra), "t.toml", "t"))
    assert table.best["stable_state"] == "less loading"


def test_decaying_soil_has_no_flip_risk_or_limit() -> None:
    scenario = load_scenario(str(ROOT / "scenarios" / "wexley-depot-soil.toml"))
    assert scenario.state.better == "lower"
    result = assess(scenario)
    assert result.lever_limit is None
    assert result.uncertainty is not None
    assert all(o.collapsed == 0 for o in result.uncertainty.outcomes)
    text = "\n".join(uncertainty_lines(result))
    assert "collapse risk" not in text and "risk of a flip" not in text
