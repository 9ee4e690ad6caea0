"""Dynamics figures: trajectories, collapse, yield curves, risk, trend.

Structure, not pixels: every SVG parses, has <title> and <desc>, is byte-identical
across two runs and under the size limit; tabulated rows are the plotted points
(vertex counts of the tagged lines); the collapse markers sit at the
assessment's integrated and bottleneck times (read back through the linear
data-to-pixel map of the drawn fall); the MSY marker equals the assessment's MSY,
rK/4 at B = K/2 for a logistic stock under a fixed catch (Schaefer 1954).

Budget: assessments are computed once per module with a 1 s SymPy budget; for the
sweep over every bundled scenario and template the sensitivity and policy-table parts
(not used by these figures) are skipped so the file stays near the 90 s mark.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

import sitegen.dynamics.assess as assess_module
from sitegen.dynamics.assess import Assessment, assess
from sitegen.figures.common import MAX_SVG_BYTES, Figure
from sitegen.figures.risk import risk, unsafe_share
from sitegen.figures.sampling import GRID_POINTS
from sitegen.figures.trajectories import collapse_case, trajectories
from sitegen.figures.trend import trend, trend_data
from sitegen.figures.yields import yield_curves
from sitegen.scenario.loader import load_text
from sitegen.scenario.records import Scenario
from sitegen.scenario.templates import TEMPLATES

ROOT = Path(__file__).resolve().parent.parent
SVG = "{http://www.w3.org/2000/svg}"
BUDGET_S = 1.0
R, K = 0.5, 1000.0
KINDS = (trajectories, yield_curves, risk, trend)

LOGISTIC = """
[scenario]
title = "Logistic stock under a catch limit (test)"
summary = "Invented numbers for the Schaefer reference."
assessment_year = 2026
[state]
symbol = "B"
name = "biomass"
unit = "kt"
min = 0
max = 1400
current = 640
collapse_level = 50
[parameters.r]
value = 0.5
unit = "1/yr"
name = "growth rate"
[parameters.K]
value = 1000
unit = "kt"
name = "carrying capacity"
[parameters.H]
value = HARVEST
unit = "kt/yr"
name = "catch limit"
range = [0, 160]
[model]
rate = "r*B*(1 - B/K) - H"
lever = "H"
yield = "H"
time_unit = "yr"
"""


def _load(text: str) -> Scenario:
    return load_text(text, "t.toml", "t")


@pytest.fixture(scope="module")
def safe() -> tuple[Scenario, Assessment]:
    scenario = _load(LOGISTIC.replace("HARVEST", "100"))
    return scenario, assess(scenario, BUDGET_S)


@pytest.fixture(scope="module")
def past() -> tuple[Scenario, Assessment]:
    scenario = _load(LOGISTIC.replace("HARVEST", "140"))
    return scenario, assess(scenario, BUDGET_S)


def _figures(made: Figure | list[Figure] | None) -> list[Figure]:
    return [] if made is None else made if isinstance(made, list) else [made]


def _by_name(made: list[Figure], name: str) -> Figure:
    return next(f for f in made if f.name == name)


def _check(figure: Figure) -> ET.Element:
    root = ET.fromstring(figure.svg)
    assert root.find(f"{SVG}title").text == figure.title
    assert root.find(f"{SVG}desc").text == figure.description
    assert len(figure.svg.encode()) <= MAX_SVG_BYTES
    return root


def _vertices(root: ET.Element, name: str, gid: str) -> list[tuple[float, float]]:
    """The (x, y) vertices of the first path inside the group with id name--gid."""
    group = root.find(f".//{SVG}g[@id='{name}--{gid}']")
    assert group is not None, gid
    path = group.find(f".//{SVG}path")
    numbers = [float(v) for v in re.findall(r"-?\d+(?:\.\d+)?(?:e-?\d+)?", path.get("d"))]
    return list(zip(numbers[::2], numbers[1::2], strict=True))


def test_trajectory_rows_are_the_plotted_points(safe: tuple[Scenario, Assessment]) -> None:
    scenario, assessment = safe
    made = trajectories(scenario, assessment)
    figure = _by_name(made, "trajectories")
    root = _check(figure)
    rows = figure.csv.strip().split("\n")[1:]
    starts = sorted({float(r.split(",")[0]) for r in rows})
    assert 2 <= len(starts) <= 8
    for k in range(len(starts)):
        drawn = _vertices(root, "trajectories", f"run-{k}")
        tabulated = [r for r in rows if float(r.split(",")[0]) == starts[k]]
        assert len(drawn) == len(tabulated) <= GRID_POINTS + 1
    assert "724 kt" in figure.description and "276 kt" in figure.description


def test_collapse_markers_at_the_assessment_times(past: tuple[Scenario, Assessment]) -> None:
    scenario, assessment = past
    record = assessment.collapse
    assert record is not None and record.collapse_time is not None
    figure = _by_name(trajectories(scenario, assessment), "collapse")
    root = _check(figure)
    assert "today's H = 140" in figure.title
    # Pixel x of time t is linear: fit it from the first and last vertex of the fall.
    fall = _vertices(root, "collapse", "fall")
    times = [float(r.split(",")[0]) for r in figure.csv.strip().split("\n")[1:]]
    assert len(fall) == len(times)
    scale = (fall[-1][0] - fall[0][0]) / (times[-1] - times[0])

    def time_at(gid: str) -> float:
        return times[0] + (_vertices(root, "collapse", gid)[0][0] - fall[0][0]) / scale

    tolerance = 0.002 * times[-1] + 0.02 / scale  # SVG coordinates carry few decimals
    assert time_at("integrated-time") == pytest.approx(record.collapse_time, abs=tolerance)
    assert time_at("bottleneck-time") == pytest.approx(record.ghost_time, abs=tolerance)


def test_collapse_what_if_past_the_limit(safe: tuple[Scenario, Assessment]) -> None:
    scenario, assessment = safe
    case = collapse_case(scenario, assessment)
    assert case is not None and not case.today
    assert case.record.lever_value == pytest.approx(1.1 * R * K / 4, rel=1e-9)
    figure = _by_name(trajectories(scenario, assessment), "collapse")
    assert "10% past the limit 125 kt/yr" in figure.title


def test_msy_marker_is_schaefer(safe: tuple[Scenario, Assessment]) -> None:
    scenario, assessment = safe
    msy = assessment.sustainable_yield
    assert msy.msy == pytest.approx(R * K / 4, rel=1e-9)
    assert msy.state_at_msy == pytest.approx(K / 2, rel=1e-6)
    made = _figures(yield_curves(scenario, assessment))
    curve = _by_name(made, "yield-curve")
    surplus = _by_name(made, "surplus-production")
    for figure in (curve, surplus):
        root = _check(figure)
        assert root.find(f".//{SVG}g[@id='{figure.name}--msy']") is not None
        assert "MSY of 125 kt/yr" in figure.description or "MSY 125 kt/yr" in figure.description
    rows = curve.csv.strip().split("\n")[1:]
    assert len(rows) == len(_vertices(ET.fromstring(curve.svg), "yield-curve", "yield-0"))
    assert max(float(r.split(",")[3]) for r in rows) == pytest.approx(R * K / 4, rel=1e-6)


def test_risk_share_is_the_collapse_risk(
    everything: dict[str, tuple[Scenario, Assessment]],
) -> None:
    scenario, assessment = everything["coastal-sprat"]
    outcome = assessment.uncertainty.outcome("base")
    made = _figures(risk(scenario, assessment))
    histogram = _by_name(made, "risk")
    root = _check(histogram)
    _, share = unsafe_share(outcome)
    assert share == outcome.collapse_risk
    rows = [r.split(",") for r in histogram.csv.strip().split("\n")[1:]]
    shaded = sum(int(r[2]) for r in rows if r[4] == "yes")
    assert shaded == outcome.collapsed
    bars = root.findall(f".//{SVG}g[@id]")
    assert sum(g.get("id").startswith("risk--risk-bar-") for g in bars) == sum(
        r[4] == "yes" for r in rows
    )
    assert f"collapse risk {100 * outcome.collapse_risk:.1f}%" in histogram.title
    fan = _by_name(made, "risk-fan")
    _check(fan)
    assert len(fan.csv.strip().split("\n")) - 1 == len(
        _vertices(ET.fromstring(fan.svg), "risk-fan", "p50")
    )


def test_trend_ends_with_the_assessment(everything: dict[str, tuple[Scenario, Assessment]]) -> None:
    scenario, assessment = everything["coastal-sprat"]
    years, settings, limits = trend_data(scenario, assessment)
    assert list(years) == [2021, 2022, 2023, 2024, 2025, 2026]
    assert settings[-1] == assessment.lever_value
    assert limits[-1] == assessment.lever_limit.limit
    # History changes only B and H: the quota limit r K / 4 is the same every year.
    assert limits == pytest.approx(R * K / 4, rel=1e-9)
    figure = trend(scenario, assessment)
    root = _check(figure)
    assert len(_vertices(root, "trend", "setting")) == len(figure.csv.strip().split("\n")) - 1
    assert "at or past the limit in 2022" in figure.description


def test_deterministic(safe: tuple[Scenario, Assessment]) -> None:
    scenario, assessment = safe
    for kind in KINDS:
        first = [f.svg for f in _figures(kind(scenario, assessment))]
        assert first == [f.svg for f in _figures(kind(scenario, assessment))]


def _everything() -> list[tuple[str, str]]:
    items = [(p.stem, p.read_text()) for p in sorted((ROOT / "scenarios").glob("*.toml"))]
    return items + [(f"template-{n}", t.text) for n, t in TEMPLATES.items()]


@pytest.fixture(scope="module")
def everything() -> dict[str, tuple[Scenario, Assessment]]:
    with pytest.MonkeyPatch.context() as patch:
        # Sensitivities and the policy table are not drawn here (the figures build policy
        # models themselves); skipping them cuts the sweep's time by about two thirds.
        patch.setattr(assess_module, "run_sensitivity", lambda *_a, **_k: None)
        patch.setattr(assess_module, "compare_policies", lambda *_a, **_k: None)
        return {
            name: (scenario, assess(scenario, BUDGET_S))
            for name, scenario in ((n, _load(t)) for n, t in _everything())
        }


@pytest.mark.parametrize("name", [n for n, _ in _everything()])
def test_every_scenario_and_template(
    name: str, everything: dict[str, tuple[Scenario, Assessment]]
) -> None:
    scenario, assessment = everything[name]
    for kind in KINDS:
        for figure in _figures(kind(scenario, assessment)):
            _check(figure)
            assert figure.csv.count("\n") >= 2
