"""Milestones from today's state against closed-form solutions of the same models.

Each model here has a textbook solution x(t), so the time to reach a level is known
exactly; the tool's times come from event location on the integrated trajectory.
"""

from __future__ import annotations

import math

import pytest

from sitegen.analysis.equilibria import find_equilibria
from sitegen.dynamics.milestones import lever_settings, milestones_of, reference_levels
from sitegen.dynamics.records import Milestones
from sitegen.model.model import build_model
from sitegen.scenario.loader import load_text
from sitegen.scenario.records import Scenario

REL_TOL = 1e-9  # event times against closed forms (the module promises about 1e-10)


def scenario(rate: str, parameters: dict[str, tuple[float, str]], extra: str = "") -> Scenario:
    lines = [
        "[scenario]",
        'title = "test"',
        'summary = "test"',
        "assessment_year = 2026",
        "[state]",
        'symbol = "x"',
        'name = "state"',
        'unit = "t"',
        "min = 0",
        "max = 200",
        "current = 10",
    ]
    for name, (value, unit) in parameters.items():
        lines += [f"[parameters.{name}]", f"value = {value}", f'unit = "{unit}"', 'name = "p"']
        if name == "H":
            lines.append("range = [0, 40]")
    lines += ["[model]", f'rate = "{rate}"', 'time_unit = "yr"']
    if "H" in parameters:
        lines.append('lever = "H"')
    return load_text("\n".join(lines) + "\n" + extra, "t.toml", "t")


def run(s: Scenario) -> Milestones:
    model = build_model(s)
    equilibria, _ = find_equilibria(model)
    return milestones_of(model, float(model.current_state), reference_levels(s), equilibria)


def test_logistic_growth_times_match_the_closed_form() -> None:
    # Verhulst (1838): x(t) = K / (1 + (K/x0 - 1) e^(-r t)), so x reaches X at
    # t = ln(X (K - x0) / (x0 (K - X))) / r.
    r, k, x0 = 0.4, 100.0, 10.0
    s = scenario("r*x*(1 - x/K)", {"r": (r, "1/yr"), "K": (k, "t")}, "[reference]\ntarget = 60\n")
    result = run(s)

    def time_to(level: float) -> float:
        return math.log(level * (k - x0) / (x0 * (k - level))) / r

    assert result.attractor == pytest.approx(k, rel=1e-12)
    assert result.direction == "rising"
    assert math.isclose(result.time_of("target"), time_to(60.0), rel_tol=REL_TOL)
    assert math.isclose(result.half_time, time_to(x0 + 0.5 * (k - x0)), rel_tol=REL_TOL)
    assert math.isclose(result.time_95, time_to(x0 + 0.95 * (k - x0)), rel_tol=REL_TOL)


def test_linear_decay_half_life_is_ln2_over_k() -> None:
    # First-order decay x(t) = x0 e^(-k t): half-life ln 2 / k, 95% of the way ln 20 / k.
    k = 0.3
    s = scenario("-k*x", {"k": (k, "1/yr")}, "[reference]\nlimit = 4\n")
    result = run(s)
    assert result.attractor == 0.0 and result.direction == "falling"
    assert math.isclose(result.half_time, math.log(2) / k, rel_tol=REL_TOL)
    assert math.isclose(result.time_95, math.log(20) / k, rel_tol=REL_TOL)
    assert math.isclose(result.time_of("limit"), math.log(10 / 4) / k, rel_tol=REL_TOL)


def test_levels_off_the_way_have_no_time_and_say_why() -> None:
    # From 10 t rising to K = 100 t: 5 t lies behind the start, 150 t beyond the attractor.
    s = scenario(
        "r*x*(1 - x/K)",
        {"r": (0.4, "1/yr"), "K": (100.0, "t")},
        "[reference]\nlimit = 5\ntarget = 150\n",
    )
    result = run(s)
    limit = next(m for m in result.milestones if m.kind == "limit")
    target = next(m for m in result.milestones if m.kind == "target")
    assert limit.time is None and "already above" in limit.note
    assert target.time is None and "settles" in target.note and target.settles == "below"


def test_a_collapse_crosses_levels_on_the_way_down() -> None:
    # A quota above r K / 4 = 10 t/yr: no equilibrium, the stock falls through the limit.
    # Time from x0 to X under dx/dt = r x (1 - x/K) - H, integrated by mpmath.quad.
    import mpmath

    r, k, h = 0.4, 100.0, 14.0
    s = scenario(
        "r*x*(1 - x/K) - H",
        {"r": (r, "1/yr"), "K": (k, "t"), "H": (h, "t/yr")},
        "[reference]\nlimit = 5\n",
    )
    result = run(s)
    expected = mpmath.quad(lambda x: 1 / (r * x * (1 - x / k) - h), [10, 5])
    assert result.attractor is None and result.direction == "falling"
    assert math.isclose(result.time_of("limit"), float(expected), rel_tol=REL_TOL)
    assert result.half_time is None  # no attractor: no share of the way


def test_lever_setting_that_holds_a_level() -> None:
    # Logistic with a quota: the level X is an equilibrium at H = r X (1 - X/K) (Schaefer
    # 1954); X = 70 above K/2 is the stable one.
    r, k = 0.4, 100.0
    s = scenario(
        "r*x*(1 - x/K) - H",
        {"r": (r, "1/yr"), "K": (k, "t"), "H": (5.0, "t/yr")},
        "[reference]\ntarget = 70\nlimit = 20\n",
    )
    settings = {x.kind: x for x in lever_settings(build_model(s), reference_levels(s))}
    assert math.isclose(settings["target"].lever_value, r * 70 * (1 - 0.7), rel_tol=1e-12)
    assert settings["target"].stable is True
    assert math.isclose(settings["limit"].lever_value, r * 20 * (1 - 0.2), rel_tol=1e-12)
    assert settings["limit"].stable is False  # below K/2 the equilibrium is the threshold
