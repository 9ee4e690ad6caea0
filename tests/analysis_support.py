"""Shared helpers of the analysis tests: scenario text from a small model spec, and cached runs.

A model spec is a plain dict (the same shape as the entries of
``tests/reference_data/analysis_references.json``)::

    {"rate": "r*x*(1 - x/K) - H", "symbol": "x", "state_unit": "t", "time_unit": "yr",
     "min": 0, "max": 1500, "lever": "H",
     "parameters": {"r": {"value": 0.5, "unit": "1/yr"},
                    "H": {"value": 100, "unit": "t/yr", "range": [0, 160]}}}

The text goes through the project's own loader (safe formula parser, unit checks), exactly as
a user's file would.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from functools import cache
from pathlib import Path
from typing import Any

from sitegen.analysis.records import Analysis
from sitegen.model.model import Model, build_model
from sitegen.scenario.loader import load_text
from sitegen.scenario.records import Scenario

REFERENCE_FILE = Path(__file__).parent / "reference_data" / "analysis_references.json"
QUICK_BUDGET_S = 1.0  # per SymPy step: the closed forms checked take < 0.3 s; budworm and lake
# fold steps take > 10 s and time out either way


def _number(value: float) -> str:
    return repr(float(value)) if not float(value).is_integer() else f"{float(value):.1f}"


def scenario_text(spec: Mapping[str, Any]) -> str:
    """TOML scenario text for a model spec (see the module docstring)."""
    lines = [
        "[scenario]",
        'title = "Analysis test model"',
        'summary = "A model written by the analysis tests."',
        "assessment_year = 2026",
        "",
        "[state]",
        f'symbol = "{spec.get("symbol", "x")}"',
        'name = "state"',
        f'unit = "{spec.get("state_unit", "1")}"',
        f"min = {_number(spec.get('min', 0.0))}",
    ]
    if spec.get("max") is not None:
        lines.append(f"max = {_number(spec['max'])}")
    for name, parameter in spec["parameters"].items():
        lines += [
            "",
            f"[parameters.{name}]",
            f"value = {_number(parameter['value'])}",
            f'unit = "{parameter.get("unit", "1")}"',
            f'name = "{name}"',
        ]
        if parameter.get("range") is not None:
            low, high = parameter["range"]
            lines.append(f"range = [{_number(low)}, {_number(high)}]")
    lines += [
        "",
        "[model]",
        f'rate = "{spec["rate"]}"',
        f'time_unit = "{spec.get("time_unit", "1")}"',
    ]
    if spec.get("lever"):
        lines.append(f'lever = "{spec["lever"]}"')
    for x, y in spec.get("maps", ()):
        lines += ["", "[[maps]]", f'x = "{x}"', f'y = "{y}"']
    return "\n".join(lines) + "\n"


def scenario_of(spec: Mapping[str, Any], slug: str = "test") -> Scenario:
    """The validated scenario of a model spec."""
    return load_text(scenario_text(spec), f"{slug}.toml", slug)


def model_of(spec: Mapping[str, Any], values: Mapping[str, float] | None = None) -> Model:
    """The model of a spec, with some parameter values changed (region unchanged)."""
    model = build_model(scenario_of(spec))
    return model.with_values(dict(values)) if values else model


def load_references() -> dict[str, Any]:
    """The reference data file (kept in the repository, beside the tests)."""
    return json.loads(REFERENCE_FILE.read_text(encoding="utf-8"))


def relative_error(got: float, expected: float) -> float:
    """|got - expected| / |expected|, or the absolute error when expected is 0."""
    if expected == 0:
        return abs(got)
    return abs(got - expected) / abs(expected)


def _key(spec: Mapping[str, Any], values: Mapping[str, float] | None) -> str:
    return json.dumps([spec, dict(values or {})], sort_keys=True)


@cache
def _analysis(key: str, budget_s: float, with_maps: bool) -> Analysis:
    from sitegen.analysis.analyse import analyse_model

    spec, values = json.loads(key)
    return analyse_model(model_of(spec, values), budget_s, with_maps=with_maps)


def analysis_of(
    spec: Mapping[str, Any],
    values: Mapping[str, float] | None = None,
    budget_s: float = QUICK_BUDGET_S,
    with_maps: bool = False,
) -> Analysis:
    """``analyse_model`` of a spec, computed once per test session for each set of arguments."""
    return _analysis(_key(spec, values), budget_s, with_maps)


def finite(value: float | None) -> bool:
    """True for a finite float (not None, not infinite, not NaN)."""
    return value is not None and math.isfinite(value)
