"""Stage 5 shared parts: one figure style, deterministic SVG, and the figure record.

Every figure module turns analysis records into a :class:`Figure`: SVG text that
is byte-identical for identical input (fixed hash salt, no date or creator
metadata), keeps its text as text, carries a ``<title>`` and ``<desc>`` saying in
words what it shows, prefixes every ``id`` with the figure's name so several
figures can be inlined in one page, and comes with its data as a table and as
CSV text.

Meaning is never carried by colour alone: :data:`STYLES` pairs each role with a
colour from a colour-blind-safe palette (Okabe and Ito 2008, from memory) *and*
a line style or marker shape.
"""

from __future__ import annotations

import csv
import io
import re
from collections.abc import Sequence
from dataclasses import dataclass
from xml.sax.saxutils import escape

import matplotlib
from matplotlib.figure import Figure as MplFigure

MAX_SVG_BYTES = 150_000
WIDTH_IN, HEIGHT_IN = 6.4, 3.6

# Okabe-Ito colours (colour-blind-safe); each role also has its own dash or marker.
PALETTE = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky": "#56B4E9",
    "green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "purple": "#CC79A7",
}


@dataclass(frozen=True)
class LineStyle:
    """How one role is drawn: colour, dash pattern, marker, and the word for the legend."""

    colour: str
    dash: str
    marker: str
    word: str


STYLES: dict[str, LineStyle] = {
    "stable": LineStyle(PALETTE["blue"], "-", "o", "stable"),
    "unstable": LineStyle(PALETTE["vermillion"], "--", "o", "unstable"),
    "semi-stable": LineStyle(PALETTE["purple"], ":", "o", "semi-stable"),
    "rate": LineStyle(PALETTE["black"], "-", "", "rate of change"),
    "today": LineStyle(PALETTE["green"], "-.", "D", "today"),
    "limit": LineStyle(PALETTE["orange"], (0, (5, 2, 1, 2)), "^", "limit"),  # type: ignore[arg-type]
    "policy": LineStyle(PALETTE["sky"], (0, (1, 1)), "s", "policy"),  # type: ignore[arg-type]
}
POLICY_MARKERS = ("s", "^", "v", "P", "X", "*", "h")
POLICY_DASHES: tuple[object, ...] = ("-", "--", "-.", ":", (0, (5, 1)), (0, (3, 1, 1, 1)))
POLICY_COLOURS = (
    PALETTE["blue"],
    PALETTE["orange"],
    PALETTE["green"],
    PALETTE["purple"],
    PALETTE["vermillion"],
    PALETTE["sky"],
    PALETTE["black"],
)

RC = {
    "svg.hashsalt": "sitegen",
    "svg.fonttype": "none",
    "font.family": "sans-serif",
    "font.sans-serif": ["DejaVu Sans", "Liberation Sans", "Arial", "Helvetica"],
    "font.size": 9.0,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": "#dddddd",
    "grid.linewidth": 0.6,
    "lines.linewidth": 1.8,
    "legend.frameon": False,
    "path.simplify": True,
}
_METADATA = {"Date": None, "Creator": None, "Format": None, "Type": None}


@dataclass(frozen=True)
class Table:
    """A figure's data: column headings (with units) and rows of values."""

    headers: tuple[str, ...]
    rows: tuple[tuple[object, ...], ...]

    def csv(self) -> str:
        """The table as CSV text (comma-separated, header first, ``\\n`` line ends)."""
        buffer = io.StringIO()
        writer = csv.writer(buffer, lineterminator="\n")
        writer.writerow(self.headers)
        writer.writerows(self.rows)
        return buffer.getvalue()


@dataclass(frozen=True)
class Figure:
    """One finished figure: its name, SVG text, words, and data."""

    name: str
    title: str
    description: str
    svg: str
    table: Table

    @property
    def csv(self) -> str:
        return self.table.csv()


def new_figure(height_in: float = HEIGHT_IN, ncols: int = 1) -> tuple[MplFigure, list]:
    """A Matplotlib figure in the shared style, with ``ncols`` axes side by side."""
    with matplotlib.rc_context(RC):
        # A bare Figure, not pyplot: no global figure registry, safe in worker processes.
        figure = MplFigure(figsize=(WIDTH_IN, height_in), dpi=100)
        axes = [figure.add_subplot(1, ncols, i + 1) for i in range(ncols)]
    return figure, axes


def finish(figure: MplFigure, name: str, title: str, description: str, table: Table) -> Figure:
    """Render to deterministic SVG with title, description and prefixed ids.

    ``name`` must be unique on a page (it prefixes every id, e.g.
    ``phase-line--equilibrium-1``). Raises ValueError if the SVG exceeds the
    size limit, so an oversized figure never reaches a page unnoticed.
    """
    if not re.match(r"^[a-z0-9][a-z0-9\-]*$", name):
        raise ValueError(f"figure name {name!r} must be lowercase letters, digits and '-'")
    buffer = io.StringIO()
    with matplotlib.rc_context(RC):
        figure.savefig(buffer, format="svg", metadata=_METADATA, bbox_inches="tight")
    svg = _clean(buffer.getvalue(), name, title, description)
    if len(svg.encode("utf-8")) > MAX_SVG_BYTES:
        raise ValueError(f"figure {name} is {len(svg):,} bytes, over {MAX_SVG_BYTES:,}")
    return Figure(name, title, description, svg, table)


def _clean(svg: str, name: str, title: str, description: str) -> str:
    """Strip the XML prolog and DOCTYPE, prefix ids, insert title and desc, add ARIA."""
    svg = re.sub(r"^<\?xml[^>]*\?>\s*", "", svg)
    svg = re.sub(r"^<!DOCTYPE[^>]*>\s*", "", svg, flags=re.S)
    svg = re.sub(r'\bid="([^"]+)"', lambda m: f'id="{name}--{m.group(1)}"', svg)
    svg = re.sub(r"url\(#([^)]+)\)", lambda m: f"url(#{name}--{m.group(1)})", svg)
    svg = re.sub(r'xlink:href="#([^"]+)"', lambda m: f'xlink:href="#{name}--{m.group(1)}"', svg)
    svg = re.sub(r'(?<![:\w])href="#([^"]+)"', lambda m: f'href="#{name}--{m.group(1)}"', svg)
    title_id, desc_id = f"{name}--title", f"{name}--desc"
    svg = re.sub(
        r"<svg\b",
        f'<svg role="img" aria-labelledby="{title_id} {desc_id}"',
        svg,
        count=1,
    )
    words = (
        f'<title id="{title_id}">{escape(title)}</title>'
        f'<desc id="{desc_id}">{escape(description)}</desc>'
    )
    return re.sub(r"(<svg\b[^>]*>)", lambda m: m.group(1) + words, svg, count=1)


def tag(artist: object, name: str) -> None:
    """Give a drawn element a group id (``gid``) that tests and pages can find."""
    artist.set_gid(name)  # type: ignore[attr-defined]


def with_unit(label: str, unit: str) -> str:
    """An axis label with its unit in brackets (dimensionless units are left out)."""
    return label if unit in ("", "1") else f"{label} [{unit}]"


def rounded(value: float, digits: int = 6) -> float:
    """A value rounded to ``digits`` significant figures for tables (not for plotting)."""
    if value == 0 or value != value:
        return value
    return float(f"{value:.{digits}g}")


def table_of(headers: Sequence[str], columns: Sequence[Sequence[object]]) -> Table:
    """A table from equal-length columns."""
    lengths = {len(c) for c in columns}
    if len(lengths) > 1:
        raise ValueError("table columns differ in length")
    return Table(tuple(headers), tuple(zip(*columns, strict=True)))
