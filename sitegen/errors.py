"""The one error type users see, carrying where in their file the problem is.

Every problem with a scenario (TOML syntax, a missing key, an unsafe formula, a
unit mismatch) is raised as a :class:`ScenarioError`. It knows the file, the line
and column, the dotted key, a message and a hint that states the fix, and it
renders itself as ``path:line: key: message`` followed by the offending source
line with a caret under the column, then the hint.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable
from dataclasses import dataclass


@dataclass
class ScenarioError(ValueError):
    """A problem in a scenario file, located as precisely as we know.

    ``line`` and ``column`` are 1-based; ``column`` points into ``source_line``.
    ``width`` is how many characters the caret underlines (at least one).
    """

    message: str
    path: str = "<scenario>"
    line: int | None = None
    column: int | None = None
    key: str | None = None
    hint: str | None = None
    source_line: str | None = None
    width: int = 1

    def __post_init__(self) -> None:
        super().__init__(self.message)

    def __str__(self) -> str:
        return self.render()

    def __hash__(self) -> int:
        return id(self)

    def location(self) -> str:
        """``path:line`` (or just ``path`` when the line is unknown)."""
        return f"{self.path}:{self.line}" if self.line else self.path

    def render(self) -> str:
        """The full message: location, key, message, source line with caret, hint."""
        head = self.location() + ": "
        if self.key:
            head += f"{self.key}: "
        lines = [head + self.message]
        if self.source_line is not None:
            shown, column = _excerpt(self.source_line.rstrip("\n"), self.column)
            lines.append("    " + shown)
            if column is not None and column >= 1:
                # Tabs stay tabs so that the caret lines up under the column.
                pad = "".join(c if c == "\t" else " " for c in shown[: column - 1])
                width = min(max(1, self.width), max(1, len(shown) - column + 1))
                lines.append("    " + pad + "^" * width)
        if self.hint:
            lines.append("  hint: " + self.hint)
        return "\n".join(lines)

    def one_line(self) -> str:
        """``path:line: key: message`` without the source excerpt or hint."""
        head = self.location() + ": "
        if self.key:
            head += f"{self.key}: "
        return head + self.message


EXCERPT_WIDTH = 120


def _excerpt(line: str, column: int | None) -> tuple[str, int | None]:
    """At most about EXCERPT_WIDTH characters of ``line`` around ``column``.

    Returns the text to show and the column within it. A cut is marked '...'.
    """
    if len(line) <= EXCERPT_WIDTH:
        return line, column
    centre = (column or 1) - 1
    start = max(0, min(centre - EXCERPT_WIDTH // 2, len(line) - EXCERPT_WIDTH))
    shown = line[start : start + EXCERPT_WIDTH]
    prefix = "..." if start > 0 else ""
    suffix = "..." if start + EXCERPT_WIDTH < len(line) else ""
    if column is not None:
        column = column - start + len(prefix)
    return prefix + shown + suffix, column


@dataclass
class FormulaError(ValueError):
    """A problem inside one formula string, before we know which file it came from.

    ``column`` is 1-based within the formula text. The loader turns it into a
    :class:`ScenarioError` with the file position added.
    """

    message: str
    column: int | None = None
    width: int = 1
    hint: str | None = None

    def __post_init__(self) -> None:
        super().__init__(self.message)

    def __hash__(self) -> int:
        return id(self)


def closest(name: str, candidates: Iterable[str]) -> str | None:
    """The candidate most like ``name`` (case-insensitive), or None if none is close."""
    pool = sorted(set(candidates))
    lowered = {c.lower(): c for c in pool}
    match = difflib.get_close_matches(name.lower(), list(lowered), n=1, cutoff=0.6)
    if match:
        return lowered[match[0]]
    return None


def did_you_mean(name: str, candidates: Iterable[str]) -> str:
    """A hint sentence: 'did you mean X?' when one is close, then the allowed list."""
    pool = sorted(set(candidates))
    best = closest(name, pool)
    allowed = ", ".join(pool) if pool else "(none)"
    if best:
        return f"did you mean '{best}'? Allowed here: {allowed}."
    return f"allowed here: {allowed}."
