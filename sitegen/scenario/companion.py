"""The companion file of fitted estimates, ``<stem>.fitted.toml``, beside a scenario.

``sitegen fit --write`` keeps one ``[[fit]]`` entry per assessment year (a later
fit for the same year replaces that year's entry). Each entry holds the data's
first and last year, the SHA-256 of the data (the provenance: builds must be
byte-reproducible, so no date of fit is stored), the estimates in the
parameters' own units and the derived figures. The loader applies the latest
entry's estimates to the parameter values and records on each parameter where
its value came from ("fitted to 2002-2026 data").

Floats are written with ``repr`` (shortest text that reads back to the same
double), entries sorted by year and keys sorted by name, so equal fits give
equal bytes.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import replace
from pathlib import Path as FilePath

from sitegen.errors import ScenarioError, did_you_mean
from sitegen.scenario.checker import Checker
from sitegen.scenario.inputs import companion_path
from sitegen.scenario.locate import SourceIndex
from sitegen.scenario.records import DataSpec, FitEntry, Parameter

START_KEY = "start"  # estimates["start"]: the fitted starting state, in the state's unit
ENTRY_KEYS = ("assessment_year", "data_hash", "first_year", "last_year", "estimates", "derived")


def read_companion(scenario_path: str) -> tuple[FitEntry, ...]:
    """The entries of the companion beside ``scenario_path``, oldest first (none: ``()``)."""
    if scenario_path == "<scenario>":
        return ()
    path = companion_path(scenario_path)
    if not path.is_file():
        return ()
    shown = str(path)
    try:
        text = path.read_bytes().decode("utf-8")
        data = tomllib.loads(text)
    except (OSError, UnicodeDecodeError) as error:
        raise ScenarioError(
            f"cannot read the fitted estimates ({error})",
            path=shown,
            hint="delete the file and run: sitegen fit SCENARIO --write",
        ) from None
    except tomllib.TOMLDecodeError as error:
        raise ScenarioError(
            f"the fitted estimates are not valid TOML: {error}",
            path=shown,
            hint="delete the file and run: sitegen fit SCENARIO --write",
        ) from None
    check = Checker(shown, SourceIndex(text))
    raw = data.get("fit", [])
    if set(data) - {"fit"} or not isinstance(raw, list):
        check.fail(("fit",), "expected only [[fit]] entries", "this file is written by sitegen fit")
    entries: dict[int, FitEntry] = {}
    for position, table in enumerate(raw):
        where = ("fit", position)
        if not isinstance(table, dict):
            check.fail(where, "expected a [[fit]] table")
        for key in table:
            if key not in ENTRY_KEYS:
                check.fail((*where, key), f"unknown key '{key}'", did_you_mean(key, ENTRY_KEYS))
        year = check.integer(table, (*where, "assessment_year"))
        entries[year] = FitEntry(
            year,
            check.text(table, (*where, "data_hash")),
            check.integer(table, (*where, "first_year")),
            check.integer(table, (*where, "last_year")),
            check.numbers_table(table, (*where, "estimates")),
            check.numbers_table(table, (*where, "derived")),
        )
    return tuple(entries[year] for year in sorted(entries))


def apply_latest(
    parameters: tuple[Parameter, ...],
    fits: tuple[FitEntry, ...],
    data: DataSpec | None,
    scenario_path: str,
) -> tuple[tuple[Parameter, ...], list[str]]:
    """Parameters with the latest fit's estimates applied, and warnings about the fit."""
    if not fits:
        return parameters, []
    latest = fits[-1]
    shown = str(companion_path(scenario_path))
    known = {p.name for p in parameters}
    for name in latest.estimates:
        if name != START_KEY and name not in known:
            raise ScenarioError(
                f"the fitted estimates name '{name}', which is not a parameter of the scenario",
                path=shown,
                key=f"fit.estimates.{name}",
                hint="the scenario changed since the fit: run sitegen fit SCENARIO --write",
            )
    source = f"fitted to {latest.first_year}-{latest.last_year} data"
    result = tuple(
        replace(p, value=latest.estimates[p.name], source=source)
        if p.name in latest.estimates
        else p
        for p in parameters
    )
    warnings = []
    if data is not None and data.data_hash != latest.data_hash:
        warnings.append(
            f"{shown}: the latest estimates ({latest.assessment_year}) were fitted to other "
            "data than the scenario's [data] holds now: run sitegen fit SCENARIO --write"
        )
    return result, warnings


def _number(value: float) -> str:
    return repr(float(value))


def _inline(numbers: dict[str, float]) -> str:
    items = [f"{name} = {_number(v)}" for name, v in sorted(numbers.items()) if math.isfinite(v)]
    return "{ " + ", ".join(items) + " }" if items else "{}"


def companion_text(scenario_name: str, entries: tuple[FitEntry, ...]) -> str:
    """The companion file's text for ``entries`` (one per assessment year, sorted)."""
    by_year = {entry.assessment_year: entry for entry in entries}
    lines = [
        f"# Fitted estimates for {scenario_name}, written by: sitegen fit {scenario_name} --write",
        "# One [[fit]] per assessment year; the latest one sets the parameter values.",
        "# data_hash is the SHA-256 of the data the estimates were fitted to.",
    ]
    for year in sorted(by_year):
        entry = by_year[year]
        lines += [
            "",
            "[[fit]]",
            f"assessment_year = {entry.assessment_year}",
            f'data_hash = "{entry.data_hash}"',
            f"first_year = {entry.first_year}",
            f"last_year = {entry.last_year}",
            f"estimates = {_inline(entry.estimates)}",
            f"derived = {_inline(entry.derived)}",
        ]
    return "\n".join(lines) + "\n"


def companion_file(scenario_path: str | FilePath) -> FilePath:
    """Where the companion of ``scenario_path`` lives (re-exported for the command line)."""
    return companion_path(scenario_path)
