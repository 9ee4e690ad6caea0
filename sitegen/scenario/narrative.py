"""The annual brief's front text: an optional Markdown file beside the scenarios.

Read here because stage 1 is the only stage that reads the user's files. The
text is returned as it is; the pages stage sanitises it when it converts it.
"""

from __future__ import annotations

from pathlib import Path

from sitegen.errors import ScenarioError

NARRATIVE_NAME = "brief.md"
MAX_NARRATIVE_BYTES = 200_000


def read_narrative(folder: Path) -> str | None:
    """``folder/brief.md`` as text, or None when there is none."""
    path = folder / NARRATIVE_NAME
    if not path.is_file():
        return None
    raw = path.read_bytes()
    if len(raw) > MAX_NARRATIVE_BYTES:
        raise ScenarioError(
            f"the brief's front text is {len(raw):,} bytes; at most {MAX_NARRATIVE_BYTES:,} "
            "are read",
            path=str(path),
            hint="shorten it, or link to a longer document",
        )
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as error:
        line = raw[: error.start].count(b"\n") + 1
        raise ScenarioError(
            "the file is not UTF-8 text",
            path=str(path),
            line=line,
            hint="save it as UTF-8 (most editors offer this under 'Save as')",
        ) from None
