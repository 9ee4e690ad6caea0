"""Where each key of a TOML file stands, so errors can name the line.

``tomllib`` gives values but no positions. :class:`SourceIndex` reads the raw
lines once and records, for every table header and ``key = value`` line, the
dotted path (array-of-table entries by index) and the 1-based line and column
where the value starts.
"""

from __future__ import annotations

import re

# Possessive and greedy so that matching takes linear time on long lines.
_HEADER = re.compile(r"^\s*(\[\[?)\s*+([^\[\]]*[^\[\]\s])\s*\]\]?\s*(#.*)?$")
_KEY = re.compile(
    r"^\s*((?:[A-Za-z0-9_\-]+|\"[^\"]*\"|'[^']*')(?:\s*\.\s*(?:[A-Za-z0-9_\-]+|\"[^\"]*\"|'[^']*'))*)\s*=\s*"
)

Path = tuple[str | int, ...]


def _split_dotted(text: str) -> list[str]:
    parts = re.findall(r"\"[^\"]*\"|'[^']*'|[^.\s]+", text)
    return [part.strip("\"'") for part in parts]


class SourceIndex:
    """Line and column of every key path in a TOML text (best effort)."""

    def __init__(self, text: str) -> None:
        self.lines = text.splitlines()
        self.positions: dict[Path, tuple[int, int]] = {}
        arrays: dict[tuple[str, ...], int] = {}
        current: Path = ()
        in_multiline = False
        for number, line in enumerate(self.lines, start=1):
            quotes = line.count('"""') + line.count("'''")
            if in_multiline:
                if quotes % 2 == 1:
                    in_multiline = False
                continue
            header = _HEADER.match(line)
            if header and not line.lstrip().startswith("#"):
                names = tuple(_split_dotted(header.group(2)))
                if header.group(1) == "[[":
                    arrays[names] = arrays.get(names, -1) + 1
                    current = (*self._resolve(names[:-1], arrays), names[-1], arrays[names])
                else:
                    current = self._resolve(names, arrays)
                for size in range(1, len(current) + 1):  # [a.b] also places a
                    self.positions.setdefault(current[:size], (number, line.index("[") + 1))
                continue
            key = _KEY.match(line)
            if key and not line.lstrip().startswith("#"):
                path = current + tuple(_split_dotted(key.group(1)))
                self.positions.setdefault(path, (number, key.end() + 1))
                self._inline_keys(path, line, key.end(), number)
                if quotes % 2 == 1:
                    in_multiline = True

    @staticmethod
    def _resolve(names: tuple[str, ...], arrays: dict[tuple[str, ...], int]) -> Path:
        """Insert the current index after every prefix that names an array of tables."""
        resolved: list[str | int] = []
        for size in range(1, len(names) + 1):
            resolved.append(names[size - 1])
            if names[:size] in arrays:
                resolved.append(arrays[names[:size]])
        return tuple(resolved)

    def _inline_keys(self, path: Path, line: str, start: int, number: int) -> None:
        """Positions of keys inside an inline table such as ``values = {H = 100}``."""
        rest = line[start:]
        if not rest.lstrip().startswith("{"):
            return
        # The look-behind starts a match only at the start of a word (linear time).
        for match in re.finditer(r"(?<![A-Za-z0-9_\-])([A-Za-z_][A-Za-z0-9_\-]*)\s*=", rest):
            self.positions.setdefault((*path, match.group(1)), (number, start + match.start() + 1))

    def find(self, path: Path) -> tuple[int | None, int | None]:
        """(line, column) of ``path`` or of its nearest recorded ancestor."""
        probe = tuple(path)
        while probe:
            if probe in self.positions:
                return self.positions[probe]
            probe = probe[:-1]
        return None, None

    def line_text(self, number: int | None) -> str | None:
        """The source line ``number`` (1-based), or None."""
        if number is None or not 1 <= number <= len(self.lines):
            return None
        return self.lines[number - 1]
