"""One scenario's dossier page, and the card the index, comparison and brief are made from.

:func:`render_dossier` turns a :class:`DossierInput` (records of the earlier
stages) into one self-contained HTML page. :func:`scenario_card` condenses the
same inputs into plain JSON-safe data, so the site pages can be rebuilt from a
cache without recomputing anything.

Section order (issue 6): headline; the model; equilibria and stability; the
figures (and the live explorer); limits and margins; dynamics; policies; fit to
data; uncertainty and sensitivity; economics; assumptions; cautions; method.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from markupsafe import Markup

from sitegen.figures.common import Figure
from sitegen.pages import dossier_parts as parts
from sitegen.pages import sentences as words
from sitegen.pages import wording
from sitegen.pages.cautions import cautions_for
from sitegen.pages.formulas import derivative_lhs, formula_mathml
from sitegen.pages.markup import narrative_html, paragraphs_html
from sitegen.pages.render import PageShell, render, site_nav, trusted_script
from sitegen.pages.sentences_context import Context
from sitegen.pages.sentences_levels import lever_margins
from sitegen.pages.tables import csv_data_url, figure_table
from sitegen.scenario.formula import to_formula
from sitegen.scenario.records import Scenario

ASSUMPTIONS: tuple[tuple[str, str], ...] = (
    (
        "One number describes the whole system.",
        "Age, size or sex structure, and differences between places, can make a total that "
        "looks stable hide a collapsing part (few young fish, one depleted bay).",
    ),
    (
        "The model is deterministic.",
        "Good and bad years, chance events and measurement error are left out; a system near "
        "a threshold can be pushed over it by one bad year the model cannot see.",
    ),
    (
        "Parameters are constant in time.",
        "A slow change in climate, habitat or prices moves the limits themselves; a margin "
        "computed today can shrink without any change of the lever.",
    ),
    (
        "The response is immediate.",
        "Time lags (maturation, slow mixing, delayed reporting) can cause overshoot and "
        "oscillation that a first-order model never shows.",
    ),
    (
        "Nothing outside the model changes in response.",
        "Predators, competitors, users and markets adapt; effort may rise as a stock falls.",
    ),
)


@dataclass(frozen=True)
class DossierInput:
    """Everything one dossier shows; ``summary`` is the assessment summary (JSON data)."""

    scenario: Scenario
    summary: Mapping[str, Any]
    figures: Sequence[Figure]
    version: str
    input_hash: str
    explorer_html: Markup | None = None
    explorer_script: str | None = None
    explorer_note: str | None = None
    fit: Mapping[str, Any] | None = None
    fit_figures: Sequence[Figure] = ()


@dataclass(frozen=True)
class FigureView:
    anchor: str
    title: str
    description: str
    svg: Markup
    table: parts.TableView
    csv_url: str
    csv_name: str


def _figure_view(slug: str, figure: Figure) -> FigureView:
    return FigureView(
        anchor=f"fig-{figure.name}",
        title=figure.title,
        description=figure.description,
        svg=Markup(figure.svg),  # our own renderer's output; text in it is escaped there
        table=figure_table(figure),
        csv_url=csv_data_url(figure.csv),
        csv_name=f"{slug}-{figure.name}.csv",
    )


def _linked(sentences: Sequence[words.Sentence], anchors: set[str]) -> list[dict[str, Any]]:
    """Sentences with the anchor of the figure each one states (None if not on the page)."""
    result = []
    for s in sentences:
        anchor = f"fig-{s.figure}" if s.figure and f"fig-{s.figure}" in anchors else None
        result.append({"text": s.text, "anchor": anchor, "topic": s.topic})
    return result


def _formulas(scenario: Scenario) -> list[dict[str, Any]]:
    symbol = scenario.state.symbol
    shown = [
        {
            "label": "Rate of change",
            "mathml": formula_mathml(scenario.model.rate, scenario.symbols, derivative_lhs(symbol)),
            "plain": f"d{symbol}/dt = {scenario.model.rate.text}",
        }
    ]
    if scenario.model.yield_ is not None:
        shown.append(
            {
                "label": "Yield",
                "mathml": formula_mathml(scenario.model.yield_, scenario.symbols, "<mi>Y</mi>"),
                "plain": f"Y = {scenario.model.yield_.text}",
            }
        )
    return shown


def _policies(scenario: Scenario) -> list[dict[str, str]]:
    described = []
    for policy in scenario.policies:
        parts_text = []
        if policy.values:
            parts_text.append(
                ", ".join(f"{k} = {to_formula_value(v)}" for k, v in sorted(policy.values.items()))
            )
        if policy.rate is not None:
            parts_text.append(f"rate d{scenario.state.symbol}/dt = {policy.rate.text}")
        if policy.yield_ is not None:
            parts_text.append(f"yield {policy.yield_.text}")
        lines = [
            f"{q.name} = {wording.quantity(q.value, q.unit, 4)}"
            + (f" ({q.label})" if q.label else "")
            + (f", explored from {wording.number(q.range[0])} to {wording.number(q.range[1])}"
               if q.range else "")
            for q in policy.parameters
        ]  # fmt: skip
        described.append(
            {
                "name": policy.name,
                "text": "; ".join(parts_text) or "as the base",
                "parameters": lines,
            }
        )
    return described


def to_formula_value(value: float) -> str:
    return f"{value:g}"


def render_dossier(d: DossierInput) -> str:
    """The dossier as one HTML document (text)."""
    scenario, summary = d.scenario, d.summary
    figures = [_figure_view(scenario.slug, f) for f in d.figures]
    fit_figures = [_figure_view(scenario.slug, f) for f in d.fit_figures]
    anchors = {f.anchor for f in (*figures, *fit_figures)}
    status = words.status(summary, scenario)
    sections = words.section_sentences(summary, scenario)
    scripts = (trusted_script(d.explorer_script),) if d.explorer_script else ()
    shell = PageShell(
        title=scenario.title,
        kind="dossier",
        version=d.version,
        nav=site_nav(""),
        scripts=scripts,
    )
    warnings = [*scenario.warnings, *summary.get("warnings", ())]
    for name in ("dynamics", "limits", "policies", "uncertainty", "sensitivity", "economics"):
        warnings.extend(f"{name}: {w}" for w in summary.get(name, {}).get("warnings", ()))
    notes = [*summary["method"].get("notes", ())]
    if d.explorer_note:
        notes.append(d.explorer_note)
    for name in ("dynamics", "limits", "policies", "uncertainty", "sensitivity", "economics"):
        notes.extend(f"{name}: {n}" for n in summary.get(name, {}).get("notes", ()))
    return render(
        "dossier.html.j2",
        shell,
        s=scenario,
        status=status,
        headline=_linked(words.headline(summary, scenario), anchors),
        summary_html=paragraphs_html(scenario.summary),
        notes_html=narrative_html(scenario.notes) if scenario.notes.strip() else None,
        formulas=_formulas(scenario),
        policies=_policies(scenario),
        parameter_table=parts.parameter_table(scenario),
        state_table=parts.state_table(scenario, summary),
        equilibria_table=parts.equilibria_table(summary),
        figures=figures,
        explorer_html=d.explorer_html,
        limit_sentences=_linked(words.limit_sentences(summary, scenario), anchors),
        section_sentences={k: _linked(v, anchors) for k, v in sections.items()},
        limits_table=parts.limits_table(summary),
        dynamics_table=parts.dynamics_table(summary),
        milestone_table=parts.milestone_table(summary),
        policy_table=parts.policy_table(summary),
        uncertainty_table=parts.uncertainty_table(summary),
        sensitivity_table=parts.sensitivity_table(summary),
        economics_table=parts.economics_table(summary),
        fit=d.fit,
        fit_figures=fit_figures,
        assumptions=ASSUMPTIONS,
        cautions=cautions_for(scenario.tags),
        method_table=parts.method_table(summary, d.version, d.input_hash),
        warnings=warnings,
        notes=notes,
        json_name=f"{scenario.slug}.json",
        rate_text=to_formula(scenario.model.rate.expr),
        time_words=wording.time_words(scenario.model.time_unit),
    )


def scenario_card(d: DossierInput) -> dict[str, Any]:
    """What the index, the comparison and the brief need about one scenario (JSON data)."""
    scenario, summary = d.scenario, d.summary
    status = words.status(summary, scenario)
    limits = summary["limits"]
    lever_limit = dict(limits.get("lever_limit") or {})
    basis = "fold"
    if lever_limit.get("limit") is None:
        # No tipping point in the lever: the setting at which the resting state sits on its
        # limit level is the limit that matters (a pumping rate, an inflow concentration).
        held = [m for m in lever_margins(Context.of(summary, scenario)) if m["kind"] == "limit"]
        if held:
            margin = held[0]["margin"]
            percent = held[0]["percent"]
            lever_limit = {
                "limit": held[0]["setting"],
                "margin": margin,
                "margin_percent": (percent if margin >= 0 else -percent) if percent else None,
            }
            basis = "level"
    return {
        "slug": scenario.slug,
        "title": scenario.title,
        "summary": " ".join(scenario.summary.split()),
        "notes": scenario.notes,
        "tags": list(scenario.tags),
        "year": scenario.assessment_year,
        "status": {"word": status.word, "level": status.level, "reason": status.reason},
        "headline": [s.text for s in words.headline(summary, scenario)],
        "lever": limits.get("lever"),
        "lever_value": limits.get("lever_value"),
        "lever_limit": lever_limit.get("limit"),
        "margin": lever_limit.get("margin"),
        "margin_percent": lever_limit.get("margin_percent"),
        "limit_basis": basis,
        "units": dict(summary["units"]),
        "better": scenario.state.better,
        "state_symbol": scenario.state.symbol,
        "policies": summary["policies"].get("rows") or [],
        "best": summary["policies"].get("best") or {},
        "history": [
            {"year": h.year, "values": dict(sorted(h.values.items()))} for h in scenario.history
        ],
        "fit": d.fit,
    }
