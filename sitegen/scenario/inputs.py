"""Which files a scenario reads, found cheaply (standard library only).

The site build calls :func:`scenario_inputs` on its no-change path to hash every
input of a scenario, so this module imports neither NumPy nor SymPy and never
raises: a scenario file that cannot be read or parsed is reported as just
itself (the loader will give the proper error when the scenario is built).

A scenario ``<stem>.toml`` may read two more files:

- its monitoring data, ``[data] file = "..."`` (a CSV path relative to the
  scenario file);
- its companion of fitted estimates, ``<stem>.fitted.toml`` beside it, written
  by ``sitegen fit --write``.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

COMPANION_SUFFIX = ".fitted.toml"


def companion_path(path: str | Path) -> Path:
    """The companion file of fitted estimates beside the scenario ``path``."""
    scenario = Path(path)
    return scenario.with_name(scenario.name.removesuffix(".toml") + COMPANION_SUFFIX)


def is_companion(path: str | Path) -> bool:
    """True for a companion file of fitted estimates (not a scenario of its own)."""
    return Path(path).name.endswith(COMPANION_SUFFIX)


def data_file(path: str | Path) -> Path | None:
    """The data CSV named by the scenario's ``[data] file``, or None (never raises)."""
    scenario = Path(path)
    try:
        table = tomllib.loads(scenario.read_bytes().decode("utf-8-sig"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError, RecursionError, ValueError):
        return None
    data = table.get("data")
    if not isinstance(data, dict):
        return None
    name = data.get("file")
    if not isinstance(name, str) or not name.strip():
        return None
    try:
        return scenario.parent / name
    except (TypeError, ValueError):
        return None


def scenario_inputs(path: str | Path) -> list[Path]:
    """Every file the scenario at ``path`` reads: itself, its data CSV, its companion.

    The data file is listed when the scenario names one (even if it is missing,
    so that its appearance changes the hash); the companion only when present.
    Never raises; a broken scenario file gives ``[path]``.
    """
    scenario = Path(path)
    found = [scenario]
    data = data_file(scenario)
    if data is not None:
        found.append(data)
    companion = companion_path(scenario)
    if not is_companion(scenario) and companion.is_file():
        found.append(companion)
    return found
