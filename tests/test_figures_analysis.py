"""The analysis figures: phase line, bifurcation diagrams and parameter maps.

Structure, not pixels: every SVG parses, has a title and a description, is
byte-identical on a second run and stays under the size limit; the number of
equilibrium markers equals the number of equilibria; fold markers sit at the
analysis's fold values; the CSV rows are exactly the plotted points.

Speed: a full ``assess`` of every bundled scenario and template takes minutes, so
the two bistable scenarios get a full assessment (budget 1 s) and the whole set
gets a *light* one: the stage-3 analysis plus the lever limit (cheap, from the
branches), with every Monte Carlo, policy and sensitivity part left None. The
map's sample cloud is then drawn from the scenario's seed, which tests that path.
Each analysis is computed once per module and shared by all three kinds.
"""

from __future__ import annotations

import csv
import io
import re
import xml.etree.ElementTree as ET
from functools import cache
from pathlib import Path

import numpy as np
import pytest

from sitegen.analysis.analyse import analyse
from sitegen.dynamics.assess import Assessment, assess, units_of
from sitegen.dynamics.limits import lever_limit, stable_run
from sitegen.figures import bifurcation, parameter_map, phase_line
from sitegen.figures.common import MAX_SVG_BYTES, Figure
from sitegen.figures.registry import KINDS
from sitegen.model.model import build_model
from sitegen.scenario.loader import load_scenario, load_text
from sitegen.scenario.records import Scenario
from sitegen.scenario.templates import TEMPLATES

ROOT = Path(__file__).resolve().parent.parent
SCENARIOS = sorted((ROOT / "scenarios").glob("*.toml"))
BISTABLE = ("quillan-defoliator", "vellamere-lake")
SVG = "{http://www.w3.org/2000/svg}"
CASES = [f"scenario:{path.stem}" for path in SCENARIOS] + [f"template:{n}" for n in TEMPLATES]


@cache
def scenario_of(case: str) -> Scenario:
    kind, name = case.split(":", 1)
    if kind == "scenario":
        return load_scenario(ROOT / "scenarios" / f"{name}.toml")
    return load_text(TEMPLATES[name].text, "t.toml", "t")


@cache
def light_assessment(case: str) -> Assessment:
    """Analysis and lever limit only (see the module docstring)."""
    scenario = scenario_of(case)
    model = build_model(scenario)
    analysis = analyse(scenario, 1.0)
    run = stable_run(model, analysis.branches, analysis.bifurcations, analysis.equilibria)
    none = dict.fromkeys(
        (
            "trajectory",
            "collapse",
            "recovery",
            "hysteresis",
            "sustainable_yield",
            "stock_status",
            "economics",
            "policies",
            "uncertainty",
            "sensitivity",
        ),
    )
    return Assessment(
        slug=scenario.slug, title=scenario.title, analysis=analysis,
        units=units_of(model, scenario), lever=model.lever,
        lever_value=float(model.values[model.lever]) if model.lever else None,
        current_state=model.current_state, shock=scenario.model.shock,
        lever_limit=lever_limit(model, run) if run is not None else None,
        better=model.better, **none,
    )  # fmt: skip


@cache
def full_assessment(slug: str) -> Assessment:
    case = f"scenario:{slug}"
    # Reuse the analysis of the light assessment: the stage-3 work is done once.
    return assess(scenario_of(case), 1.0, analysis=light_assessment(case).analysis)


def as_list(made: Figure | list[Figure] | None) -> list[Figure]:
    return [] if made is None else made if isinstance(made, list) else [made]


def check_svg(figure: Figure) -> ET.Element:
    """Parses, has title and desc with words, fits the limit; returns the root."""
    size = len(figure.svg.encode("utf-8"))
    assert size <= MAX_SVG_BYTES, f"{figure.name}: {size} bytes"
    root = ET.fromstring(figure.svg)
    title, desc = root.find(f"{SVG}title"), root.find(f"{SVG}desc")
    assert title is not None and desc is not None
    assert title.text and desc.text and len(desc.text.split()) >= 8
    assert re.search(r"\d", desc.text), "the description carries the numbers"
    return root


def ids_of(root: ET.Element, name: str, stem: str) -> list[str]:
    """Element ids ``<name>--<stem>...`` in document order."""
    prefix = f"{name}--{stem}"
    return [e.get("id", "") for e in root.iter() if e.get("id", "").startswith(prefix)]


def csv_rows(figure: Figure) -> list[list[str]]:
    return list(csv.reader(io.StringIO(figure.csv)))[1:]


def artists_by_gid(mpl_figure: object) -> dict[str, object]:
    found: dict[str, object] = {}
    for artist in mpl_figure.findobj():  # type: ignore[attr-defined]
        gid = artist.get_gid()
        if gid:
            found[gid] = artist
    return found


# Phase line ------------------------------------------------------------------------------
@pytest.mark.parametrize("case", CASES)
def test_phase_line_for_every_scenario_and_template(case: str) -> None:
    scenario, assessment = scenario_of(case), light_assessment(case)
    (figure,) = as_list(KINDS["phase-line"](scenario, assessment))
    root = check_svg(figure)
    assert figure.name == "phase-line"
    markers = ids_of(root, "phase-line", "equilibrium-")
    assert len(markers) == len(assessment.analysis.equilibria)
    for k, equilibrium in enumerate(assessment.analysis.equilibria):
        assert f"phase-line--equilibrium-{equilibrium.stability}-{k}" in markers
    assert len(ids_of(root, "phase-line", "basin-")) == len(assessment.analysis.basins)
    assert bool(ids_of(root, "phase-line", "today")) == (assessment.current_state is not None)


@pytest.mark.parametrize("slug", BISTABLE)
def test_phase_line_rows_are_the_plotted_curve(slug: str) -> None:
    scenario, assessment = scenario_of(f"scenario:{slug}"), full_assessment(slug)
    mpl_figure, table, _, description = phase_line.draw(scenario, assessment)
    curve = artists_by_gid(mpl_figure)["rate-curve"]
    plotted = np.asarray(curve.get_xydata())  # type: ignore[attr-defined]
    rows = np.array(table.rows, dtype=float)
    np.testing.assert_array_equal(rows, plotted)
    figure = KINDS["phase-line"](scenario, assessment)
    assert isinstance(figure, Figure)
    assert np.array_equal(np.array(csv_rows(figure), dtype=float), plotted, equal_nan=True)
    # Every equilibrium is a sampled point, so the curve passes through zero at the markers.
    for equilibrium in assessment.analysis.equilibria:
        assert equilibrium.value in plotted[:, 0]
    assert "threshold" in description.lower() and "today" in description.lower()


@pytest.mark.parametrize("slug", BISTABLE)
def test_phase_line_is_deterministic(slug: str) -> None:
    scenario, assessment = scenario_of(f"scenario:{slug}"), full_assessment(slug)
    first = KINDS["phase-line"](scenario, assessment)
    second = KINDS["phase-line"](scenario, assessment)
    assert isinstance(first, Figure) and isinstance(second, Figure)
    assert first.svg == second.svg and first.csv == second.csv


# Bifurcation diagrams ---------------------------------------------------------------------
@pytest.mark.parametrize("case", CASES)
def test_bifurcation_figures_for_every_scenario_and_template(case: str) -> None:
    scenario, assessment = scenario_of(case), light_assessment(case)
    figures = as_list(KINDS["bifurcation"](scenario, assessment))
    names = bifurcation.ordered_parameters(scenario, assessment.analysis)
    assert [f.name for f in figures] == bifurcation.figure_names(names)
    if assessment.lever in names:
        assert names[0] == assessment.lever
    for figure, parameter in zip(figures, names, strict=True):
        root = check_svg(figure)
        folds = [b for b in assessment.analysis.bifurcations if b.parameter == parameter]
        assert len(ids_of(root, figure.name, "bifurcation-")) == len(folds)
        assert ids_of(root, figure.name, "branch-")


@pytest.mark.parametrize("slug", BISTABLE)
def test_bifurcation_markers_and_rows_are_the_plotted_points(slug: str) -> None:
    scenario, assessment = scenario_of(f"scenario:{slug}"), full_assessment(slug)
    lever = assessment.lever
    assert lever is not None
    mpl_figure, table, _, description = bifurcation.draw(scenario, assessment, lever)
    artists = artists_by_gid(mpl_figure)
    folds = [b for b in assessment.analysis.bifurcations if b.parameter == lever]
    for k, record in enumerate(folds):
        marker = artists[f"bifurcation-{record.kind}-{k}"]
        xy = np.asarray(marker.get_xydata())  # type: ignore[attr-defined]
        assert xy.tolist() == [[record.parameter_value, record.state_value]]
    lines = sorted((g, a) for g, a in artists.items() if g.startswith("branch-"))
    plotted = {(float(p), float(x), g.endswith("-stable")) for g, a in lines
               for p, x in a.get_xydata()}  # type: ignore[attr-defined]  # fmt: skip
    rows = {(float(r[2]), float(r[3]), r[4] == "yes") for r in table.rows}
    assert rows == plotted
    assert len(table.rows) == sum(len(a.get_xydata()) for _, a in lines)  # type: ignore[attr-defined]
    for _, line in lines:
        stable = line.get_gid().endswith("-stable")  # type: ignore[attr-defined]
        assert line.get_linestyle() == ("-" if stable else "--")  # type: ignore[attr-defined]
    assert "today" in description.lower()


@pytest.mark.parametrize("slug", BISTABLE)
def test_bifurcation_follows_better_and_is_deterministic(slug: str) -> None:
    scenario, assessment = scenario_of(f"scenario:{slug}"), full_assessment(slug)
    first = as_list(KINDS["bifurcation"](scenario, assessment))
    second = as_list(KINDS["bifurcation"](scenario, assessment))
    assert [f.svg for f in first] == [f.svg for f in second]
    lever_figure = first[0]
    if assessment.lever_limit is not None and assessment.better == "lower":
        assert "flip to the high state" in lever_figure.svg
        assert "collapse" not in lever_figure.description


# Parameter maps ---------------------------------------------------------------------------
@pytest.mark.parametrize("case", CASES)
def test_maps_for_every_scenario_and_template(case: str) -> None:
    scenario, assessment = scenario_of(case), light_assessment(case)
    maps = assessment.analysis.maps
    figures = as_list(KINDS["parameter-map"](scenario, assessment))
    assert [f.name for f in figures] == parameter_map.figure_names(maps)
    for figure, one in zip(figures, maps, strict=True):
        root = check_svg(figure)
        assert len(ids_of(root, figure.name, "cusp-")) == len(one.cusps)
        assert len(ids_of(root, figure.name, "fold-curve-")) == len(one.fold_curves)
        assert ids_of(root, figure.name, "today")
        for count in {int(c) for c in one.stable_counts.ravel()}:
            assert ("no stable state" if count == 0 else f"{count} stable state") in figure.svg
        declared = scenario.uncertainty is not None and bool(
            {one.x, one.y} & {p.name for p in scenario.uncertainty.parameters}
        )
        assert bool(ids_of(root, figure.name, "samples")) == declared


@pytest.mark.parametrize("slug", BISTABLE)
def test_map_rows_cusps_and_samples_are_the_plotted_points(slug: str) -> None:
    scenario, assessment = scenario_of(f"scenario:{slug}"), full_assessment(slug)
    for one in assessment.analysis.maps:
        mpl_figure, table, _, _ = parameter_map.draw(scenario, assessment, one)
        artists = artists_by_gid(mpl_figure)
        folds = [np.asarray(artists[f"fold-curve-{k}"].get_xydata())  # type: ignore[attr-defined]
                 for k in range(len(one.fold_curves))]  # fmt: skip
        plotted = np.concatenate(folds) if folds else np.empty((0, 2))
        np.testing.assert_array_equal(np.array(table.rows, dtype=float)[:, 1:3], plotted)
        for k, cusp in enumerate(one.cusps):
            xy = artists[f"cusp-{k}"].get_xydata()  # type: ignore[attr-defined]
            assert np.asarray(xy).tolist() == [[cusp.parameters[one.x], cusp.parameters[one.y]]]
        if "samples" in artists:
            # Each sample is drawn as a tiny dash: (x, y), (x + nudge, y), gap.
            dots = np.asarray(artists["samples"].get_xydata())[::3]  # type: ignore[attr-defined]
            assert len(dots) <= parameter_map.MAX_SAMPLES
            report = assessment.uncertainty
            assert report is not None
            # The cloud is the assessment's own draws (the first ones), not new ones.
            if one.x in report.draws:
                np.testing.assert_array_equal(dots[:, 0], report.draws[one.x][: len(dots)])
    first = as_list(KINDS["parameter-map"](scenario, assessment))
    second = as_list(KINDS["parameter-map"](scenario, assessment))
    assert [f.svg for f in first] == [f.svg for f in second]
