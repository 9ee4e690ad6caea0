"""Issue 8 as a manager meets it: add this year's row, refit, rebuild, read the brief.

Last year's fit (assessment year 2025, data to 2025) is written with
``sitegen fit --write``; this year's row is added to the CSV, the scenario moves
to 2026, the fit is written again (the companion file then holds both years) and
the site is built. The brief must say how the estimates and the lever limit moved
since last year's fit, with both values, and the dossier must show the fit.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
from pathlib import Path

from sitegen.scenario.inputs import companion_path
from sitegen.site.build import build_site

ROOT = Path(__file__).resolve().parents[1]


def _sitegen(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "sitegen", *args], capture_output=True, text=True, timeout=600
    )


def test_add_a_year_refit_rebuild_and_read_the_brief(tmp_path: Path) -> None:
    folder = tmp_path / "scenarios"
    (folder / "data").mkdir(parents=True)
    scenario = folder / "coastal-sprat.toml"
    text = (ROOT / "scenarios" / "coastal-sprat.toml").read_text("utf-8")
    scenario.write_text(text.replace("assessment_year = 2026", "assessment_year = 2025"), "utf-8")
    rows = (ROOT / "scenarios" / "data" / "coastal-sprat-survey.csv").read_text("utf-8")
    this_year = next(line for line in rows.splitlines() if line.startswith("2026"))
    csv = folder / "data" / "coastal-sprat-survey.csv"
    csv.write_text(rows.replace(this_year + "\n", ""), "utf-8")

    first = _sitegen("fit", str(scenario), "--write", "--replicates", "60")
    assert first.returncode == 0, first.stderr
    assert companion_path(scenario).is_file()

    csv.write_text(csv.read_text("utf-8") + this_year + "\n", "utf-8")
    scenario.write_text(text, "utf-8")
    second = _sitegen("fit", str(scenario), "--write", "--replicates", "60")
    assert second.returncode == 0, second.stderr
    companion = companion_path(scenario).read_text("utf-8")
    assert companion.splitlines().count("[[fit]]") == 2
    assert "assessment_year = 2025" in companion and "assessment_year = 2026" in companion

    report = build_site([str(folder)], tmp_path / "build", jobs=1, version="test")
    assert report.failed == []
    brief = (tmp_path / "build" / "brief.html").read_text("utf-8")
    assert "What the latest data say" in brief
    moved = re.findall(r"<li>([^<]*in last year(?:&#39;|')s fit, [^<]* now[^<]*)</li>", brief)
    assert moved, "the brief states last year's and this year's estimates"
    assert any("lever limit" in line for line in moved)
    dossier = (tmp_path / "build" / "coastal-sprat.html").read_text("utf-8")
    assert 'id="fit"' in dossier and "fitted to 2002-2026 data" in dossier
    # The analysis used the fitted values, with their provenance on the parameter table.
    assert "fitted to 2002-2026 data" in dossier.split('id="model"')[1].split('id="equilibria"')[0]
    shutil.rmtree(tmp_path / "build")
