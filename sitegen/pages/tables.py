"""Tables for pages: rows of already-formatted cells, built from the summary data.

A :class:`TableView` is what the templates draw: a caption, column headings,
rows of :class:`Cell` (text, whether it is a number, whether it is the best on
its row), and optional notes. Numbers are formatted with
:mod:`sitegen.pages.wording` (3 significant figures in prose tables, 4 in figure
data tables, where readers read values off).
"""

from __future__ import annotations

import urllib.parse
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from sitegen.pages import wording

if TYPE_CHECKING:  # the site pages use these tables without loading Matplotlib
    from sitegen.figures.common import Figure


@dataclass(frozen=True)
class Cell:
    text: str
    numeric: bool = False
    best: bool = False
    header: bool = False  # a row heading (<th scope="row">)


@dataclass(frozen=True)
class TableView:
    caption: str
    headers: tuple[str, ...]
    rows: tuple[tuple[Cell, ...], ...]
    notes: tuple[str, ...] = ()


def cell(value: Any, sig: int = 3, unit: str = "") -> Cell:
    """A cell for a value: numbers formatted (with the unit when given), text as it is."""
    if value is None:
        return Cell("–")
    if isinstance(value, bool):
        return Cell("yes" if value else "no")
    if isinstance(value, (int, float)):
        text = wording.quantity(value, unit, sig) if unit else wording.number(value, sig)
        return Cell(text, numeric=True)
    return Cell(str(value))


def row_heading(text: str) -> Cell:
    return Cell(text, header=True)


def figure_table(figure: Figure) -> TableView:
    """The data table of a figure, 4 significant figures a value."""
    rows = tuple(tuple(cell(value, sig=4) for value in row) for row in figure.table.rows)
    return TableView(f"Data of the figure: {figure.title}", tuple(figure.table.headers), rows)


def csv_data_url(text: str) -> str:
    """A ``data:`` URL carrying CSV text, for a download link that needs no server."""
    return "data:text/csv;charset=utf-8," + urllib.parse.quote(text, safe=",._-:/ ")


def transpose_policies(
    rows: Sequence[Mapping[str, Any]],
    measures: Iterable[tuple[str, str, str]],
    best: Mapping[str, str | None],
) -> TableView:
    """Policies side by side: one column per policy, one row per measure.

    ``measures`` gives (key in a policy row, label, unit); ``best`` maps a key
    to the name of the best policy on that row (None when no policy is best).
    """
    names = tuple(str(r["name"]) for r in rows)
    body = []
    for key, label, unit in measures:
        values = [r.get(key) for r in rows]
        if all(v is None for v in values):
            continue
        winner = best.get(key)
        texts = [cell(value, unit=unit) for value in values]
        # Ties as printed are all best: marking one of two equal cells would mislead.
        top = next((c.text for n, c in zip(names, texts, strict=True) if n == winner), None)
        cells = [row_heading(label)]
        for c, value in zip(texts, values, strict=True):
            is_best = top is not None and value is not None and c.text == top
            cells.append(Cell(c.text, numeric=c.numeric, best=is_best))
        body.append(tuple(cells))
    return TableView(
        "Policies side by side (★ best marks the best value on each row; ties share it)",
        ("Measure", *names),
        tuple(body),
    )
