"""The ``[data]`` section: yearly removals and abundance indices, from a CSV file or inline.

The CSV file has one header row naming the columns, then one row per year; lines
starting with ``#`` (after optional spaces) are comments and blank lines are
skipped, so a file can say where its numbers come from. Cells are plain numbers
(``.`` for decimals, no thousands separators). An index cell may be empty (no
survey that year); the year and removal cells may not.

Every problem is a :class:`~sitegen.errors.ScenarioError` naming the CSV file, its
line and the column (or, for inline columns and the keys of ``[data]``, the
scenario file, line and key) with the fix.
"""

from __future__ import annotations

import csv
import hashlib
import io
import math
from pathlib import Path as FilePath
from typing import Any, NoReturn

from sitegen.errors import ScenarioError, did_you_mean
from sitegen.scenario.checker import Checker, describe
from sitegen.scenario.locate import Path
from sitegen.scenario.records import (
    START_ESTIMATE,
    TIMINGS,
    DataSpec,
    IndexSeries,
    ModelSpec,
    Parameter,
    StateSpec,
)

MIN_YEARS = 5
MAX_CSV_BYTES = 5_000_000
MAX_REPLICATES = 100_000
DEFAULT_REPLICATES = 500


class _Table:
    """Columns of text cells with the line each row stands on, and how to fail there."""

    def __init__(self, where: str, header: list[str], rows: list[tuple[int, list[str]]]) -> None:
        self.where = where
        self.header = header
        self.rows = rows
        self.lines: dict[int, str] = {}

    def fail(
        self, message: str, line: int | None, column: str | None, hint: str | None = None
    ) -> NoReturn:
        raise ScenarioError(
            message,
            path=self.where,
            line=line,
            key=column,
            hint=hint,
            source_line=self.lines.get(line) if line else None,
        )

    def column(self, name: str) -> list[tuple[int, str]]:
        position = self.header.index(name)
        return [
            (line, cells[position] if position < len(cells) else "") for line, cells in self.rows
        ]


def _read_csv(raw: bytes, where: str) -> _Table:
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        raise ScenarioError(
            f"the data file is not valid UTF-8 text (byte {error.start + 1})",
            path=where,
            line=raw[: error.start].count(b"\n") + 1,
            hint="save the CSV file with UTF-8 encoding",
        ) from None
    header: list[str] | None = None
    rows: list[tuple[int, list[str]]] = []
    lines: dict[int, str] = {}
    for number, line in enumerate(text.splitlines(), start=1):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        lines[number] = line
        cells = [cell.strip() for cell in next(csv.reader(io.StringIO(line)))]
        if header is None:
            header = cells
            continue
        rows.append((number, cells))
    table = _Table(where, header or [], rows)
    table.lines = lines
    if header is None:
        table.fail(
            "the data file has no header row", None, None, "start with e.g. year,catch,index"
        )
    for name in header:
        if header.count(name) > 1:
            table.fail(f"the column '{name}' appears twice in the header", min(lines), name)
    for number, cells in rows:
        if len(cells) > len(header):
            table.fail(
                f"this row has {len(cells)} cells but the header names {len(header)} columns",
                number,
                None,
                "remove the extra commas or add the column to the header",
            )
    return table


def _inline(check: Checker, raw: Any, where: Path) -> _Table:
    """Inline columns, ``[data.values]`` with one array per column, as a table of text."""
    if not isinstance(raw, dict) or not raw:
        check.fail(
            where, "expected a table of columns", "write values = { year = [2020, 2021], ... }"
        )
    line, _ = check.index.find(where)
    lengths = set()
    columns: dict[str, list[str]] = {}
    for name, values in raw.items():
        if not isinstance(values, list):
            check.fail(
                (*where, name),
                f"expected a list, found {describe(values)}",
                f"write {name} = [1, 2, 3]",
            )
        cells = []
        for item in values:
            if isinstance(item, bool) or not isinstance(item, int | float | str):
                check.fail(
                    (*where, name),
                    f"expected numbers, found {describe(item)}",
                    "write plain numbers",
                )
            cells.append(str(item))
        columns[name] = cells
        lengths.add(len(cells))
    if len(lengths) != 1:
        check.fail(
            where,
            "the inline columns have different lengths",
            "give every column one value per year",
        )
    header = list(columns)
    rows = [(line or 0, [columns[n][i] for n in header]) for i in range(lengths.pop())]
    table = _Table(check.path, header, rows)
    return table


def _numbers(table: _Table, name: str, allow_empty: bool) -> list[tuple[int, float]]:
    found = []
    for line, cell in table.column(name):
        if cell == "" and allow_empty:
            found.append((line, math.nan))
            continue
        try:
            value = float(cell)
        except ValueError:
            value = math.nan
        if not math.isfinite(value):
            shown = f"'{cell[:20]}'" if cell else "an empty cell"
            table.fail(
                f"{shown} is not a number",
                line,
                name,
                "write a plain number such as 12.5 (a point for decimals, no units)",
            )
        found.append((line, value))
    return found


def data_section(
    check: Checker,
    raw: Any,
    parameters: tuple[Parameter, ...],
    state: StateSpec,
    model: ModelSpec,
    scenario_path: str,
) -> DataSpec | None:
    """Validate ``[data]`` (already known to be present) into a :class:`DataSpec`.

    None only when the scenario text was not loaded from its own file and the data
    file beside it cannot be found (a warning says so); for a scenario file, an
    unreadable data file is an error.
    """
    table = check.table(raw, ("data",), "data")
    if model.lever is None:
        check.fail(
            ("data",),
            "fitting to data needs a lever in [model]: the removal column sets it each year",
            'add lever = "H" (the removal\'s parameter) under [model]',
        )
    if "file" in table and "values" in table:
        check.fail(("data", "values"), "give the data either as file or as values, not both")
    if "file" in table:
        name = check.text(table, ("data", "file"))
        base = FilePath(scenario_path).parent if scenario_path != "<scenario>" else FilePath()
        csv_path = base / name
        shown = str(csv_path)
        try:
            size = csv_path.stat().st_size
            if size > MAX_CSV_BYTES:
                check.fail(
                    ("data", "file"), f"the data file is {size:,} bytes; at most {MAX_CSV_BYTES:,}"
                )
            raw_bytes = csv_path.read_bytes()
        except OSError as error:
            if not FilePath(scenario_path).is_file():
                # Text given without its file (e.g. from memory): the CSV beside it
                # cannot be located, so the scenario loads without its data, and says so.
                check.warn(
                    ("data", "file"),
                    f"the data file {shown} was not read: the scenario was not loaded from "
                    "its own file, so the data beside it cannot be found",
                )
                return None
            check.fail(
                ("data", "file"),
                f"cannot read the data file {shown} ({error.strerror})",
                "the path is relative to the scenario file; check its spelling",
            )
        frame = _read_csv(raw_bytes, shown)
        digest = hashlib.sha256(raw_bytes).hexdigest()
        source = name
    elif "values" in table:
        frame = _inline(check, table["values"], ("data", "values"))
        canonical = "\n".join(",".join(r) for _, r in frame.rows) + "|" + ",".join(frame.header)
        digest = hashlib.sha256(canonical.encode()).hexdigest()
        source = "inline"
    else:
        check.fail(
            ("data",),
            "the data need a file or inline values",
            'add file = "data/survey.csv" (relative to this scenario) or values = { ... }',
        )
    year_column = check.text(table, ("data", "year"), "year")
    removal = check.text(table, ("data", "removal"))
    indices = check.texts(table, ("data", "index"))
    if not indices:
        check.fail(("data", "index"), "name at least one index column", 'write index = ["survey"]')
    for key, names in (("year", [year_column]), ("removal", [removal]), ("index", list(indices))):
        for name in names:
            if name not in frame.header:
                check.fail(
                    ("data", key),
                    f"the column '{name}' is not in the data ({frame.where}); "
                    f"its columns are {', '.join(frame.header)}",
                    did_you_mean(name, frame.header),
                )
    years = _years(frame, year_column)
    removals = _numbers(frame, removal, allow_empty=False)
    for line, value in removals:
        if value < 0:
            frame.fail(
                f"the removal {value:g} is negative",
                line,
                removal,
                "removals (catch, kills, pumping) are zero or more; check the sign",
            )
    series = []
    for name in indices:
        values = _numbers(frame, name, allow_empty=True)
        for line, value in values:
            if value <= 0:
                frame.fail(
                    f"the index value {value:g} is not above zero (the fit takes its log)",
                    line,
                    name,
                    "leave the cell empty for a year without an observation",
                )
        observed = sum(1 for _, v in values if not math.isnan(v))
        if observed < 3:
            check.fail(
                ("data", "index"),
                f"the index '{name}' has {observed} observations; at least 3 are needed",
            )
        series.append(IndexSeries(name, tuple(v for _, v in values)))
    estimate = _estimate(check, table, parameters, model)
    start = _start(check, table, parameters, state)
    timing = check.text(table, ("data", "timing"), "start")
    if timing not in TIMINGS:
        check.fail(("data", "timing"), f"unknown timing '{timing}'", did_you_mean(timing, TIMINGS))
    replicates = check.integer(table, ("data", "replicates"), DEFAULT_REPLICATES)
    if not 0 <= replicates <= MAX_REPLICATES:
        check.fail(
            ("data", "replicates"),
            f"replicates must be between 0 and {MAX_REPLICATES:,}",
            "500 is usual",
        )
    return DataSpec(
        source,
        tuple(years),
        removal,
        tuple(v for _, v in removals),
        tuple(series),
        estimate,
        start,
        timing,
        replicates,
        digest,
    )


def _years(frame: _Table, name: str) -> list[int]:
    years: list[int] = []
    seen: dict[int, int] = {}
    for line, cell in frame.column(name):
        try:
            year = int(cell)
        except ValueError:
            frame.fail(f"'{cell[:20]}' is not a year", line, name, "write whole years such as 2024")
        if year in seen:
            frame.fail(
                f"the year {year} appears twice (also on line {seen[year]})",
                line,
                name,
                "give each year one row; add up removals within a year",
            )
        if years and year != years[-1] + 1:
            missing = years[-1] + 1 if year > years[-1] else None
            problem = f"the year {missing} is missing" if missing else "the years are not in order"
            frame.fail(
                f"{problem} (the row before says {years[-1]}, this one {year})",
                line,
                name,
                "one row per year in order; leave the index cell empty in a year with no survey",
            )
        seen[year] = line
        years.append(year)
    if len(years) < MIN_YEARS:
        frame.fail(
            f"the data hold {len(years)} years; a fit needs at least {MIN_YEARS}",
            max(seen.values(), default=None),
            name,
            "add more years of data, or leave out [data] until you have them",
        )
    return years


def _estimate(
    check: Checker, table: dict[str, Any], parameters: tuple[Parameter, ...], model: ModelSpec
) -> tuple[str, ...]:
    names = check.texts(table, ("data", "estimate"))
    if not names:
        check.fail(
            ("data", "estimate"), "name the parameters to fit", 'write estimate = ["r", "K"]'
        )
    known = {p.name: p for p in parameters}
    for name in names:
        if name not in known:
            check.fail(
                ("data", "estimate"), f"'{name}' is not a parameter", did_you_mean(name, known)
            )
        if name == model.lever:
            check.fail(
                ("data", "estimate"),
                f"'{name}' is the lever: the data's removals set it year by year",
                "fit the growth parameters, such as r and K",
            )
        if known[name].range is None:
            check.fail(
                ("data", "estimate"),
                f"'{name}' has no range, and the fit searches within the range",
                f"add range = [low, high] under [parameters.{name}]",
            )
        if names.count(name) > 1:
            check.fail(("data", "estimate"), f"'{name}' is named twice")
    return names


def _start(
    check: Checker, table: dict[str, Any], parameters: tuple[Parameter, ...], state: StateSpec
) -> str | float:
    value = table.get("start", START_ESTIMATE)
    key = ("data", "start")
    names = [p.name for p in parameters]
    if isinstance(value, str):
        if value == START_ESTIMATE:
            if state.max is None:
                check.fail(
                    key,
                    "an estimated starting state is searched between [state] min and max, "
                    "and [state] has no max",
                    "add max = ... under [state]",
                )
            return value
        if value not in names:
            check.fail(
                key, f"'{value}' is not a parameter", did_you_mean(value, [*names, START_ESTIMATE])
            )
        return value
    number = check.number(table, key)
    if number <= state.min or (state.max is not None and number > state.max):
        check.fail(
            key,
            f"the starting state {number:g} lies outside the region",
            "give a state above [state] min",
        )
    return number
