"""The dossier's "fit to monitoring data" section and the brief's lines about it.

Input is :func:`sitegen.fitting.summary.fit_summary` (plain JSON data): the
estimates with Jacobian and bootstrap 95% intervals, the figures derived from
them (lever limit, MSY, B_MSY, today's margin), diagnostics, and the previous
year's fit when the companion file holds one. Output is JSON data too (lines
of text and table views as dicts), so the card that carries it into the
brief can be cached.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import asdict
from typing import Any

from sitegen.pages import wording
from sitegen.pages.tables import Cell, TableView, cell, row_heading


def _span(interval: Any, unit: str) -> str:
    if not interval or interval[0] is None or interval[1] is None:
        return "–"
    return f"{wording.number(interval[0])} to {wording.quantity(interval[1], unit)}"


def _estimate_table(fit: Mapping[str, Any]) -> TableView:
    rows = []
    for name, e in sorted(fit["estimates"].items()):
        unit = e.get("unit") or ""
        rows.append(
            (
                row_heading(name),
                Cell(e.get("label") or "–"),
                cell(e.get("value"), unit=unit),
                cell(e.get("standard_error"), unit=unit),
                Cell(_span(e.get("interval_jacobian"), unit)),
                Cell(_span(e.get("interval_bootstrap"), unit)),
                Cell("yes" if e.get("at_bound") else "no"),
                cell(e.get("previous"), unit=unit),
            )
        )
    headers = (
        "Parameter",
        "Meaning",
        "Estimate",
        "Standard error",
        "95% interval (Jacobian)",
        "95% interval (bootstrap)",
        "At the edge of its range",
        "Last year's fit",
    )
    return TableView("Estimates", headers, tuple(rows))


def _derived_table(fit: Mapping[str, Any]) -> TableView:
    rows = []
    for _name, item in sorted(fit["derived"].items()):
        unit = item.get("unit") or ""
        rows.append(
            (
                row_heading(str(item.get("label") or _name)),
                cell(item.get("value"), unit=unit),
                Cell(_span(item.get("interval_bootstrap"), unit)),
                cell(item.get("previous"), unit=unit),
            )
        )
    headers = ("Figure", "From the fit", "95% interval (bootstrap)", "Last year's fit")
    return TableView("What the fitted model implies", headers, tuple(rows))


def _lines(fit: Mapping[str, Any]) -> list[str]:
    diagnostics = fit.get("diagnostics") or {}
    data = fit.get("data") or {}
    lines = [
        f"The model was {fit.get('provenance', 'fitted to the monitoring data')}: "
        f"{wording.number(diagnostics.get('observations'), 6)} index observations, "
        f"residual standard deviation {wording.number(diagnostics.get('residual_sd'))} on the "
        "log scale."
    ]
    if not diagnostics.get("converged", True):
        lines.append(f"The fit did not converge ({diagnostics.get('message')}); treat it as "
                     "unreliable.")  # fmt: skip
    if diagnostics.get("lacks_contrast"):
        lines.append(
            "The data lack contrast (the index moves one way only), so growth and size "
            "cannot be told apart: the estimates below are poorly determined."
        )
    poorly = diagnostics.get("poorly_determined") or []
    correlation = diagnostics.get("correlation") or {}
    if poorly:
        pairs = [
            f"{pair} {wording.number(value, 2)}"
            for pair, value in sorted(correlation.items())
            if abs(value) >= 0.8
        ]
        joined = ", ".join(pairs) if pairs else "high"
        lines.append(
            f"Poorly determined: {', '.join(poorly)} (their estimates are strongly correlated: "
            f"{joined}); the intervals below are wide for that reason."
        )
    replicates = diagnostics.get("replicates")
    if replicates:
        lines.append(
            f"Intervals: from the Jacobian at the best fit and from "
            f"{wording.number(replicates, 6)} bootstrap refits of resampled residuals "
            f"(seed {diagnostics.get('seed')}); years {data.get('first_year')} to "
            f"{data.get('last_year')}."
        )
    lines.extend(str(note) for note in fit.get("notes") or ())
    return lines


def _brief_lines(fit: Mapping[str, Any]) -> list[str]:
    """How the estimates and the limits moved since last year's fit (or that this is the first)."""
    changes = fit.get("changes") or {}
    if not changes:
        return [
            f"First fit to the monitoring data ({fit.get('provenance', '')}); there is no "
            "earlier fit to compare with."
        ]
    lines = []
    labels = {**fit.get("estimates", {}), **fit.get("derived", {})}
    # The limits first (what the board decides on), then the estimates behind them.
    order = ["lever_limit", "margin", "msy", "b_msy", "state", *sorted(fit.get("estimates", {}))]
    ranked = sorted(changes.items(), key=lambda kv: (order.index(kv[0]) if kv[0] in order
                                                     else len(order), kv[0]))  # fmt: skip
    for name, change in ranked:
        item = labels.get(name, {})
        unit = item.get("unit") or ""
        label = item.get("label") or name
        percent = change.get("percent")
        moved = f" ({'+' if (percent or 0) >= 0 else ''}{wording.number(percent)}%)" if (
            percent is not None
        ) else ""  # fmt: skip
        lines.append(
            f"{label}: {wording.quantity(change.get('previous'), unit)} in last year's fit, "
            f"{wording.quantity(change.get('now'), unit)} now{moved}."
        )
    return lines


def fit_view(fit: Mapping[str, Any]) -> dict[str, Any]:
    """The section as JSON data: ``lines``, ``tables`` and ``brief_lines``."""
    tables = [_estimate_table(fit), _derived_table(fit)]
    return {
        "lines": _lines(fit),
        "tables": [asdict(t) for t in tables],
        "brief_lines": _brief_lines(fit),
    }
