"""The figure kinds, by name: each is a function (scenario, assessment) -> Figure | None.

A kind returns None when it does not apply (no yield declared, no history, no
uncertainty). Adding a kind is one function and one line here; pages show the
figures in this order.
"""

from __future__ import annotations

from collections.abc import Callable

from sitegen.dynamics.assess import Assessment
from sitegen.figures.bifurcation import bifurcation_figures
from sitegen.figures.common import Figure
from sitegen.figures.parameter_map import map_figures
from sitegen.figures.phase_line import phase_line_figure
from sitegen.figures.risk import risk
from sitegen.figures.trajectories import trajectories
from sitegen.figures.trend import trend
from sitegen.figures.yields import yield_curves
from sitegen.scenario.records import Scenario

FigureKind = Callable[[Scenario, Assessment], "Figure | list[Figure] | None"]

KINDS: dict[str, FigureKind] = {
    "phase-line": phase_line_figure,
    "bifurcation": bifurcation_figures,
    "parameter-map": map_figures,
    "trajectories": trajectories,
    "yield-curves": yield_curves,
    "risk": risk,
    "trend": trend,
}


def figures_for(scenario: Scenario, assessment: Assessment) -> list[Figure]:
    """Every figure that applies to this scenario, in registry order."""
    result: list[Figure] = []
    for kind in KINDS.values():
        made = kind(scenario, assessment)
        if made is None:
            continue
        result.extend(made if isinstance(made, list) else [made])
    return result
