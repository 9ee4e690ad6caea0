"""The files a scenario reads (sitegen/scenario/inputs.py), found without NumPy or SymPy.

The rules checked here are our own conventions (common practice, no source): a
scenario's inputs are itself, its ``[data] file`` and its ``<stem>.fitted.toml``.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from sitegen.scenario.inputs import companion_path, is_companion, scenario_inputs


def test_inputs_list_scenario_data_and_companion(tmp_path: Path) -> None:
    scenario = tmp_path / "bay.toml"
    scenario.write_text('[data]\nfile = "data/bay.csv"\n', encoding="utf-8")
    assert scenario_inputs(scenario) == [scenario, tmp_path / "data" / "bay.csv"]
    companion = companion_path(scenario)
    assert companion.name == "bay.fitted.toml" and is_companion(companion)
    companion.write_text("", encoding="utf-8")
    assert scenario_inputs(scenario) == [scenario, tmp_path / "data/bay.csv", companion]
    assert not is_companion(scenario)


def test_inputs_never_raise_on_broken_files(tmp_path: Path) -> None:
    broken = tmp_path / "broken.toml"
    for content in (b"[data\nfile = 1", b"\xff\xfe\x00", b"data = 3", b"[data]\nfile = 7\n"):
        broken.write_bytes(content)
        assert scenario_inputs(broken) == [broken]
    assert scenario_inputs(tmp_path / "missing.toml") == [tmp_path / "missing.toml"]


def test_inputs_module_imports_only_the_standard_library() -> None:
    code = (
        "import sys; import sitegen.scenario.inputs; "
        "print(sorted(m for m in ('numpy', 'sympy', 'scipy') if m in sys.modules))"
    )
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert result.stdout.strip() == "[]", result.stderr
