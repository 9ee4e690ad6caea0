"""Shared helpers of the dynamics tests: scenario text for a small model, built models.

The text goes through the project's own loader, exactly as a user's file would. No tests here.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

from sitegen.analysis.bifurcations import build_bifurcations
from sitegen.analysis.continuation import continue_equilibria
from sitegen.analysis.records import Bifurcation, Branch
from sitegen.model.model import Model, build_model
from sitegen.scenario.loader import load_text
from sitegen.scenario.records import Scenario


@dataclass(frozen=True)
class Parameter:
    """value, unit and optional range of one test parameter."""

    value: float
    unit: str = "1"
    range: tuple[float, float] | None = None


@dataclass(frozen=True)
class Spec:
    """A test model: rate, state and parameters, plus optional [model] and extra sections."""

    rate: str
    parameters: Mapping[str, Parameter]
    symbol: str = "x"
    state_unit: str = "t"
    time_unit: str = "yr"
    low: float = 0.0
    high: float | None = None
    current: float | None = None
    collapse_level: float | None = None
    lever: str | None = None
    yield_: str | None = None
    shock: float | None = None
    extra: Sequence[str] = field(default_factory=tuple)


def _number(value: float) -> str:
    return repr(float(value))


def scenario_text(spec: Spec) -> str:
    """TOML text of a test scenario."""
    lines = [
        "[scenario]",
        'title = "Dynamics test model"',
        'summary = "A model written by the dynamics tests."',
        "assessment_year = 2026",
        "",
        "[state]",
        f'symbol = "{spec.symbol}"',
        'name = "state"',
        f'unit = "{spec.state_unit}"',
        f"min = {_number(spec.low)}",
    ]
    for key, value in (
        ("max", spec.high),
        ("current", spec.current),
        ("collapse_level", spec.collapse_level),
    ):
        if value is not None:
            lines.append(f"{key} = {_number(value)}")
    for name, parameter in spec.parameters.items():
        lines += [
            "",
            f"[parameters.{name}]",
            f"value = {_number(parameter.value)}",
            f'unit = "{parameter.unit}"',
            f'name = "{name}"',
        ]
        if parameter.range is not None:
            lines.append(f"range = [{_number(parameter.range[0])}, {_number(parameter.range[1])}]")
    lines += ["", "[model]", f'rate = "{spec.rate}"', f'time_unit = "{spec.time_unit}"']
    if spec.lever:
        lines.append(f'lever = "{spec.lever}"')
    if spec.yield_:
        lines.append(f'yield = "{spec.yield_}"')
    if spec.shock is not None:
        lines.append(f"shock = {_number(spec.shock)}")
    lines += ["", *spec.extra]
    return "\n".join(lines) + "\n"


def scenario(spec: Spec) -> Scenario:
    """The loaded scenario of a test spec."""
    return load_text(scenario_text(spec), "t.toml", "t")


def model(spec: Spec) -> Model:
    """The base model of a test spec."""
    return build_model(scenario(spec))


def lever_records(built: Model) -> tuple[tuple[Branch, ...], list[Bifurcation]]:
    """Continued branches and classified bifurcations in the model's lever."""
    assert built.lever is not None
    branches, points = continue_equilibria(built, built.lever)
    records, _ = build_bifurcations(
        built, built.lever, [(p.parameter_value, p.state_value) for p in points], []
    )
    return branches, records
