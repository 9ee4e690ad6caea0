"""Typed reading of one TOML table against its schema, failing with a location.

A :class:`Checker` wraps the raw text's :class:`SourceIndex`; every problem is
raised through :meth:`Checker.fail`, which attaches path, line, column, key and
the source line, so no error leaves the loader without its place in the file.
"""

from __future__ import annotations

import keyword
import math
import re
from collections.abc import Mapping
from typing import Any, NoReturn

from sitegen.errors import ScenarioError, did_you_mean
from sitegen.scenario.locate import Path, SourceIndex
from sitegen.scenario.schema import RESERVED_NAMES, keys_of

NAME_PATTERN = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")


def dotted(path: Path) -> str:
    """``("policies", 0, "rate")`` -> ``policies[1].rate`` (1-based for people)."""
    text = ""
    for part in path:
        if isinstance(part, int):
            text += f"[{part + 1}]"
        else:
            text += ("." if text else "") + shorten(part)
    return text


def shorten(name: str, most: int = 40) -> str:
    """``name`` cut to ``most`` characters (with '...'), for messages."""
    return name if len(name) <= most else name[:most] + "..."


class Checker:
    """Reads values out of parsed TOML with types checked and errors located."""

    def __init__(self, path: str, index: SourceIndex) -> None:
        self.path = path
        self.index = index
        self.warnings: list[str] = []

    def fail(
        self,
        key_path: Path,
        message: str,
        hint: str | None = None,
        column: int | None = None,
        width: int = 1,
        line: int | None = None,
    ) -> NoReturn:
        found_line, found_column = self.index.find(key_path)
        if line is None:
            line = found_line
        raise ScenarioError(
            message,
            path=self.path,
            line=line,
            column=column if column is not None else found_column,
            key=dotted(key_path) or None,
            hint=hint,
            source_line=self.index.line_text(line),
            width=width,
        )

    def warn(self, key_path: Path, message: str) -> None:
        line, _ = self.index.find(key_path)
        where = f"{self.path}:{line}" if line else self.path
        self.warnings.append(f"{where}: {dotted(key_path)}: {message}")

    def table(self, value: Any, key_path: Path, section: str) -> dict[str, Any]:
        """Check ``value`` is a table whose keys all belong to ``section``."""
        if not isinstance(value, dict):
            header = f"[{dotted(key_path)}]"
            if key_path and isinstance(key_path[-1], int):  # an entry of [[name]]
                header = f"[[{dotted(key_path[:-1])}]]"
            self.fail(
                key_path,
                f"expected a table ({header}), found {describe(value)}",
                f"write it as a {header} section with key = value lines",
            )
        allowed = keys_of(section)
        for name in value:
            if name not in allowed:
                self.fail(
                    (*key_path, name),
                    f"unknown key '{shorten(name)}'",
                    did_you_mean(shorten(name), allowed),
                )
        for key in allowed.values():
            if key.required and key.name not in value:
                self.fail(
                    key_path,
                    f"missing required key '{key.name}' ({key.description.rstrip('.')})",
                    f"add a [{dotted((*key_path, key.name))}] section"
                    if key.kind in ("table", "array of tables")
                    else f"add a line: {key.name} = ...",
                )
        return value

    def text(self, table: Mapping[str, Any], key_path: Path, default: str | None = None) -> str:
        value = table.get(key_path[-1], default)
        if not isinstance(value, str):
            self.fail(
                key_path,
                f"expected text in quotes, found {describe(value)}",
                f'write {key_path[-1]} = "..."',
            )
        return value

    def texts(self, table: Mapping[str, Any], key_path: Path) -> tuple[str, ...]:
        value = table.get(key_path[-1], [])
        if isinstance(value, str):
            value = [value]
        if not isinstance(value, list) or not all(isinstance(item, str) for item in value):
            self.fail(
                key_path,
                f"expected a list of texts, found {describe(value)}",
                f'write {key_path[-1]} = ["...", "..."]',
            )
        return tuple(value)

    def integer(self, table: Mapping[str, Any], key_path: Path, default: int | None = None) -> int:
        value = table.get(key_path[-1], default)
        if isinstance(value, bool) or not isinstance(value, int):
            self.fail(
                key_path,
                f"expected a whole number, found {describe(value)}",
                f"write {key_path[-1]} = 2024 (no quotes, no decimals)",
            )
        return value

    def number(
        self, table: Mapping[str, Any], key_path: Path, default: float | None = None
    ) -> float:
        value = table.get(key_path[-1], default)
        return self.as_number(value, key_path)

    def as_number(self, value: Any, key_path: Path) -> float:
        if isinstance(value, bool) or not isinstance(value, int | float):
            self.fail(
                key_path,
                f"expected a number, found {describe(value)}",
                f"write {key_path[-1]} = 0.5 (no quotes)",
            )
        try:
            number = float(value)
        except OverflowError:  # an integer beyond the range of floating point
            self.fail(
                key_path,
                f"the number {str(value)[:20]}... is too large",
                "numbers must lie between -1.7e308 and 1.7e308",
            )
        if not math.isfinite(number):
            self.fail(
                key_path,
                f"expected a finite number, found {value}",
                "inf and nan cannot be analysed",
            )
        return number

    def optional_number(self, table: Mapping[str, Any], key_path: Path) -> float | None:
        if key_path[-1] not in table:
            return None
        return self.number(table, key_path)

    def fraction(self, table: Mapping[str, Any], key_path: Path, default: float) -> float:
        value = self.number(table, key_path, default)
        if not 0 < value < 1:
            self.fail(
                key_path,
                f"expected a fraction between 0 and 1, found {value:g}",
                f"write {key_path[-1]} = 0.05 for five percent",
            )
        return value

    def numbers_table(self, table: Mapping[str, Any], key_path: Path) -> dict[str, float]:
        value = table.get(key_path[-1], {})
        if not isinstance(value, dict):
            self.fail(
                key_path,
                f"expected a table of numbers, found {describe(value)}",
                f"write {key_path[-1]} = {{ H = 100, E = 2 }}",
            )
        return {name: self.as_number(item, (*key_path, name)) for name, item in value.items()}

    def name(self, value: Any, key_path: Path, what: str) -> str:
        """Check a name usable in formulas: ASCII identifier, not reserved."""
        if not isinstance(value, str):
            self.fail(key_path, f"expected a name in quotes, found {describe(value)}")
        if not NAME_PATTERN.match(value):
            self.fail(
                key_path,
                f"'{value}' cannot be used as the name of {what}",
                "names start with an ASCII letter and contain only letters, digits and _",
            )
        if keyword.iskeyword(value) or value in ("None", "True", "False"):
            self.fail(
                key_path,
                f"'{value}' is a reserved word and cannot name {what}",
                f"choose another name, such as {value}_ or {value[0].upper()}",
            )
        if value in RESERVED_NAMES:
            self.fail(
                key_path,
                f"'{value}' is reserved in formulas and cannot name {what}",
                "reserved: " + ", ".join(sorted(RESERVED_NAMES)),
            )
        if value.startswith("_"):
            self.fail(key_path, f"'{value}' cannot start with an underscore")
        return value


def describe(value: Any) -> str:
    """A short description of a TOML value's type, for messages."""
    if value is None:
        return "nothing"
    if isinstance(value, bool):
        return f"true/false ({str(value).lower()})"
    if isinstance(value, str):
        return f'text "{value[:30]}"'
    if isinstance(value, int | float):
        return f"the number {value}"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "a table"
    return type(value).__name__
