"""Plain-language sentences and the one-word status of a scenario, from its summary alone.

Every function here is a pure function of the assessment summary
(:func:`sitegen.dynamics.report.assessment_summary`, the ``analyse --json`` data)
and the :class:`~sitegen.scenario.records.Scenario` (for names, units, reference
levels and tags). Numbers are written by :mod:`sitegen.pages.wording` (3
significant figures, units, thousands separators); each :class:`Sentence` carries
the unrounded values it states and the figure that shows them. A missing or None
part of the summary never raises: its sentence is simply not written.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from sitegen.pages import wording
from sitegen.pages.sentences_context import (
    Context,
    Sentence,
    base_outcome,
    finite,
    get,
    risk_applies,
)
from sitegen.pages.sentences_limits import (
    NEAR_PERCENT,
    certainty,
    current_setting,
    largest_setting,
    msy,
    past_the_limit,
    recovery,
    stock_status,
)
from sitegen.pages.sentences_sections import milestones, reference_levels, section_leads
from sitegen.scenario.records import Scenario

__all__ = [
    "STATUS_RULES",
    "Sentence",
    "Status",
    "headline",
    "limit_sentences",
    "section_sentences",
    "status",
]

CLEAR, NEAR, PAST, NOT_ASSESSED = "clear", "near the limit", "past the limit", "not assessed"
DEFAULT_TOLERANCE = 0.05  # used only when the summary states none (as in stage 4)

STATUS_RULES: tuple[tuple[str, str], ...] = (
    (
        PAST,
        "today's lever setting is beyond its sustainable limit (or today's state is already "
        "falling past a tipping point, or flipping up for a pollutant or pest), or the state "
        "is on the wrong side of its limit reference level",
    ),
    (
        NEAR,
        f"not past the limit, but the margin to the lever limit is under {NEAR_PERCENT:g}% of "
        "the limit, or, allowing for the uncertainty in the model's parameters, the risk of "
        "collapse (or of a flip, for a pollutant or pest) under today's setting is above the "
        "scenario's risk tolerance (5% unless the scenario states another), or the state is "
        "on the right side of its limit reference level today but is moving to cross it",
    ),
    (
        CLEAR,
        f"a margin of at least {NEAR_PERCENT:g}% to the lever limit (or no limit inside the "
        "range studied), the state on the right side of its limit reference level, and any "
        "risk of collapse or flip within the tolerance; without a limit level, a state "
        "that comes to rest on the good side of its target level (the wrong side reads "
        "near the limit)",
    ),
    (
        NOT_ASSESSED,
        "nothing to judge against: no lever limit, no limit reference level and no "
        "uncertainty analysis (for example a model without a lever)",
    ),
)


@dataclass(frozen=True)
class Status:
    """The one-word status: ``level`` 0 clear, 1 near, 2 past, -1 not assessed."""

    word: str
    level: int
    reason: str


def _reference_side(c: Context) -> tuple[bool, str, tuple[float, ...]] | None:
    """Whether the state is on the wrong side of its limit reference level, with the reason."""
    st = get(c.summary, "limits", "stock_status")
    if st and finite(st.get("current")) and finite(st.get("limit")):
        wrong = bool(st.get("below_limit"))
        side = "below" if wrong else "above"
        text = f"today's {c.state}, {c.s(st['current'])}, is {side} its limit of {c.s(st['limit'])}"
        return wrong, text, (st["current"], st["limit"])
    limit = c.scenario.reference.limit
    now = get(c.summary, "dynamics", "trajectory", "start")
    if not finite(now):
        now = c.scenario.state.current
    if finite(limit) and finite(now):
        wrong = now > limit if c.lower else now < limit
        side = "above" if now > limit else "below" if now < limit else "at"
        text = f"today's {c.state}, {c.s(now)}, is {side} its limit of {c.s(limit)}"
        return wrong, text, (float(now), float(limit))  # type: ignore[arg-type]
    return None


def _limit_crossing(c: Context) -> tuple[float, float, float] | None:
    """(start, limit level, time) when the base run from today crosses the limit level."""
    runs = get(c.summary, "dynamics", "milestones")
    runs = [r for r in runs if isinstance(r, dict)] if isinstance(runs, list) else []
    base = next((r for r in runs if r.get("name") == "base"), None)
    if base is None or not finite(base.get("start")):
        return None
    for m in base.get("milestones") or ():
        if m.get("kind") == "limit" and finite(m.get("time")) and finite(m.get("level")):
            return float(base["start"]), float(m["level"]), float(m["time"])
    return None


def status(summary: dict[str, Any], scenario: Scenario) -> Status:
    """The status word by :data:`STATUS_RULES`; ``reason`` states the deciding numbers."""
    c = Context.of(summary, scenario)
    past: list[str] = []
    near: list[str] = []
    clear: list[str] = []
    fall = get(summary, "dynamics", "collapse")
    if fall and finite(fall.get("fold_value")):
        past.append(
            f"today's {c.lv(fall.get('lever_value'))} is past the tipping point at "
            f"{c.lv(fall['fold_value'])}"
        )
    limit = get(summary, "limits", "lever_limit")
    if limit and finite(limit.get("margin")) and finite(limit.get("limit")):
        pct = limit.get("margin_percent")
        if limit["margin"] < 0:
            if not past:
                past.append(
                    f"today's {c.lv(limit['current'])} is past the limit of {c.lv(limit['limit'])}"
                )
        elif finite(pct) and pct < NEAR_PERCENT:
            near.append(
                f"the margin to the limit of {c.lv(limit['limit'])} is {c.lv(limit['margin'])}, "
                f"{wording.percent(pct, given='percent')} of it"
            )
        else:
            share = f" ({wording.percent(pct, given='percent')})" if finite(pct) else ""
            clear.append(
                f"the margin to the limit of {c.lv(limit['limit'])} is "
                f"{c.lv(limit['margin'])}{share}"
            )
    side = _reference_side(c)
    if side is not None:
        (past if side[0] else clear).append(side[1])
        crossing = _limit_crossing(c)
        if not side[0] and crossing is not None:
            near.append(
                f"from today's {c.s(crossing[0])} it passes its limit of {c.s(crossing[1])} "
                f"after about {c.t(crossing[2])}"
            )
        heading_to = get(summary, "dynamics", "trajectory", "attractor")
        # Where it is going matters as much as where it is (a falling body, a draining tank).
        moving = finite(heading_to) and wording.number(heading_to) != wording.number(side[2][0])
        if not side[0] and crossing is None and moving:
            clear[-1] += f", and it settles at {c.s(heading_to)}, on the same side"
    target = c.scenario.reference.target
    rest = get(summary, "dynamics", "trajectory", "attractor")
    if side is None and finite(target) and finite(rest):
        good = rest <= target if c.lower else rest >= target
        verb = "meeting" if good else "missing"
        text = f"the {c.state} comes to rest at {c.s(rest)}, {verb} its target of {c.s(target)}"
        (clear if good else near).append(text)
    o = base_outcome(summary)
    tol = get(summary, "uncertainty", "tolerance")
    tol = tol if finite(tol) else DEFAULT_TOLERANCE
    if o is not None and risk_applies(c, o):
        what = "flip" if c.lower else "collapse"
        text = (
            f"the {what} risk is {wording.percent(o['collapse_risk'], given='fraction')} "
            f"against a tolerance of {wording.percent(tol, given='fraction')}"
        )
        (near if o["collapse_risk"] > tol else clear).append(text)
    if not (past or near or clear) and c.lever is not None and limit is None:
        notes = get(summary, "limits", "notes") or []
        if any("persists over the whole range" in n for n in notes):
            span = c.lever_range()
            if span is not None:
                clear.append(
                    f"the stable state holds over the whole range of {c.lever_label} studied, "
                    f"{c.lv(span[0])} to {c.lv(span[1])}"
                )
    for word, level, reasons in ((PAST, 2, past), (NEAR, 1, near), (CLEAR, 0, clear)):
        if reasons:
            return Status(word, level, _reason(reasons))
    why = "no lever" if c.lever is None else "no lever limit"
    return Status(NOT_ASSESSED, -1, f"Not assessed: {why}, no limit reference level and no risk.")


def _reason(parts: list[str]) -> str:
    text = "; ".join(parts)
    return text[0].upper() + text[1:] + "."


def limit_sentences(summary: dict[str, Any], scenario: Scenario) -> list[Sentence]:
    """The "limits in plain words" section, in reading order."""
    c = Context.of(summary, scenario)
    out: list[Sentence] = []
    for build in (
        current_setting,
        milestones,
        largest_setting,
        past_the_limit,
        recovery,
        msy,
        stock_status,
        reference_levels,
        certainty,
    ):
        out.extend(build(c))
    return out


def headline(summary: dict[str, Any], scenario: Scenario) -> list[Sentence]:
    """One to three sentences: the verdict a board member reads first."""
    c = Context.of(summary, scenario)
    out: list[Sentence] = []
    limit = largest_setting(c)
    fall = past_the_limit(c) if get(summary, "dynamics", "collapse") else []
    if fall:
        out.extend(fall[:1])
    elif limit:
        out.extend(limit)
    else:
        # Without a lever the story is how long until a level is crossed, then where it rests.
        out.extend(milestones(c)[:1])
        out.extend(current_setting(c)[:1])
        out.extend(reference_levels(c)[:1])
    risk = [s for s in certainty(c) if s.topic in ("certainty", "safe-setting")]
    o = base_outcome(summary)
    tol = get(summary, "uncertainty", "tolerance")
    if risk and o is not None and finite(tol) and (o.get("collapse_risk") or 0.0) > tol:
        out.extend(risk[:2])
    elif risk and not out:
        out.append(risk[0])
    if not out:
        out.extend(stock_status(c)[:1])
    if not out:
        out.extend(section_leads(c).get("equilibria", [])[:1])
    return out[:3]


def section_sentences(summary: dict[str, Any], scenario: Scenario) -> dict[str, list[Sentence]]:
    """Short lead sentences for the sections equilibria, dynamics, policies,
    uncertainty, sensitivity and economics (every key present; lists may be empty)."""
    c = Context.of(summary, scenario)
    leads = section_leads(c)
    leads["uncertainty"] = certainty(c) + leads.get("uncertainty", [])
    return leads
