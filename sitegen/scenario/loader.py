"""Stage 1: scenario files in, validated :class:`Scenario` records out.

Reading happens in four steps: (1) bytes, at most 1 MB, checked as UTF-8;
(2) TOML by the standard library's ``tomllib``; (3) each section checked against
its schema table, names declared and formulas parsed by the safe parser;
(4) units checked term by term. Any problem raises one :class:`ScenarioError`
that names the file, line, key and fix. Nothing else in the package reads
scenario files.
"""

from __future__ import annotations

import hashlib
import re
import tomllib
from pathlib import Path as FilePath
from typing import Any

import sympy

from sitegen.errors import FormulaError, ScenarioError, did_you_mean
from sitegen.scenario import units
from sitegen.scenario.checker import Checker, dotted, shorten
from sitegen.scenario.companion import apply_latest, read_companion
from sitegen.scenario.formula import ParsedFormula, parse_formula
from sitegen.scenario.inputs import is_companion
from sitegen.scenario.locate import Path, SourceIndex
from sitegen.scenario.monitoring import data_section
from sitegen.scenario.records import (
    DIRECTIONS,
    HIGHER,
    ModelSpec,
    Parameter,
    Scenario,
    StateSpec,
)
from sitegen.scenario.sections import OptionalSections

MAX_FILE_BYTES = 1_000_000
KEY_PART_BUDGET = 10_000_000  # sum over dotted chains of (dots)^2
SCENARIO_SUFFIX = ".toml"


def find_scenarios(paths: list[str]) -> list[FilePath]:
    """Scenario files named by ``paths`` (files, or folders searched for ``*.toml``).

    Companion files of fitted estimates (``*.fitted.toml``) in a folder are skipped.

    Raises :class:`ScenarioError` for a path that does not exist or a folder
    that holds no scenario.
    """
    found: list[FilePath] = []
    for text in paths:
        path = FilePath(text)
        if path.is_dir():
            files = sorted(
                p
                for p in path.glob("*" + SCENARIO_SUFFIX)
                if p.is_file() and not is_companion(p)  # fitted estimates, not a scenario
            )
            if not files:
                raise ScenarioError(
                    "this folder holds no scenario files",
                    path=text,
                    hint=f"scenario files end in {SCENARIO_SUFFIX}; "
                    "make one with: sitegen new FILE --template logistic-quota",
                )
            found.extend(files)
        elif path.is_file():
            found.append(path)
        elif path.exists():
            raise ScenarioError(
                "this is neither a scenario file nor a folder", path=text, hint="name a .toml file"
            )
        else:
            raise ScenarioError(
                "no such file or folder", path=text, hint="check the spelling of the path"
            )
    return found


def load_scenario(path: str | FilePath) -> Scenario:
    """Read and validate one scenario file; the slug is the file's stem."""
    file_path = FilePath(path)
    shown = str(path)
    try:
        size = file_path.stat().st_size
    except OSError as error:
        raise ScenarioError(f"cannot read the file ({error.strerror})", path=shown) from None
    if size > MAX_FILE_BYTES:
        raise ScenarioError(
            f"the file is {size:,} bytes; scenario files may be at most {MAX_FILE_BYTES:,}",
            path=shown,
            hint="keep long data in a separate CSV file",
        )
    try:
        raw = file_path.read_bytes()
    except OSError as error:
        raise ScenarioError(f"cannot read the file ({error.strerror})", path=shown) from None
    return load_bytes(raw, shown, slug=file_path.stem)


def load_bytes(raw: bytes, path: str = "<scenario>", slug: str | None = None) -> Scenario:
    """Validate scenario text given as bytes (see :func:`load_scenario`)."""
    if len(raw) > MAX_FILE_BYTES:
        raise ScenarioError(
            f"the file is {len(raw):,} bytes; scenario files may be at most {MAX_FILE_BYTES:,}",
            path=path,
        )
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as error:
        line = raw[: error.start].count(b"\n") + 1
        raise ScenarioError(
            f"the file is not valid UTF-8 text (byte {error.start + 1} cannot be read)",
            path=path,
            line=line,
            hint="save the file with UTF-8 encoding",
        ) from None
    if text.startswith("\ufeff"):
        text = text[1:]
    default = FilePath(path).stem if path != "<scenario>" else "scenario"
    stem = slug if slug is not None else default
    return load_text(text, path, stem, hashlib.sha256(raw).hexdigest())


# A chain of words joined by dots, such as a.b.c or a . b (possessive: linear time).
_DOTTED_CHAIN = re.compile(r"(?<![\w\-\"'])[\w\-\"']++(?:\s*+\.\s*+[\w\-\"']++)+")


def _check_key_parts(text: str, path: str) -> None:
    """Refuse keys of very many dotted parts before ``tomllib`` sees them.

    ``tomllib`` takes time quadratic in the parts of one key, so a 1 MB file of
    ``a.a.a...`` would hang it. Each dotted chain costs the square of its dots;
    real scenarios (and prose, whose chains are short) use little of the budget.
    """
    spent = 0
    for number, line in enumerate(text.splitlines(), start=1):
        if "." in line:
            spent += sum(chain.count(".") ** 2 for chain in _DOTTED_CHAIN.findall(line))
        if spent > KEY_PART_BUDGET:
            raise ScenarioError(
                "the keys in this file have too many dotted parts to read",
                path=path,
                line=number,
                source_line=line,
                hint="scenario keys have at most four parts, such as policies.parameters.F",
            )


def _toml(text: str, path: str) -> dict[str, Any]:
    _check_key_parts(text, path)
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        message = str(error)
        match = re.search(r"\(at line (\d+), column (\d+)\)", message)
        line = int(match.group(1)) if match else None
        column = int(match.group(2)) if match else None
        reason = re.sub(r"\s*\(at .*\)$", "", message)
        lines = text.splitlines()
        source = lines[line - 1] if line and line <= len(lines) else None
        raise ScenarioError(
            f"this is not valid TOML: {reason}",
            path=path,
            line=line,
            column=column,
            source_line=source,
            hint="check quotes, brackets and '=' on this line; text values need quotes",
        ) from None
    except ValueError:  # tomllib's int() refuses integers of more than 4300 digits
        long_number = re.search(r"[0-9_]{4000,}", text)
        line = text.count("\n", 0, long_number.start()) + 1 if long_number else None
        raise ScenarioError(
            "a number in this file has too many digits to read",
            path=path,
            line=line,
            hint="numbers need at most a few dozen digits; write large ones as 1.5e40",
        ) from None
    except (RecursionError, MemoryError):
        raise ScenarioError(
            "the file nests too deeply to read",
            path=path,
            hint="scenario files need at most three levels of tables",
        ) from None


def load_text(
    text: str, path: str = "<scenario>", slug: str = "scenario", source_hash: str = ""
) -> Scenario:
    """Validate scenario text (already decoded) into a :class:`Scenario`."""
    if not re.match(r"^[A-Za-z0-9][A-Za-z0-9_\-]*$", slug):
        raise ScenarioError(
            f"the file name '{slug}' cannot be used as a page name",
            path=path,
            hint="use letters, digits, '-' and '_' only, e.g. coastal-stock.toml",
        )
    data = _toml(text, path)
    check = Checker(path, SourceIndex(text))
    reader = _Reader(check, data)
    return reader.scenario(slug, path, source_hash or hashlib.sha256(text.encode()).hexdigest())


class _Reader(OptionalSections):
    """Builds the records section by section; every failure goes through ``check``."""

    def __init__(self, check: Checker, data: dict[str, Any]) -> None:
        self.check = check
        self.data = data
        self.symbols: dict[str, sympy.Symbol] = {}
        self.units: dict[str, str] = {}
        self.state_unit = "1"

    def scenario(self, slug: str, path: str, source_hash: str) -> Scenario:
        check = self.check
        check.table(self.data, (), "top")
        info = check.table(self.data["scenario"], ("scenario",), "scenario")
        state = self.state()
        parameters = self.parameters(self.data["parameters"], ("parameters",), base=True)
        model = self.model(parameters)
        data = None
        if "data" in self.data:
            data = data_section(check, self.data["data"], parameters, state, model, path)
        fits = read_companion(path)
        parameters, fit_warnings = apply_latest(parameters, fits, data, path)
        check.warnings.extend(fit_warnings)
        policies = self.policies(parameters, model)
        scenario = Scenario(
            slug=slug,
            path=path,
            title=check.text(info, ("scenario", "title")),
            summary=check.text(info, ("scenario", "summary")),
            assessment_year=check.integer(info, ("scenario", "assessment_year")),
            tags=check.texts(info, ("scenario", "tags")),
            notes=check.text(info, ("scenario", "notes"), ""),
            sources=check.texts(info, ("scenario", "sources")),
            state=state,
            parameters=parameters,
            model=model,
            symbols=dict(self.symbols),
            policies=policies,
            uncertainty=self.uncertainty(parameters),
            history=self.history(parameters, state),
            reference=self.reference(state),
            economics=self.economics(model),
            maps=self.maps(parameters),
            data=data,
            fits=fits,
            source_hash=source_hash,
            warnings=(),
        )
        return _with_warnings(scenario, tuple(check.warnings))

    def declare(self, name: str, key_path: Path, unit: str, positive: bool) -> None:
        if name in self.symbols:
            self.check.fail(
                key_path,
                f"the name '{name}' is declared twice",
                "each parameter needs a name of its own, different from the state's symbol",
            )
        assumptions = {"positive": True} if positive else {"real": True}
        self.symbols[name] = sympy.Symbol(name, **assumptions)
        self.units[name] = unit

    def unit(self, table: dict[str, Any], key_path: Path, default: str | None = None) -> str:
        text = self.check.text(table, key_path, default)
        try:
            units.parse_unit(text)
        except units.UnitError as error:
            self.check.fail(key_path, f"cannot read the unit '{text}': {error.message}", error.hint)
        return text

    def state(self) -> StateSpec:
        check = self.check
        table = check.table(self.data["state"], ("state",), "state")
        symbol = check.name(table["symbol"], ("state", "symbol"), "the state")
        unit = self.unit(table, ("state", "unit"))
        low = check.number(table, ("state", "min"), 0.0)
        high = check.optional_number(table, ("state", "max"))
        if high is not None and high <= low:
            check.fail(
                ("state", "max"),
                f"max ({high:g}) must be above min ({low:g})",
                "the region analysed runs from min up to max",
            )
        current = check.optional_number(table, ("state", "current"))
        if current is not None and (current < low or (high is not None and current > high)):
            check.warn(("state", "current"), f"today's value {current:g} lies outside the region")
        collapse = check.optional_number(table, ("state", "collapse_level"))
        if collapse is not None and collapse < low:
            check.fail(
                ("state", "collapse_level"),
                f"collapse_level ({collapse:g}) lies below min ({low:g})",
                "set it between min and today's state",
            )
        better = check.text(table, ("state", "better"), HIGHER)
        if better not in DIRECTIONS:
            check.fail(
                ("state", "better"),
                f"unknown direction '{shorten(better)}' for better",
                did_you_mean(shorten(better), DIRECTIONS),
            )
        self.declare(symbol, ("state", "symbol"), unit, positive=False)
        self.state_unit = unit
        return StateSpec(
            symbol, check.text(table, ("state", "name")), unit, low, high, current, collapse, better
        )

    def parameters(self, raw: Any, key_path: Path, base: bool) -> tuple[Parameter, ...]:
        check = self.check
        if not isinstance(raw, dict) or (base and not raw):
            check.fail(
                key_path,
                "expected one [parameters.NAME] table per parameter",
                "write [parameters.r] with value, unit and name lines",
            )
        result = []
        for name, table in raw.items():
            where = (*key_path, name)
            check.name(name, where, "a parameter")
            if not isinstance(table, dict):
                check.fail(
                    where,
                    f"parameter '{name}' must be a table",
                    f"write [{dotted(where)}] with value = ..., unit = ..., name = ...",
                )
            check.table(table, where, "parameter")
            value = check.number(table, (*where, "value"))
            unit = self.unit(table, (*where, "unit"))
            span = self.range(table, where)
            if span is not None and not span[0] <= value <= span[1]:
                check.warn(
                    (*where, "value"),
                    f"value {value:g} lies outside its range [{span[0]:g}, {span[1]:g}]",
                )
            positive = value > 0 and (span is None or span[0] > 0)
            self.declare(name, where, unit, positive)
            result.append(
                Parameter(
                    name,
                    value,
                    unit,
                    check.text(table, (*where, "name")),
                    span,
                    check.text(table, (*where, "note"), ""),
                )
            )
        return tuple(result)

    def range(self, table: dict[str, Any], where: Path) -> tuple[float, float] | None:
        if "range" not in table:
            return None
        raw = table["range"]
        key_path = (*where, "range")
        if not isinstance(raw, list) or len(raw) != 2:
            self.check.fail(
                key_path, "expected a range of two numbers, [low, high]", "write range = [0.2, 0.8]"
            )
        low = self.check.as_number(raw[0], key_path)
        high = self.check.as_number(raw[1], key_path)
        if low >= high:
            self.check.fail(
                key_path,
                f"the low end ({low:g}) must be below the high end ({high:g})",
                f"write range = [{min(low, high):g}, "
                f"{max(low, high) if low != high else high + 1:g}]",
            )
        return (low, high)

    def formula(
        self, table: dict[str, Any], key_path: Path, symbols: dict[str, sympy.Symbol]
    ) -> ParsedFormula:
        text = self.check.text(table, key_path)
        try:
            return parse_formula(text, symbols)
        except FormulaError as error:
            self.fail_in_formula(key_path, error, text)

    def fail_in_formula(self, key_path: Path, error: FormulaError, text: str) -> Any:
        """Fail at the place in the file where the formula's error stands.

        The formula's own line (it may span lines in a \"\"\" string) is searched
        for in the source; when escapes make it differ, the caret marks the value.
        """
        index = self.check.index
        line, value_column = index.find(key_path)
        if error.column is None or line is None or value_column is None:
            self.check.fail(key_path, error.message, error.hint)
        offset = min(error.column - 1, len(text))
        row = text.count("\n", 0, offset)
        start = text.rfind("\n", 0, offset) + 1
        wanted = text.split("\n")[row]
        for number in (line + row, line + row + 1):
            source = index.line_text(number)
            if source is None or not wanted.strip():
                continue
            found = source.find(wanted, value_column - 1 if number == line else 0)
            if found >= 0:
                column = found + offset - start + 1
                self.check.fail(
                    key_path, error.message, error.hint, column, error.width, line=number
                )
        self.check.fail(key_path, error.message, error.hint, value_column)

    def model(self, parameters: tuple[Parameter, ...]) -> ModelSpec:
        check = self.check
        table = check.table(self.data["model"], ("model",), "model")
        time_unit = self.unit(table, ("model", "time_unit"), "yr")
        rate = self.formula(table, ("model", "rate"), self.symbols)
        lever = None
        if "lever" in table:
            lever = check.text(table, ("model", "lever"))
            names = [p.name for p in parameters]
            if lever not in names:
                check.fail(
                    ("model", "lever"),
                    f"the lever '{lever}' is not a declared parameter",
                    did_you_mean(lever, names),
                )
        yield_ = self.formula(table, ("model", "yield"), self.symbols) if "yield" in table else None
        shock = check.fraction(table, ("model", "shock"), 0.5)
        self.check_units(rate, ("model", "rate"), time_unit)
        if yield_ is not None:
            self.check_units(yield_, ("model", "yield"), time_unit)
        return ModelSpec(rate, lever, yield_, time_unit, shock)

    def check_units(
        self,
        formula: ParsedFormula,
        key_path: Path,
        time_unit: str,
        extra: dict[str, str] | None = None,
    ) -> None:
        state_unit = self.state_unit
        known = dict(self.units, **(extra or {}))
        try:
            units.check_rate_units(formula, known, state_unit, time_unit)
        except FormulaError as error:
            self.fail_in_formula(key_path, error, formula.text)


def _with_warnings(scenario: Scenario, warnings: tuple[str, ...]) -> Scenario:
    from dataclasses import replace

    return replace(scenario, warnings=warnings)
