"""Sensitivities of stable states and lever limits (sitegen.dynamics.sensitivity).

Published values used here (copied from the project's references):

- R01: f = r x (1 - x/K) - H with r = 0.5 /yr, K = 1000 t, H = 100 t/yr; upper stable
  equilibrium x+ = (K/2)(1 + sqrt(1 - 4H/(rK))) = 723.6067977499790, critical harvest
  H_c = rK/4 = 125. Source: Clark (1990), Mathematical Bioeconomics, 2nd ed., ch. 1;
  Murray (2002), Mathematical Biology I, 3rd ed., sec. 1.6 -- status: from memory.
  Differentiating x+ gives dx+/dH = -1/sqrt(r^2 - 4rH/K) and H_c gives dH_c/dr = K/4,
  dH_c/dK = r/4 (derived: independent reference computation).
- R03: f = r x (1 - x/K) - qE x with r = 0.8 /yr, K = 5000 t, q = 0.002, E = 150;
  x* = K(1 - qE/r) = 3125, transcritical at E_tc = r/q = 400. Source: Schaefer (1954),
  Bull. Inter-Am. Trop. Tuna Comm. 1(2): 27-56 -- status: confirmed. Differentiating
  gives dx*/dE = -qK/r, dE_tc/dr = 1/q, dE_tc/dq = -r/q^2 (derived).
"""

from __future__ import annotations

import numpy as np
import pytest

from sitegen.analysis.equilibria import find_equilibria
from sitegen.analysis.records import STABLE
from sitegen.dynamics.sensitivity import (
    AGREE_RELATIVE,
    FOLD,
    NUMERIC,
    SYMBOLIC,
    TRANSCRITICAL,
    _compare,
    fold_point,
    model_sensitivity,
)
from sitegen.model.model import Model, build_model
from sitegen.scenario.loader import load_text

CLOSED_FORM_RELATIVE = 1e-10  # IFT and SymPy against the closed forms
FINITE_DIFFERENCE_RELATIVE = 1e-6  # central differences, step 1e-5 relative
STEP_RELATIVE = 1e-5
R01_UPPER = 723.6067977499790  # R01, (K/2)(1 + sqrt(1 - 4H/(rK)))

HEADER = """
[scenario]
title = "Test stock (illustrative)"
summary = "Invented numbers."
assessment_year = 2026
[state]
symbol = "B"
name = "biomass"
unit = "t"
"""

QUOTA = (
    HEADER
    + """
[parameters.r]
value = 0.5
unit = "1/yr"
name = "growth rate"
[parameters.K]
value = 1000
unit = "t"
name = "carrying capacity"
[parameters.H]
value = 100
unit = "t/yr"
name = "quota"
range = [0, 200]
[model]
rate = "r*B*(1 - B/K) - H"
lever = "H"
yield = "H"
"""
)

EFFORT = (
    HEADER
    + """
[parameters.r]
value = 0.8
unit = "1/yr"
name = "growth rate"
[parameters.K]
value = 5000
unit = "t"
name = "carrying capacity"
[parameters.q]
value = 0.002
unit = "1/d"
name = "catchability"
[parameters.E]
value = 150
unit = "d/yr"
name = "effort"
range = [0, 300]
[model]
rate = "r*B*(1 - B/K) - q*E*B"
lever = "E"
yield = "q*E*B"
"""
)


def _model(text: str) -> Model:
    return build_model(load_text(text, "t.toml", "t"))


@pytest.fixture(scope="module")
def quota() -> Model:
    return _model(QUOTA)


@pytest.fixture(scope="module")
def quota_report(quota: Model):
    return model_sensitivity(quota)


def _upper_stable(model: Model, values: dict[str, float]) -> float:
    stable = [e.value for e in find_equilibria(model, values)[0] if e.stability == STABLE]
    return max(stable)


def _central(function, model: Model, name: str) -> float:
    value = model.values[name]
    step = STEP_RELATIVE * abs(value)
    up = function(dict(model.values, **{name: value + step}))
    down = function(dict(model.values, **{name: value - step}))
    return (up - down) / (2 * step)


def test_quota_state_sensitivity_matches_the_closed_form(quota_report) -> None:
    (state,) = quota_report.states
    assert state.state == pytest.approx(R01_UPPER, rel=1e-14)  # R01
    by_name = {s.parameter: s for s in state.sensitivities}
    r, K, H = 0.5, 1000.0, 100.0
    expected = -1.0 / np.sqrt(r**2 - 4 * r * H / K)  # R01, derived
    assert by_name["H"].derivative == pytest.approx(expected, rel=CLOSED_FORM_RELATIVE)
    assert by_name["H"].symbolic == pytest.approx(expected, rel=CLOSED_FORM_RELATIVE)
    assert by_name["H"].method == SYMBOLIC
    assert by_name["H"].elasticity == pytest.approx(H / R01_UPPER * expected, rel=1e-12)
    assert all(s.relative_difference <= AGREE_RELATIVE for s in state.sensitivities)
    assert quota_report.warnings == ()


def test_quota_state_sensitivity_matches_finite_differences(quota: Model, quota_report) -> None:
    # Independent reference computation: central differences of the numeric root.
    (state,) = quota_report.states
    for sensitivity in state.sensitivities:
        reference = _central(lambda v: _upper_stable(quota, v), quota, sensitivity.parameter)
        assert sensitivity.derivative == pytest.approx(reference, rel=FINITE_DIFFERENCE_RELATIVE)


def test_quota_lever_limit_sensitivity(quota: Model, quota_report) -> None:
    limit = quota_report.lever_limit
    assert limit.kind == FOLD
    assert limit.lever_limit == pytest.approx(125.0, rel=1e-12)  # R01/R02: rK/4
    assert limit.state == pytest.approx(500.0, rel=1e-9)  # R02: B_MSY = K/2
    by_name = {s.parameter: s for s in limit.sensitivities}
    assert set(by_name) == {"r", "K"}
    assert by_name["r"].derivative == pytest.approx(1000.0 / 4, rel=CLOSED_FORM_RELATIVE)
    assert by_name["K"].derivative == pytest.approx(0.5 / 4, rel=CLOSED_FORM_RELATIVE)
    assert by_name["r"].closed_form == "K/4"
    assert by_name["r"].elasticity == pytest.approx(1.0, rel=1e-12)
    for name in ("r", "K"):
        reference = _central(lambda v: fold_point(quota, v)[1], quota, name)
        assert by_name[name].derivative == pytest.approx(reference, rel=FINITE_DIFFERENCE_RELATIVE)


def test_effort_transcritical_limit() -> None:
    model = _model(EFFORT)
    report = model_sensitivity(model)
    r, K, q = 0.8, 5000.0, 0.002
    (state,) = report.states
    assert state.state == pytest.approx(3125.0, rel=1e-12)  # R03
    by_name = {s.parameter: s for s in state.sensitivities}
    assert by_name["E"].derivative == pytest.approx(-q * K / r, rel=CLOSED_FORM_RELATIVE)
    limit = report.lever_limit
    assert limit.kind == TRANSCRITICAL
    assert limit.lever_limit == pytest.approx(r / q, rel=1e-9)  # R03: E_tc = r/q = 400
    by_name = {s.parameter: s for s in limit.sensitivities}
    assert by_name["r"].derivative == pytest.approx(1 / q, rel=CLOSED_FORM_RELATIVE)
    assert by_name["q"].derivative == pytest.approx(-r / q**2, rel=CLOSED_FORM_RELATIVE)
    assert by_name["K"].derivative == pytest.approx(0.0, abs=1e-12)
    assert by_name["q"].symbolic == pytest.approx(-r / q**2, rel=CLOSED_FORM_RELATIVE)


def test_numeric_route_stands_when_sympy_runs_out_of_time(quota: Model) -> None:
    report = model_sensitivity(quota, budget_s=1e-6)
    assert any("numeric values stand" in note for note in report.notes)
    (state,) = report.states
    by_name = {s.parameter: s for s in state.sensitivities}
    assert by_name["H"].method == NUMERIC
    assert by_name["H"].value == pytest.approx(-1 / np.sqrt(0.25 - 0.2), rel=1e-10)


def test_a_disagreement_becomes_a_warning() -> None:
    sensitivity, warning = _compare("r", 0.5, 1.0, 10.0, (1.1, "K/4"), "H_c")
    assert sensitivity.relative_difference == pytest.approx(0.1 / 1.1)
    assert warning is not None and "relative difference" in warning
    _, agreeing = _compare("r", 0.5, 1.0, 10.0, (1.0 + 1e-12, "K/4"), "H_c")
    assert agreeing is None
