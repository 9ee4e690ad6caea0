"""Policies analysed side by side, including a threshold rule written with min (a kink)."""

from __future__ import annotations

import math

import pytest
from test_dynamics_support import Parameter, Spec, scenario

from sitegen.analysis.bifurcations import SADDLE_NODE
from sitegen.analysis.equilibria import find_equilibria
from sitegen.analysis.records import Bifurcation
from sitegen.dynamics.policies import check_folds, compare_policies, has_kinks, true_roots
from sitegen.model.model import build_model

EVENT_REL = 1e-7  # integrated times
EXACT_REL = 1e-9  # refined folds

SPEC = Spec(
    rate="r*x*(1 - x/K) - H",
    parameters={
        "r": Parameter(0.5, "1/yr"),
        "K": Parameter(1000.0, "t"),
        "H": Parameter(100.0, "t/yr", (0.0, 160.0)),
    },
    high=1200.0,
    lever="H",
    yield_="H",
    current=640.0,
    extra=(
        "[[policies]]",
        'name = "low quota"',
        "values = { H = 60.0 }",
        "[[policies]]",
        'name = "over quota"',
        "values = { H = 150.0 }",
        "[[policies]]",
        'name = "ramp below a trigger"',
        'rate = "r*x*(1 - x/K) - H*min(1, x/T)"',
        'yield = "H*min(1, x/T)"',
        "[policies.parameters.T]",
        "value = 400.0",
        'unit = "t"',
        'name = "trigger"',
    ),
)


@pytest.fixture(scope="module")
def table():  # type: ignore[no-untyped-def]
    return compare_policies(scenario(SPEC))


def test_rows_and_best_markers(table) -> None:  # type: ignore[no-untyped-def]
    names = [row.name for row in table.rows]
    assert names == ["base", "low quota", "over quota", "ramp below a trigger"]
    base = table.rows[0]
    # R01 (Clark 1990 ch. 1, from memory): x+ = 723.6067977499790, return time 2 sqrt 5.
    assert base.stable_state == pytest.approx(723.6067977499790, rel=1e-12)
    assert base.return_time == pytest.approx(4.472135954999579, rel=1e-12)
    assert base.limit is not None and base.limit.limit == pytest.approx(125.0, rel=EXACT_REL)
    assert table.best["margin"] == "low quota"
    assert table.best["yield_"] in {"base", "ramp below a trigger"}  # both take 100 t/yr


def test_over_quota_collapse_time(table) -> None:  # type: ignore[no-untyped-def]
    # R24 closed form (derived) from today's 640 t under H = 150: eps = 25, beta = r/K.
    row = table.rows[2]
    assert row.stable_state is None and row.yield_ is None
    a, b = 25.0, 0.0005
    expected = (
        math.atan(140.0 * math.sqrt(b / a)) + math.atan(500.0 * math.sqrt(b / a))
    ) / math.sqrt(a * b)
    assert row.collapse_time == pytest.approx(expected, rel=EVENT_REL)
    assert row.limit is not None and row.limit.margin < 0


def test_ramp_rule_roots_and_fold_on_the_smooth_piece(table) -> None:  # type: ignore[no-untyped-def]
    # Above the trigger the ramp is the plain quota, so R01's fold H_c = rK/4 at K/2 stands.
    row = table.rows[3]
    assert row.limit is not None and row.limit.kind == SADDLE_NODE
    assert row.limit.limit == pytest.approx(125.0, rel=EXACT_REL)
    assert row.stable_state == pytest.approx(723.6067977499790, rel=1e-12)


def test_kink_is_not_reported_as_a_fold() -> None:
    # At H = 120 the lower root of the quota piece meets the trigger T = 400 (derived: the
    # effort piece gives x = K(1 - H/(rT)) = 400); the slope jumps there, f_x does not vanish.
    loaded = scenario(SPEC)
    built = build_model(loaded, loaded.policies[2]).with_values({"H": 120.0})
    assert has_kinks(built)
    fake = Bifurcation("H", SADDLE_NODE, 120.0, 400.0, more_equilibria=None, counts=(3, 3))
    checked, notes = check_folds(built, [fake])
    assert checked == [] and "kink" in notes[0]
    # Roots are checked by residual (at today's H = 100, away from the kink's tangency).
    today = build_model(loaded, loaded.policies[2])
    equilibria, _ = find_equilibria(today)
    kept, dropped = true_roots(today, equilibria)
    assert len(kept) == len(equilibria) and not dropped
