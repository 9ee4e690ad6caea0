"""The site's shared pages, made from scenario cards only: index, comparison, brief.

Cards are the JSON data of :func:`sitegen.pages.dossier.scenario_card`; a
failure is a scenario whose build stopped with an error message. Because these
pages need nothing but cards, a rebuild with unchanged scenarios renders them
from the cache without loading NumPy or SymPy.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from sitegen.pages import wording
from sitegen.pages.cautions import cautions_for
from sitegen.pages.markup import narrative_html
from sitegen.pages.render import PageShell, package_script, render, site_nav
from sitegen.pages.status_rules import STATUS_RULES
from sitegen.pages.tables import Cell, TableView, cell, row_heading, transpose_policies

Card = Mapping[str, Any]


@dataclass(frozen=True)
class Failure:
    """A scenario that could not be built: its file and the error as the user should read it."""

    path: str
    message: str


def _lever_text(card: Card) -> tuple[str, str, str]:
    """(today's lever, its limit, the margin) as text with units; dashes when absent."""
    unit = card["units"].get("lever", "")
    if card.get("lever") is None or card.get("lever_value") is None:
        return ("no lever", "–", "–")
    today = f"{card['lever']} = {wording.quantity(card['lever_value'], unit)}"
    if card.get("lever_limit") is None:
        return (today, "none found in the range", "–")
    mark = " †" if card.get("limit_basis") == "level" else ""
    margin = wording.quantity(card.get("margin"), unit)
    if card.get("margin_percent") is not None:
        margin += f" ({wording.number(card['margin_percent'])}%)"
    return (today, wording.quantity(card["lever_limit"], unit) + mark, margin)


def render_index(cards: Sequence[Card], failures: Sequence[Failure], version: str) -> str:
    rows = []
    for card in cards:
        today, limit, margin = _lever_text(card)
        rows.append({"card": card, "today": today, "limit": limit, "margin": margin})
    shell = PageShell("All scenarios", "index", version, site_nav("index.html"))
    return render(
        "index.html.j2",
        shell,
        rows=rows,
        failures=failures,
        rules=STATUS_RULES,
        cautions=cautions_for(()),
    )


def _policy_view(card: Card) -> TableView | None:
    rows = card.get("policies") or []
    if len(rows) < 2:
        return None
    units = card["units"]
    measures = [
        ("stable_state", "Stable state", units.get("state", "")),
        ("yield", "Yield", units.get("yield", "")),
        ("margin", "Margin to the limit", units.get("lever", "")),
        ("return_time", "Return time", units.get("time", "")),
        ("recovery_time", "Recovery after the shock", units.get("time", "")),
        ("collapse_time", "Time to collapse", units.get("time", "")),
    ]
    return transpose_policies(rows, measures, card.get("best") or {})


def _tag_view(tag: str, cards: Sequence[Card]) -> TableView:
    """Every policy of every scenario sharing ``tag``: one row each, sortable by column."""
    body = []
    for card in cards:
        units = card["units"]
        for row in card.get("policies") or []:
            body.append(
                (
                    row_heading(f"{card['title']}: {row['name']}"),
                    cell(row.get("stable_state"), unit=units.get("state", "")),
                    cell(row.get("yield"), unit=units.get("yield", "")),
                    cell(_percent_margin(row)),
                    cell(row.get("return_time"), unit=units.get("time", "")),
                    cell(row.get("collapse_time"), unit=units.get("time", "")),
                    Cell(card["status"]["word"]),
                )
            )
    headers = (
        "Scenario and policy",
        "Stable state",
        "Yield",
        "Margin to the limit (%)",
        "Return time",
        "Time to collapse",
        "Scenario status",
    )
    return TableView(f"Scenarios tagged “{tag}”", headers, tuple(body))


def _percent_margin(row: Mapping[str, Any]) -> float | None:
    limit = row.get("limit") or {}
    return limit.get("margin_percent")


def render_compare(cards: Sequence[Card], version: str) -> str:
    within = [(card, view) for card in cards if (view := _policy_view(card)) is not None]
    tags: dict[str, list[Card]] = {}
    for card in cards:
        for tag in card.get("tags") or ():
            if tag != "demo" and card.get("policies"):
                tags.setdefault(tag, []).append(card)
    shared = [(tag, _tag_view(tag, group)) for tag, group in sorted(tags.items()) if len(group) > 1]
    script = package_script("sort.js")
    shell = PageShell("Policies compared", "compare", version, site_nav("compare.html"), (script,))
    every_tag = sorted({t for card in cards for t in card.get("tags") or ()})
    return render(
        "compare.html.j2", shell, within=within, shared=shared, cautions=cautions_for(every_tag)
    )


def _trend(card: Card) -> list[str]:
    """Year-over-year lines from ``[[history]]``: each value's first and latest year."""
    history = card.get("history") or []
    if len(history) < 2:
        return []
    first, last = history[0], history[-1]
    lines = []
    for key in sorted(set(first["values"]) & set(last["values"])):
        a, b = first["values"][key], last["values"][key]
        units = card["units"]
        unit = units.get("lever", "") if key == card.get("lever") else ""
        if key == card.get("state_symbol"):
            unit = units.get("state", "")
        change = "unchanged" if a == b else ("up" if b > a else "down")
        lines.append(
            f"{key}: {wording.quantity(a, unit)} in {first['year']}, "
            f"{wording.quantity(b, unit)} in {last['year']} ({change})."
        )
    return lines


def render_brief(cards: Sequence[Card], narrative_markdown: str | None, version: str) -> str:
    year = max((int(c["year"]) for c in cards), default=None)
    current = [c for c in cards if c["year"] == year]
    entries = [
        {
            "card": c,
            "trend": _trend(c),
            "notes_html": narrative_html(c["notes"]) if c.get("notes") else None,
        }
        for c in current
    ]
    tags = sorted({t for c in current for t in c.get("tags") or ()})
    shell = PageShell(f"Annual brief {year}", "brief", version, site_nav("brief.html"))
    return render(
        "brief.html.j2",
        shell,
        year=year,
        entries=entries,
        older=[c for c in cards if c["year"] != year],
        narrative=narrative_html(narrative_markdown) if narrative_markdown else None,
        cautions=cautions_for(tags),
    )
