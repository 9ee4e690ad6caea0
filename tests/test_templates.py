"""The template registry and the ``sitegen new`` command.

Every template must load clean (no error, no warning), explain every key in a
comment, say that its numbers are illustrative and name its law in ``notes``.
The command is run as users run it, through ``python -m sitegen`` in a
subprocess, so exit codes and messages are checked end to end.
"""

from __future__ import annotations

import re
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

from sitegen.scenario.loader import load_text
from sitegen.scenario.templates import TEMPLATES, Template, get_template, template_names

KEBAB = re.compile(r"^[a-z0-9]+(?:-[a-z0-9]+)*$")
# A table header ([x], [[x]], [x.y]) or a `key = value` line, outside multi-line strings.
HEADER = re.compile(r"^\s*\[")
KEY = re.compile(r"^\s*[A-Za-z0-9_\-\"'.]+\s*=")

ALL = list(TEMPLATES.values())
IDS = [template.name for template in ALL]


def run_sitegen(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    """``python -m sitegen ARGS`` in ``cwd``; output captured as text."""
    return subprocess.run(
        [sys.executable, "-m", "sitegen", *args],
        cwd=cwd,
        capture_output=True,
        text=True,
        encoding="utf-8",
        timeout=120,
        check=False,
    )


def uncommented_keys(text: str) -> list[str]:
    """Key and header lines with neither a trailing comment nor a comment line above."""
    missing: list[str] = []
    previous = ""
    in_string = False
    for line in text.splitlines():
        marks = line.count("'''") + line.count('"""')
        if in_string:
            in_string = marks % 2 == 0
            previous = line
            continue
        stripped = line.strip()
        if (HEADER.match(line) or KEY.match(line)) and not stripped.startswith("#"):
            commented = "  # " in line or previous.strip().startswith("#")
            if not commented:
                missing.append(stripped)
        if marks % 2 == 1:
            in_string = True
        previous = line
    return missing


def test_at_least_ten_templates_with_kebab_case_names() -> None:
    assert len(TEMPLATES) >= 10
    assert template_names() == list(TEMPLATES)
    for name, template in TEMPLATES.items():
        assert KEBAB.match(name), name
        assert template.name == name
        assert get_template(name) is template
    with pytest.raises(KeyError):
        get_template("no-such-template")


def test_the_loader_hint_names_a_real_template() -> None:
    # The loader's "empty folder" hint suggests this name; it must keep working.
    assert "logistic-quota" in TEMPLATES


@pytest.mark.parametrize("template", ALL, ids=IDS)
def test_template_loads_clean(template: Template) -> None:
    scenario = load_text(template.text, f"<template {template.name}>", template.name)
    assert scenario.warnings == ()
    assert scenario.sources == ("illustrative values",)
    if scenario.model.lever is not None:
        lever = scenario.parameter(scenario.model.lever)
        assert lever.range is not None, "the lever needs a range to explore"
    assert any(parameter.range is not None for parameter in scenario.parameters)


@pytest.mark.parametrize("template", ALL, ids=IDS)
def test_template_is_fully_commented(template: Template) -> None:
    assert uncommented_keys(template.text) == []


@pytest.mark.parametrize("template", ALL, ids=IDS)
def test_template_says_illustrative_and_names_its_law(template: Template) -> None:
    head = "\n".join(template.text.splitlines()[:4])
    assert "illustrative" in head.lower()
    data = tomllib.loads(template.text)
    assert template.law.lower() in data["scenario"]["notes"].lower()
    assert template.law in template.text.splitlines()[5]
    assert template.description and "\n" not in template.description
    assert template.text.endswith("\n")


def test_comment_check_catches_a_bare_key() -> None:
    text = '[state]  # the state\nsymbol = "B"\n# why\nunit = "t"\nnotes = """\nx = 1\n"""\n'
    assert uncommented_keys(text) == ['symbol = "B"', 'notes = """']


def test_list_prints_one_line_per_template(tmp_path: Path) -> None:
    result = run_sitegen("new", "--list", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    lines = result.stdout.strip().splitlines()
    assert len(lines) == len(TEMPLATES)
    for line, template in zip(lines, ALL, strict=True):
        name, description = line.split(maxsplit=1)
        assert name == template.name
        assert description == template.description
    assert list(tmp_path.iterdir()) == []


def test_new_writes_the_template_and_refuses_to_overwrite(tmp_path: Path) -> None:
    target = tmp_path / "my-stock.toml"
    result = run_sitegen("new", "my-stock.toml", "--template", "logistic-quota", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    assert target.read_text(encoding="utf-8") == TEMPLATES["logistic-quota"].text
    assert "sitegen check my-stock.toml" in result.stdout
    assert [p.name for p in tmp_path.iterdir()] == ["my-stock.toml"]  # no temporary file left

    checked = run_sitegen("check", "my-stock.toml", cwd=tmp_path)
    assert checked.returncode == 0, checked.stderr
    assert "warning" not in checked.stdout

    target.write_text("# my own edits\n", encoding="utf-8")
    again = run_sitegen("new", "my-stock.toml", "--template", "allee-quota", cwd=tmp_path)
    assert again.returncode == 1
    assert "exists already" in again.stderr
    assert "never overwrites" in again.stderr
    assert "Traceback" not in again.stderr
    assert target.read_text(encoding="utf-8") == "# my own edits\n"
    assert [p.name for p in tmp_path.iterdir()] == ["my-stock.toml"]


def test_new_writes_non_ascii_units_as_utf8(tmp_path: Path) -> None:
    result = run_sitegen("new", "room.toml", "--template", "newton-cooling", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    assert 'unit = "°C"' in (tmp_path / "room.toml").read_text(encoding="utf-8")


def test_unknown_template_suggests_the_closest_name(tmp_path: Path) -> None:
    result = run_sitegen("new", "x.toml", "--template", "logistc-quota", cwd=tmp_path)
    assert result.returncode == 2
    assert "unknown template 'logistc-quota'" in result.stderr
    assert "did you mean 'logistic-quota'?" in result.stderr
    assert "Traceback" not in result.stderr
    assert not (tmp_path / "x.toml").exists()


@pytest.mark.parametrize(
    ("args", "words"),
    [
        (["new"], "name the file to write"),
        (["new", "x.toml"], "choose a template with --template NAME"),
        (["new", "x.txt", "--template", "logistic-quota"], "end in .toml"),
        (["new", "my lake.toml", "--template", "logistic-quota"], "cannot be used as a page name"),
        (["new", "x.toml", "--list"], "--list takes no FILE"),
    ],
)
def test_usage_errors_exit_2(tmp_path: Path, args: list[str], words: str) -> None:
    result = run_sitegen(*args, cwd=tmp_path)
    assert result.returncode == 2
    assert words in result.stderr
    assert list(tmp_path.iterdir()) == []


def test_missing_folder_is_refused(tmp_path: Path) -> None:
    result = run_sitegen("new", "nowhere/x.toml", "--template", "drag-fall", cwd=tmp_path)
    assert result.returncode == 1
    assert "does not exist" in result.stderr
    assert list(tmp_path.iterdir()) == []
