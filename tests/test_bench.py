"""The benchmark runner works (no timing is asserted here: performance lives in bench/)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

from bench.__main__ import _not_met
from bench.registry import Result
from bench.scale_bench import scenario_text
from sitegen.scenario.loader import load_text

ROOT = Path(__file__).resolve().parent.parent


def test_generated_scenarios_load_clean_with_one_ranged_parameter() -> None:
    stems = set()
    for index in range(12):
        stem, text = scenario_text(index)
        scenario = load_text(text, f"{stem}.toml", stem)
        ranged = [p.name for p in scenario.parameters if p.range is not None]
        assert ranged == ["H"], stem
        stems.add(stem)
    assert len(stems) == 12  # every generated scenario has its own file name


def test_a_target_not_met_is_said_plainly_with_why() -> None:
    missed = Result("thing", 2.0, "s", 1.0, "base", 0.5, ">= 1x", False, "because of load")
    met = Result("other", 1.0, "s", None, "", None, "< 2 s", True)
    reference = Result("ref", 1.0, "s", None, "", None, "reference only", False)
    (line,) = _not_met([missed, met, reference])
    assert "NOT MET: thing" in line and ">= 1x" in line and "because of load" in line


def test_quick_run_of_one_benchmark_prints_the_table_and_writes_json(tmp_path: Path) -> None:
    out = tmp_path / "results.json"
    done = subprocess.run(
        [sys.executable, "-m", "bench", "--quick", "--only", "import floor", "--json", str(out)],
        capture_output=True,
        text=True,
        cwd=ROOT,
        timeout=120,
    )
    assert done.returncode == 0, done.stderr
    assert "import floor" in done.stdout and "benchmark" in done.stdout
    data = json.loads(out.read_text())
    assert data["quick"] is True and data["machine"]["python"]
    assert data["results"][0]["name"].startswith("import floor")


def test_an_unknown_benchmark_name_is_a_usage_error(tmp_path: Path) -> None:
    done = subprocess.run(
        [sys.executable, "-m", "bench", "--only", "no such thing", "--json", str(tmp_path / "x")],
        capture_output=True,
        text=True,
        cwd=ROOT,
        timeout=120,
    )
    assert done.returncode == 2 and "no benchmark named" in done.stderr
