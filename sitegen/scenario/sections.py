"""The optional sections of a scenario: policies, uncertainty, history and the rest.

:class:`OptionalSections` is mixed into the loader's reader; it reads each
optional top-level section into its record, failing through the same
:class:`~sitegen.scenario.checker.Checker` so every error keeps its place in the
file.
"""

from __future__ import annotations

from typing import Any

import sympy

from sitegen.errors import did_you_mean
from sitegen.scenario.checker import Checker
from sitegen.scenario.formula import ParsedFormula
from sitegen.scenario.locate import Path
from sitegen.scenario.records import (
    Economics,
    HistoryEntry,
    MapSpec,
    ModelSpec,
    Parameter,
    Policy,
    ReferencePoints,
    StateSpec,
    UncertainParameter,
    UncertaintySpec,
)
from sitegen.scenario.schema import DISTRIBUTION_NUMBERS, keys_of


class OptionalSections:
    """Readers for the sections after [model]; needs the attributes set by the loader."""

    check: Checker
    data: dict[str, Any]
    symbols: dict[str, sympy.Symbol]
    units: dict[str, str]

    def parameters(self, raw: Any, key_path: Path, base: bool) -> tuple[Parameter, ...]:
        raise NotImplementedError

    def formula(
        self, table: dict[str, Any], key_path: Path, symbols: dict[str, sympy.Symbol]
    ) -> ParsedFormula:
        raise NotImplementedError

    def check_units(
        self,
        formula: ParsedFormula,
        key_path: Path,
        time_unit: str,
        extra: dict[str, str] | None = None,
    ) -> None:
        raise NotImplementedError

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
                rate = self.formula(table, (*where, "rate"), symbols)
                self.check_units(rate, (*where, "rate"), model.time_unit, own_units)
            if "yield" in table:
                yield_ = self.formula(table, (*where, "yield"), symbols)
                self.check_units(yield_, (*where, "yield"), model.time_unit, own_units)
            if own and rate is None and yield_ is None:
                self.check.fail(
                    (*where, "parameters"),
                    "extra parameters are declared but no rate or yield uses them",
                    'add a rate = "..." for this policy, or remove them',
                )
            result.append(Policy(name, values, rate, yield_, own, symbols))
        return tuple(result)

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
            if not isinstance(value, dict) and key in names:
                check.fail(
                    where,
                    f"'{key}' needs a table of its own, [uncertainty.{key}]",
                    f'write [uncertainty.{key}] with distribution = "normal" and sd = ...',
                )
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
