"""The fit figures: observed and predicted index, residuals; data tables match the fit.

Checks are on our own figure conventions (common practice, no source): a title and
description in the SVG, a table row per observation, byte-identical output.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from sitegen.figures.fit import fit_figures
from sitegen.fitting import fit_scenario
from sitegen.scenario.loader import find_scenarios, load_scenario

ROOT = Path(__file__).resolve().parents[1]
SPRAT = ROOT / "scenarios" / "coastal-sprat.toml"


def test_fit_figures_show_the_fit_and_its_data() -> None:
    scenario = load_scenario(SPRAT)
    report = fit_scenario(scenario, replicates=0)
    assert report is not None
    first, second = fit_figures(scenario, report)
    assert (first.name, second.name) == ("fit-index", "fit-residuals")
    index = report.indices[0]
    assert len(first.table.rows) == len(index.years) == len(second.table.rows)
    year, _, observed, predicted = first.table.rows[0]
    assert year == index.years[0] and observed == pytest.approx(index.observed[0], rel=1e-6)
    assert predicted == pytest.approx(index.q * report.states[0], rel=1e-6)
    assert "<title" in first.svg and "observed" in first.description
    again = fit_figures(scenario, fit_scenario(scenario, replicates=0))  # type: ignore[arg-type]
    assert again[0].svg == first.svg and again[1].svg == second.svg


def test_the_demo_data_folder_is_not_a_scenario() -> None:
    found = find_scenarios([str(SPRAT.parent)])
    assert SPRAT in found and all(path.suffix == ".toml" for path in found)
    assert not any("data" in path.parts[-2] for path in found)
