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
from sitegen.scenario.checker import Checker, dotted
from sitegen.scenario.formula import ParsedFormula, parse_formula
from sitegen.scenario.locate import Path, SourceIndex
from sitegen.scenario.records import (
    Economics,
    HistoryEntry,
    MapSpec,
    ModelSpec,
    Parameter,
    Policy,
    ReferencePoints,
    Scenario,
    StateSpec,
    UncertainParameter,
    UncertaintySpec,
)
from sitegen.scenario.schema import DISTRIBUTION_NUMBERS, keys_of

MAX_FILE_BYTES = 1_000_000
SCENARIO_SUFFIX = ".toml"


def find_scenarios(paths: list[str]) -> list[FilePath]:
    """Scenario files named by ``paths`` (files, or folders searched for ``*.toml``).

    Raises :class:`ScenarioError` for a path that does not exist or a folder
    that holds no scenario.
    """
    found: list[FilePath] = []
    for text in paths:
        path = FilePath(text)
        if path.is_dir():
            files = sorted(p for p in path.glob("*" + SCENARIO_SUFFIX) if p.is_file())
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
    stem = slug if slug is not None else FilePath(path).stem
    return load_text(text, path, stem, hashlib.sha256(raw).hexdigest())


def _toml(text: str, path: str) -> dict[str, Any]:
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


class _Reader:
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
        self.declare(symbol, ("state", "symbol"), unit, positive=False)
        self.state_unit = unit
        return StateSpec(
            symbol, check.text(table, ("state", "name")), unit, low, high, current, collapse
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
            self.fail_in_formula(key_path, error)

    def fail_in_formula(self, key_path: Path, error: FormulaError) -> Any:
        line, value_column = self.check.index.find(key_path)
        column = None
        source = self.check.index.line_text(line)
        if error.column is not None and value_column is not None and source is not None:
            opening = source[value_column - 1 : value_column + 2]
            skip = 3 if opening in ('"""', "'''") else 1
            column = value_column + skip + error.column - 1
        self.check.fail(key_path, error.message, error.hint, column=column, width=error.width)

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
            self.fail_in_formula(key_path, error)

    def policies(self, parameters: tuple[Parameter, ...], model: ModelSpec) -> tuple[Policy, ...]:
        raw = self.data.get("policies", [])
        if not isinstance(raw, list):
            self.check.fail(
                ("policies",),
                "expected [[policies]] entries",
                'write [[policies]] then name = "..." for each policy',
            )
        base_names = [p.name for p in parameters]
        result = []
        seen: set[str] = set()
        for index, table in enumerate(raw):
            where: Path = ("policies", index)
            self.check.table(table, where, "policy")
            name = self.check.text(table, (*where, "name"))
            if name in seen:
                self.check.fail(
                    (*where, "name"),
                    f"two policies are called '{name}'",
                    "give each policy its own name",
                )
            seen.add(name)
            values = self.check.numbers_table(table, (*where, "values"))
            for key in values:
                if key not in base_names:
                    self.check.fail(
                        (*where, "values", key),
                        f"'{key}' is not a parameter",
                        did_you_mean(key, base_names),
                    )
            own = self.policy_parameters(table, where)
            # A policy's own parameters are visible to its formulas only.
            symbols = dict(self.symbols)
            own_units = {parameter.name: self.units.pop(parameter.name) for parameter in own}
            for parameter in own:
                del self.symbols[parameter.name]
            rate = yield_ = None
            if "rate" in table:
                rate = self._policy_formula(table, (*where, "rate"), symbols)
                self.check_units(rate, (*where, "rate"), model.time_unit, own_units)
            if "yield" in table:
                yield_ = self._policy_formula(table, (*where, "yield"), symbols)
                self.check_units(yield_, (*where, "yield"), model.time_unit, own_units)
            if own and rate is None and yield_ is None:
                self.check.fail(
                    (*where, "parameters"),
                    "extra parameters are declared but no rate or yield uses them",
                    'add a rate = "..." for this policy, or remove them',
                )
            result.append(Policy(name, values, rate, yield_, own, symbols))
        return tuple(result)

    def _policy_formula(
        self, table: dict[str, Any], key_path: Path, symbols: dict[str, sympy.Symbol]
    ) -> ParsedFormula:
        text = self.check.text(table, key_path)
        try:
            return parse_formula(text, symbols)
        except FormulaError as error:
            self.fail_in_formula(key_path, error)

    def policy_parameters(self, table: dict[str, Any], where: Path) -> tuple[Parameter, ...]:
        if "parameters" not in table:
            return ()
        return self.parameters(table["parameters"], (*where, "parameters"), base=False)

    def uncertainty(self, parameters: tuple[Parameter, ...]) -> UncertaintySpec | None:
        raw = self.data.get("uncertainty")
        if raw is None:
            return None
        check = self.check
        if not isinstance(raw, dict):
            check.fail(("uncertainty",), "expected an [uncertainty] table")
        names = {p.name: p for p in parameters}
        settings = keys_of("uncertainty")
        drawn = []
        for key, value in raw.items():
            if key in settings:
                continue
            where: Path = ("uncertainty", key)
            if not isinstance(value, dict):
                check.fail(
                    where, f"unknown key '{key}'", did_you_mean(key, list(settings) + list(names))
                )
            if key not in names:
                check.fail(where, f"'{key}' is not a parameter", did_you_mean(key, names))
            drawn.append(self.distribution(value, where, names[key]))
        samples = check.integer(raw, ("uncertainty", "samples"), 10_000)
        if not 100 <= samples <= 1_000_000:
            check.fail(
                ("uncertainty", "samples"),
                f"samples must be between 100 and 1,000,000, not {samples:,}",
                "10000 is the usual choice",
            )
        seed = check.integer(raw, ("uncertainty", "seed"), 0)
        tolerance = check.fraction(raw, ("uncertainty", "tolerance"), 0.05)
        if not drawn:
            check.fail(
                ("uncertainty",),
                "no parameter has a distribution",
                'add e.g. [uncertainty.r] with distribution = "normal" and sd = 0.05',
            )
        return UncertaintySpec(samples, seed, tolerance, tuple(drawn))

    def distribution(
        self, table: dict[str, Any], where: Path, parameter: Parameter
    ) -> UncertainParameter:
        check = self.check
        check.table(table, where, "distribution")
        kind = check.text(table, (*where, "distribution"))
        if kind not in DISTRIBUTION_NUMBERS:
            check.fail(
                (*where, "distribution"),
                f"unknown distribution '{kind}'",
                did_you_mean(kind, DISTRIBUTION_NUMBERS),
            )
        required, defaulted = DISTRIBUTION_NUMBERS[kind]
        allowed = set(required) | set(defaulted) | {"distribution"}
        for key in table:
            if key not in allowed:
                check.fail(
                    (*where, key),
                    f"'{key}' does not belong to a {kind} distribution",
                    f"a {kind} distribution takes: "
                    + ", ".join(sorted(allowed - {"distribution"})),
                )
        numbers: dict[str, float] = {}
        for key in required:
            if key not in table:
                check.fail(where, f"a {kind} distribution needs '{key}'", f"add {key} = ...")
            numbers[key] = check.number(table, (*where, key))
        for key in defaulted:
            numbers[key] = check.number(table, (*where, key), parameter.value)
        spread = numbers.get("sd", numbers.get("sdlog"))
        if spread is not None and spread <= 0:
            check.fail(where, "the spread (sd or sdlog) must be above zero")
        if "low" in numbers and numbers["low"] >= numbers["high"]:
            check.fail((*where, "low"), "low must be below high")
        if "mode" in numbers and not numbers["low"] <= numbers["mode"] <= numbers["high"]:
            check.fail((*where, "mode"), "mode must lie between low and high")
        if kind == "lognormal" and numbers["median"] <= 0:
            check.fail((*where, "median"), "a lognormal median must be above zero")
        return UncertainParameter(parameter.name, kind, numbers)

    def history(
        self, parameters: tuple[Parameter, ...], state: StateSpec
    ) -> tuple[HistoryEntry, ...]:
        raw = self.data.get("history", [])
        if not isinstance(raw, list):
            self.check.fail(("history",), "expected [[history]] entries")
        allowed = [p.name for p in parameters] + [state.symbol]
        years: set[int] = set()
        result = []
        for index, table in enumerate(raw):
            where: Path = ("history", index)
            self.check.table(table, where, "history")
            year = self.check.integer(table, (*where, "year"))
            if year in years:
                self.check.fail(
                    (*where, "year"),
                    f"the year {year} appears twice",
                    "give each year one [[history]] entry",
                )
            years.add(year)
            values = self.check.numbers_table(table, (*where, "values"))
            for key in values:
                if key not in allowed:
                    self.check.fail(
                        (*where, "values", key),
                        f"'{key}' is not a parameter or the state",
                        did_you_mean(key, allowed),
                    )
            result.append(HistoryEntry(year, values))
        return tuple(sorted(result, key=lambda entry: entry.year))

    def reference(self, state: StateSpec) -> ReferencePoints:
        raw = self.data.get("reference")
        if raw is None:
            return ReferencePoints()
        table = self.check.table(raw, ("reference",), "reference")
        numbers = {
            key: self.check.optional_number(table, ("reference", key))
            for key in ("limit", "target", "trigger")
        }
        return ReferencePoints(**numbers)

    def economics(self, model: ModelSpec) -> Economics | None:
        raw = self.data.get("economics")
        if raw is None:
            return None
        table = self.check.table(raw, ("economics",), "economics")
        if model.yield_ is None or model.lever is None:
            self.check.fail(
                ("economics",),
                "economics needs a lever and a yield in [model]",
                'add lever = "..." and yield = "..." under [model]',
            )
        price = self.check.number(table, ("economics", "price"))
        cost = self.check.number(table, ("economics", "cost"))
        if price <= 0 or cost < 0:
            self.check.fail(("economics",), "price must be above zero and cost zero or more")
        return Economics(price, cost, self.check.text(table, ("economics", "currency"), ""))

    def maps(self, parameters: tuple[Parameter, ...]) -> tuple[MapSpec, ...]:
        raw = self.data.get("maps", [])
        if not isinstance(raw, list):
            self.check.fail(("maps",), "expected [[maps]] entries")
        ranged = [p.name for p in parameters if p.range is not None]
        result = []
        for index, table in enumerate(raw):
            where: Path = ("maps", index)
            self.check.table(table, where, "maps")
            pair = []
            for axis in ("x", "y"):
                name = self.check.text(table, (*where, axis))
                if name not in ranged:
                    self.check.fail(
                        (*where, axis),
                        f"'{name}' is not a parameter with a range",
                        did_you_mean(name, ranged),
                    )
                pair.append(name)
            if pair[0] == pair[1]:
                self.check.fail((*where, "y"), "x and y must be different parameters")
            result.append(MapSpec(pair[0], pair[1]))
        return tuple(result)


def _with_warnings(scenario: Scenario, warnings: tuple[str, ...]) -> Scenario:
    from dataclasses import replace

    return replace(scenario, warnings=warnings)
