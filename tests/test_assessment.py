"""The whole assessment (sitegen.dynamics.assess) and its report behind ``sitegen analyse``.

Published references checked against the policy table and the limits/economics sections:

- Schaefer (1954), Bull. Inter-Am. Trop. Tuna Comm. 1(2): 27-56: surplus production
  r B (1 - B/K); under a fixed catch MSY = rK/4 at B = K/2; under effort E with
  catchability q the equilibrium is B = K(1 - qE/r), yield qEB, and E_MSY = r/(2q).
- Gordon (1954), J. Political Economy 62(2): 124-142: open access dissipates the rent,
  p q E B = c E, so the open-access stock is B = c/(pq).
- Clark (1990), Mathematical Bioeconomics, 2nd ed., ch. 2: with rent p qEB - cE the
  maximum economic yield stock is B_MEY = (K + c/(pq))/2 (derived from the above).

Budget: the SymPy steps get 2 s each so the file stays well under 90 s; the bundle test
covers a representative subset of the bundled scenarios (see BUNDLE_SUBSET).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest

from sitegen.analysis.analyse import analyse
from sitegen.analysis.summary import summary
from sitegen.dynamics.assess import Assessment, assess
from sitegen.dynamics.report import assessment_json, assessment_summary, assessment_text
from sitegen.scenario.loader import load_scenario, load_text
from sitegen.scenario.records import Scenario

ROOT = Path(__file__).resolve().parent.parent
SPRAT = ROOT / "scenarios" / "coastal-sprat.toml"
BUDGET_S = 2.0
NEW_KEYS = ("dynamics", "limits", "policies", "uncertainty", "sensitivity", "economics")
EXACT_REL = 1e-9  # folds, transcritical points and closed-form equilibria
OPTIMUM_REL = 1e-6  # lever at an interior maximum (flat there)
# Bundled scenarios assessed in full here (the whole bundle takes minutes): no lever
# (cold room), no stable positive state (soil), a falling body starting at rest
# (airdrop) and an Allee herd with a collapsing policy (deer); coastal-sprat is above.
BUNDLE_SUBSET = ("tamsin-cold-room", "wexley-depot-soil", "corrie-airdrop", "upland-deer")

R, K, Q = 0.8, 5000.0, 0.002
PRICE, COST = 10.0, 20.0
EFFORT = f"""
[scenario]
title = "Effort-managed stock (test)"
summary = "Invented numbers for the Schaefer and Gordon references."
assessment_year = 2026
[state]
symbol = "B"
name = "biomass"
unit = "t"
min = 0
max = 6000
current = 3000
[parameters.r]
value = {R}
unit = "1/yr"
name = "growth rate"
[parameters.K]
value = {K}
unit = "t"
name = "carrying capacity"
[parameters.q]
value = {Q}
unit = "1/vd"
name = "catchability"
[parameters.E]
value = 150.0
unit = "vd/yr"
name = "effort"
range = [0.0, 500.0]
[model]
rate = "r*B*(1 - B/K) - q*E*B"
lever = "E"
yield = "q*E*B"
time_unit = "yr"
[[policies]]
name = "effort at E_MSY"
values = {{ E = 200.0 }}
[[policies]]
name = "heavy effort"
values = {{ E = 300.0 }}
[economics]
price = {PRICE}
cost = {COST}
currency = "EUR"
"""


@pytest.fixture(scope="module")
def sprat() -> tuple[Scenario, Assessment]:
    scenario = load_scenario(str(SPRAT))
    return scenario, assess(scenario, BUDGET_S)


@pytest.fixture(scope="module")
def sprat_json(sprat: tuple[Scenario, Assessment]) -> str:
    return assessment_json(sprat[1])


@pytest.fixture(scope="module")
def effort() -> Assessment:
    return assess(load_text(EFFORT, "t.toml", "t"), BUDGET_S)


def test_json_keeps_the_stage_3_contract_and_adds_six_sections(
    sprat: tuple[Scenario, Assessment], sprat_json: str
) -> None:
    data = json.loads(sprat_json)
    stage_3 = summary(sprat[1].analysis)
    assert set(stage_3) <= set(data)
    # Stage 4 only adds: every stage-3 value is unchanged ("state" gains "better").
    assert all(data[key] == stage_3[key] for key in stage_3 if key != "state")
    assert stage_3["state"].items() <= data["state"].items()
    assert data["state"]["better"] == "higher"
    for key in NEW_KEYS:
        assert {"notes", "warnings"} <= set(data[key])
        assert data[key]["warnings"] == [], data[key]["warnings"]
    # Valid strict JSON (no NaN or infinity) with sorted keys.
    again = json.dumps(json.loads(sprat_json), indent=2, sort_keys=True, allow_nan=False)
    assert again == sprat_json


def test_assess_reuses_a_given_analysis(sprat: tuple[Scenario, Assessment]) -> None:
    scenario, _ = sprat
    analysis = analyse(scenario, BUDGET_S)
    assert assess(scenario, BUDGET_S, analysis).analysis is analysis


def test_sprat_policy_table_matches_schaefer(sprat: tuple[Scenario, Assessment]) -> None:
    _, a = sprat
    r, k, harvest, q, effort = 0.5, 1000.0, 100.0, 0.0004, 400.0
    rows = {row.name: row for row in a.policies.rows}  # type: ignore[union-attr]
    base = rows["base"]
    # Schaefer (1954): the quota limit is MSY = rK/4, reached at B = K/2.
    assert base.limit is not None
    assert base.limit.limit == pytest.approx(r * k / 4, rel=EXACT_REL)
    assert base.limit.state_at_limit == pytest.approx(k / 2, rel=EXACT_REL)
    assert base.limit.margin == pytest.approx(r * k / 4 - harvest, rel=EXACT_REL)
    upper = k / 2 * (1 + (1 - 4 * harvest / (r * k)) ** 0.5)  # Schaefer (1954) equilibrium
    assert base.stable_state == pytest.approx(upper, rel=EXACT_REL)
    # Schaefer (1954) under effort: B = K(1 - qE/r), yield qEB.
    fixed = rows["fixed effort"]
    assert fixed.stable_state == pytest.approx(k * (1 - q * effort / r), rel=EXACT_REL)
    assert fixed.yield_ == pytest.approx(q * effort * k * (1 - q * effort / r), rel=EXACT_REL)
    assert fixed.lever_value is None  # the effort rule does not use the quota H
    assert a.sustainable_yield is not None
    assert a.sustainable_yield.msy == pytest.approx(r * k / 4, rel=EXACT_REL)
    assert a.sustainable_yield.state_at_msy == pytest.approx(k / 2, rel=EXACT_REL)
    assert a.stock_status is not None and a.stock_status.limit == 250.0  # [reference] limit


def test_effort_policy_table_and_economics(effort: Assessment) -> None:
    rows = {row.name: row for row in effort.policies.rows}  # type: ignore[union-attr]
    for row in rows.values():
        e = row.lever_value
        assert e is not None
        # Schaefer (1954): B = K(1 - qE/r) under effort E, yield qEB.
        assert row.stable_state == pytest.approx(K * (1 - Q * e / R), rel=EXACT_REL)
        assert row.yield_ == pytest.approx(Q * e * K * (1 - Q * e / R), rel=EXACT_REL)
        # The stable state ends at the transcritical point E = r/q.
        assert row.limit is not None and row.limit.limit == pytest.approx(R / Q, rel=EXACT_REL)
    # Schaefer (1954): E_MSY = r/(2q) gives MSY = rK/4, the best yield of the table.
    assert effort.policies is not None and effort.policies.best["yield_"] == "effort at E_MSY"
    assert rows["effort at E_MSY"].yield_ == pytest.approx(R * K / 4, rel=EXACT_REL)
    msy = effort.sustainable_yield
    assert msy is not None and not msy.at_fold
    assert msy.lever_at_msy == pytest.approx(R / (2 * Q), rel=OPTIMUM_REL)
    assert msy.msy == pytest.approx(R * K / 4, rel=1e-10)
    assert msy.state_at_msy == pytest.approx(K / 2, rel=OPTIMUM_REL)
    # Gordon (1954): open access at B = c/(pq); Clark (1990): B_MEY = (K + c/(pq))/2.
    economics = effort.economics
    assert economics is not None and economics.open_access_state is not None
    assert economics.open_access_state == pytest.approx(COST / (PRICE * Q), rel=EXACT_REL)
    assert economics.mey_state == pytest.approx((K + COST / (PRICE * Q)) / 2, rel=OPTIMUM_REL)
    # No uncertainty declared: the section is empty and says why.
    assert effort.uncertainty is None and effort.notes["uncertainty"]
    data = assessment_summary(effort)
    assert data["uncertainty"]["outcomes"] is None and data["uncertainty"]["notes"]


def test_text_report_shows_table_best_marker_risk_and_safe_lever(
    sprat: tuple[Scenario, Assessment],
) -> None:
    scenario, a = sprat
    text = assessment_text(a, scenario)
    table = text.split("Policies side by side")[1].split("\n\n")[0]
    header = table.splitlines()[1]
    for name in ("base", "fixed catch of 100 kt", "fixed effort", "threshold rule"):
        assert name in header
    assert "*" in table and "collapse risk (%)" in table and "safe H (kt/yr)" in table
    # Collapse risk per policy with the sample count, and the safe lever with its tolerance.
    assert "collapse risk 17.41 % (1741 of 10000 samples" in text
    assert "safe H setting (collapse risk at most 5 %, a common precautionary choice" in text
    assert "83.97 kt/yr" in text
    assert "MSY 125 kt/yr" in text and "B_MSY 500 kt" in text
    assert "margin 25 kt/yr, 20 %" in text


def test_cli_text_and_json_are_deterministic(sprat_json: str) -> None:
    command = [sys.executable, "-m", "sitegen", "analyse", str(SPRAT), "--budget", str(BUDGET_S)]
    text = subprocess.run(command, capture_output=True, text=True, timeout=120, check=False)
    assert text.returncode == 0, text.stderr
    assert "Policies side by side" in text.stdout
    data = subprocess.run(
        [*command, "--json"], capture_output=True, text=True, timeout=120, check=False
    )
    assert data.returncode == 0, data.stderr
    # A second, independent run gives the same JSON (the Monte Carlo is seeded).
    assert data.stdout.strip() == sprat_json.strip()


def _strict_json(a: Assessment) -> dict[str, Any]:
    return json.loads(assessment_json(a))


@pytest.mark.parametrize("name", BUNDLE_SUBSET)
def test_bundled_scenarios_assess(name: str) -> None:
    scenario = load_scenario(str(ROOT / "scenarios" / f"{name}.toml"))
    a = assess(scenario, BUDGET_S)
    data = _strict_json(a)
    assert all(key in data for key in NEW_KEYS)
    assert not any(a.warnings.values()), a.warnings
    text = assessment_text(a, scenario)
    assert "Policies side by side" in text
    if a.trajectory is not None:
        assert all(event.time >= 0 for event in a.trajectory.events)
    if name == "corrie-airdrop":
        # A body released at v = 0 speeds up to its terminal velocity; it does not "collapse".
        assert a.trajectory is not None and a.trajectory.fate == "settles"
    for row in a.policies.rows if a.policies else ():
        if row.limit is not None and row.limit.margin_percent is not None:
            assert abs(row.limit.margin_percent) < 1e4  # no runaway margins
