"""Pieces shared by the analysis figures (phase line, bifurcation diagrams, parameter maps).

Numbers in titles, descriptions and labels are written by :func:`number` (three
significant figures, whole numbers from 100 up) so the words and the pictures
agree; units follow the scenario (state unit, parameter units, time unit).
"""

from __future__ import annotations

import numpy as np
from matplotlib.axes import Axes

from sitegen.dynamics.assess import Assessment
from sitegen.scenario.records import HIGHER, LOWER, Scenario

# Light fills for shaded regions; each also gets a hatch so it survives grey printing.
LIGHT = {
    "sky": "#d4ebf9",
    "orange": "#fbe5b6",
    "green": "#cdeee2",
    "grey": "#e4e4e4",
    "purple": "#f3dcea",
    "yellow": "#faf6c4",
}
HATCH_COLOUR = "#b0b0b0"


def number(value: float) -> str:
    """A value for reading: 3 significant figures, no exponent below 1e6, ``-0`` as ``0``."""
    if value is None or not np.isfinite(value):
        return str(value)
    if value == 0:
        return "0"
    if abs(value) >= 1e6 or abs(value) < 1e-3:
        return f"{value:.3g}"
    if abs(value) >= 100:
        return f"{value:,.0f}"
    return f"{value:.3g}"


def amount(value: float, unit: str) -> str:
    """``number(value)`` followed by its unit (dimensionless units left out)."""
    text = number(value)
    return text if unit in ("", "1") else f"{text} {unit}"


def better_of(assessment: Assessment) -> str:
    """The assessment's ``better`` ("higher" or "lower"); "higher" when it has none."""
    better = getattr(assessment, "better", HIGHER)
    return LOWER if better == LOWER else HIGHER


def parameter_label(scenario: Scenario, name: str) -> str:
    """Axis label of a parameter: symbol, long name and unit, e.g. ``H, harvest [kt/yr]``."""
    for parameter in scenario.parameters:
        if parameter.name == name:
            unit = parameter.unit
            words = f"{name}, {parameter.label}" if parameter.label else name
            return words if unit in ("", "1") else f"{words} [{unit}]"
    return name


def parameter_unit(scenario: Scenario, name: str) -> str:
    """The unit of a parameter ("" when unknown or dimensionless)."""
    for parameter in scenario.parameters:
        if parameter.name == name:
            return "" if parameter.unit == "1" else parameter.unit
    return ""


def state_unit(scenario: Scenario) -> str:
    """The state's unit, "" when dimensionless."""
    return "" if scenario.state.unit == "1" else scenario.state.unit


def listing(words: list[str]) -> str:
    """``a``, ``a and b``, ``a, b and c``."""
    if len(words) <= 1:
        return "".join(words)
    return ", ".join(words[:-1]) + " and " + words[-1]


def legend_below(axes: Axes, handles: list, columns: int = 4) -> None:
    """A legend under the axes, so it never covers data."""
    axes.legend(
        handles=handles,
        loc="upper center",
        bbox_to_anchor=(0.5, -0.2),
        ncol=columns,
        fontsize=8,
        handlelength=2.6,
        columnspacing=1.2,
    )
