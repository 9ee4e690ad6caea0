"""Stage 1 for monitoring data: ``[data]`` read and checked, the companion file, ``sitegen fit``.

Each bad-data case checks the file (the CSV or the TOML), the line and the key or
column named in the message; these are our own conventions (common practice, no
source): a fit needs years one by one with no gap or repeat, removals of zero or
more, an index above zero (the fit takes logs), at least 5 years, and known
columns and parameters.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from sitegen.cli import main
from sitegen.errors import ScenarioError
from sitegen.scenario.inputs import scenario_inputs
from sitegen.scenario.loader import find_scenarios, load_scenario

ROOT = Path(__file__).resolve().parents[1]
SPRAT = ROOT / "scenarios" / "coastal-sprat.toml"

SCENARIO = """\
[scenario]
title = "Test stock with monitoring data"
summary = "A logistic stock fished under a catch, with a survey."
assessment_year = 2026

[state]
symbol = "B"
name = "biomass"
unit = "kt"
max = 1400

[parameters.r]
value = 0.5
unit = "1/yr"
name = "growth rate"
range = [0.3, 0.7]

[parameters.K]
value = 1000
unit = "kt"
name = "carrying capacity"
range = [700, 1300]

[parameters.H]
value = 100
unit = "kt/yr"
name = "catch"
range = [0, 160]

[model]
rate = "r*B*(1 - B/K) - H"
lever = "H"
yield = "H"

[data]
file = "survey.csv"
removal = "catch"
index = ["survey"]
estimate = ["r", "K"]
start = "K"
"""

ROWS = [
    (2020, 80, 900),
    (2021, 90, 860),
    (2022, 120, 800),
    (2023, 60, 760),
    (2024, 50, 820),
    (2025, 70, 870),
]


def csv_text(rows: list[tuple[object, object, object]] = ROWS) -> str:
    lines = ["# illustrative test data", "year,catch,survey"]
    lines += [",".join(str(cell) for cell in row) for row in rows]
    return "\n".join(lines) + "\n"


def write(folder: Path, scenario: str = SCENARIO, data: str | None = None) -> Path:
    path = folder / "stock.toml"
    path.write_text(scenario, encoding="utf-8")
    (folder / "survey.csv").write_text(csv_text() if data is None else data, encoding="utf-8")
    return path


def error_of(folder: Path, scenario: str = SCENARIO, data: str | None = None) -> ScenarioError:
    with pytest.raises(ScenarioError) as caught:
        load_scenario(write(folder, scenario, data))
    return caught.value


def test_good_data_are_read(tmp_path: Path) -> None:
    scenario = load_scenario(write(tmp_path))
    data = scenario.data
    assert data is not None
    assert data.years == tuple(range(2020, 2026))
    assert data.removals == (80.0, 90.0, 120.0, 60.0, 50.0, 70.0)
    assert data.indices[0].values[0] == 900.0 and data.estimate == ("r", "K")
    assert data.start == "K" and data.timing == "start" and data.replicates == 500
    assert len(data.data_hash) == 64
    assert scenario_inputs(tmp_path / "stock.toml") == [
        tmp_path / "stock.toml",
        tmp_path / "survey.csv",
    ]


def test_inline_columns_and_empty_index_cells(tmp_path: Path) -> None:
    inline = SCENARIO.replace(
        'file = "survey.csv"',
        "values = { year = [2020, 2021, 2022, 2023, 2024], catch = [1, 2, 3, 4, 5], "
        'survey = [9, "", 7, 6, 5] }',
    )
    data = load_scenario(write(tmp_path, inline)).data
    assert data is not None and data.source == "inline"
    values = data.indices[0].values
    assert values[1] != values[1] and values[2] == 7.0  # NaN: no survey in 2021


CSV_CASES = [
    # (rows, line in the CSV, column, words in the message)
    ([*ROWS[:3], *ROWS[4:]], 6, "year", "the year 2023 is missing"),
    ([*ROWS[:3], ROWS[2], *ROWS[3:]], 6, "year", "the year 2022 appears twice"),
    ([*ROWS[:2], (2022, -5, 800), *ROWS[3:]], 5, "catch", "negative"),
    ([*ROWS[:2], (2022, "lots", 800), *ROWS[3:]], 5, "catch", "'lots' is not a number"),
    ([*ROWS[:2], (2022, 120, 0), *ROWS[3:]], 5, "survey", "not above zero"),
    ([*ROWS[:2], (2022, 120, -3), *ROWS[3:]], 5, "survey", "not above zero"),
    (ROWS[:4], 6, "year", "at least 5"),
]


@pytest.mark.parametrize("rows, line, column, words", CSV_CASES)
def test_bad_csv_names_file_line_and_column(
    tmp_path: Path, rows: list[tuple[object, object, object]], line: int, column: str, words: str
) -> None:
    error = error_of(tmp_path, data=csv_text(rows))
    assert error.path == str(tmp_path / "survey.csv")
    assert (error.line, error.key) == (line, column)
    assert words in error.message and error.hint


TOML_CASES = [
    ('index = ["survey"]', 'index = ["sruvey"]', "data.index", "not in the data"),
    ('removal = "catch"', 'removal = "landings"', "data.removal", "not in the data"),
    ('estimate = ["r", "K"]', 'estimate = ["r", "q"]', "data.estimate", "not a parameter"),
    ('estimate = ["r", "K"]', 'estimate = ["r", "H"]', "data.estimate", "the lever"),
    ("range = [700, 1300]\n", "", "data.estimate", "has no range"),
    ('start = "K"', 'start = "k"', "data.start", "not a parameter"),
    ('file = "survey.csv"', 'file = "surveys.csv"', "data.file", "cannot read the data file"),
    ('start = "K"', 'start = "K"\ncolour = 3', "data.colour", "unknown key"),
]


@pytest.mark.parametrize("old, new, key, words", TOML_CASES)
def test_bad_data_keys_name_the_scenario_line_and_key(
    tmp_path: Path, old: str, new: str, key: str, words: str
) -> None:
    text = SCENARIO.replace(old, new, 1)
    error = error_of(tmp_path, text)
    assert error.path == str(tmp_path / "stock.toml") and error.key == key
    assert error.line is not None and words in error.message
    wanted = key.split(".")[-1]
    assert text.splitlines()[error.line - 1].lstrip().startswith((wanted, "[data]"))


def test_folder_search_skips_companion_files(tmp_path: Path) -> None:
    path = write(tmp_path)
    (tmp_path / "stock.fitted.toml").write_text("", encoding="utf-8")
    assert find_scenarios([str(tmp_path)]) == [path]


def test_sitegen_fit_prints_the_estimates() -> None:
    assert main(["fit", str(SPRAT), "--replicates", "20"]) == 0


def test_fit_write_round_trip_and_the_loader_applies_it(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    folder = tmp_path / "scenarios"
    shutil.copytree(SPRAT.parent, folder, ignore=shutil.ignore_patterns("*.fitted.toml"))
    copy = folder / SPRAT.name
    assert main(["fit", str(copy), "--write", "--replicates", "0", "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    companion = folder / "coastal-sprat.fitted.toml"
    first = companion.read_bytes()
    assert companion in scenario_inputs(copy)
    scenario = load_scenario(copy)
    r = scenario.parameter("r")
    assert r.value == summary["estimates"]["r"]["value"]  # stored with repr: exact
    assert r.source == "fitted to 2002-2026 data" and scenario.parameter("H").source == ""
    assert scenario.warnings == () and len(scenario.fits) == 1
    # The same fit again gives the same bytes (no date in the file).
    assert main(["fit", str(copy), "--write", "--replicates", "0"]) == 0
    assert companion.read_bytes() == first
    # Next year's fit keeps this year's entry and reports the change from it.
    text = copy.read_text(encoding="utf-8").replace(
        "assessment_year = 2026", "assessment_year = 2027"
    )
    copy.write_text(text, encoding="utf-8")
    capsys.readouterr()
    assert main(["fit", str(copy), "--write", "--replicates", "0", "--json"]) == 0
    later = json.loads(capsys.readouterr().out)
    assert later["previous_fit"]["assessment_year"] == 2026
    assert later["changes"]["r"]["previous"] == summary["estimates"]["r"]["value"]
    assert len(load_scenario(copy).fits) == 2
    # Changed data: the loader says the estimates belong to other data.
    data = folder / "data" / "coastal-sprat-survey.csv"
    data.write_text(data.read_text(encoding="utf-8") + "# edited\n", encoding="utf-8")
    assert any("other data" in w for w in load_scenario(copy).warnings)


def test_fit_without_data_is_a_usage_error(tmp_path: Path) -> None:
    path = tmp_path / "plain.toml"
    path.write_text(SCENARIO.split("[data]")[0], encoding="utf-8")
    assert main(["fit", str(path)]) == 2
    assert main(["fit", str(write(tmp_path, data=csv_text(ROWS[:4])))]) == 1


def test_text_without_its_file_loads_without_data_and_says_so() -> None:
    from sitegen.scenario.loader import load_text

    scenario = load_text(SPRAT.read_text(encoding="utf-8"), "elsewhere.toml", "elsewhere")
    assert scenario.data is None
    assert any("was not read" in warning for warning in scenario.warnings)
