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
from sitegen.pages.sentences_levels import (
    crossings,
    lever_margins,
    lever_settings,
    milestones,
    reference_levels,
    rest_spread,
)
from sitegen.pages.sentences_limits import (
    certainty,
    current_setting,
    largest_setting,
    msy,
    past_the_limit,
    recovery,
    stock_status,
)
from sitegen.pages.sentences_sections import section_leads
from sitegen.pages.status_rules import (
    CLEAR,
    DEFAULT_TOLERANCE,
    NEAR,
    NEAR_PERCENT,
    NOT_ASSESSED,
    PAST,
    STATUS_RULES,
)
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
        text = (
            f"today's {c.state}, {c.s(st['current'])}, {c.verb('is')} {side} {c.its} limit of "
            f"{c.s(st['limit'])}"
        )
        return wrong, text, (st["current"], st["limit"])
    limit = c.scenario.reference.limit
    now = get(c.summary, "dynamics", "trajectory", "start")
    if not finite(now):
        now = c.scenario.state.current
    if finite(limit) and finite(now):
        wrong = now > limit if c.lower else now < limit
        side = "above" if now > limit else "below" if now < limit else "at"
        text = f"today's {c.state}, {c.s(now)}, {c.verb('is')} {side} {c.its} limit of {c.s(limit)}"
        return wrong, text, (float(now), float(limit))  # type: ignore[arg-type]
    return None


def _limit_crossing(c: Context) -> tuple[float, float, float] | None:
    """(start, limit level, time) when the base run from today crosses the limit level."""
    start = get(c.summary, "dynamics", "trajectory", "start")
    found = crossings(c).get("limit")
    if found is None or not finite(start):
        return None
    return float(start), found[0], found[1]


def _rest_against_limit(c: Context, side: tuple[bool, str, tuple[float, ...]]) -> str:
    """The clear reason of a state that is moving: where it comes to rest, against its limit
    (a falling bundle starts at 0 m/s; what counts is the speed it settles at)."""
    rest = get(c.summary, "dynamics", "trajectory", "attractor")
    now, limit = side[2]
    if not finite(rest) or wording.number(rest) == wording.number(now):
        return side[1]
    where = "above" if rest > limit else "below"
    return (
        f"the {c.state} {c.verb('settles')} at {c.s(rest)}, {c.s(abs(rest - limit))} {where} "
        f"{c.its} limit of {c.s(limit)} ({c.s(now)} today)"
    )


def _lever_margin(c: Context, past: list[str], near: list[str], clear: list[str]) -> None:
    """The margin of today's lever to the setting that rests the state on its limit level."""
    for m in lever_margins(c):
        if m["kind"] != "limit":
            continue
        bound = "at most" if m["most"] else "at least"
        text = (
            f"the {c.lever_label} that keeps the {c.state} inside {c.its} limit of "
            f"{c.s(m['level'])} is {bound} "
            f"{c.lv(m['setting'])}; today's {c.lv(m['now'])} "
        )
        pct = m["percent"]
        share = wording.percent(pct, given="percent") if finite(pct) else ""
        if m["margin"] <= 0:
            if not past:
                past.append(text + f"is {c.lv(-m['margin'])} past it")
        elif finite(pct) and pct < NEAR_PERCENT:
            near.append(text + f"leaves {c.lv(m['margin'])}, {share} of it")
        else:
            clear.append(text + f"leaves {c.lv(m['margin'])}" + (f" ({share})" if share else ""))


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
        crossing = _limit_crossing(c)
        if side[0]:
            # On the wrong side today but on its way back: say when it is back inside.
            back = (
                f", and {c.verb('comes')} back inside it after about {c.t(crossing[2])}"
                if crossing is not None
                else ""
            )
            past.append(side[1] + back)
        elif crossing is not None:
            near.append(
                f"the {c.state}, {c.s(crossing[0])} today, {c.verb('passes')} {c.its} limit of "
                f"{c.s(crossing[1])} after about {c.t(crossing[2])}"
            )
        else:
            clear.append(_rest_against_limit(c, side))
    if limit is None:
        _lever_margin(c, past, near, clear)
    target = c.scenario.reference.target
    rest = get(summary, "dynamics", "trajectory", "attractor")
    reached = crossings(c).get("target")
    start = get(summary, "dynamics", "trajectory", "start")
    if side is None and finite(target) and reached is not None and finite(start):
        clear.append(
            f"the {c.state}, {c.s(start)} today, {c.verb('reaches')} {c.its} target of "
            f"{c.s(target)} after about {c.t(reached[1])}"
        )
    elif side is None and finite(target) and finite(rest):
        good = rest <= target if c.lower else rest >= target
        verb = "meeting" if good else "missing"
        text = (
            f"the {c.state} {c.verb('comes')} to rest at {c.s(rest)}, {verb} {c.its} target of "
            f"{c.s(target)}"
        )
        (clear if good else near).append(text)
    o = base_outcome(summary)
    tol = get(summary, "uncertainty", "tolerance")
    tol = tol if finite(tol) else DEFAULT_TOLERANCE
    spread = rest_spread(c)
    if o is not None and risk_applies(c, o):
        what = "a flip" if c.lower else "collapse"
        text = (
            f"allowing for the uncertainty, the risk of {what} is "
            f"{wording.percent(o['collapse_risk'], given='fraction')} against a tolerance of "
            f"{wording.percent(tol, given='fraction')}"
        )
        (near if o["collapse_risk"] > tol else clear).append(text)
    elif spread is not None and spread[2] is not None and not past:
        limit_level = c.scenario.reference.limit
        if spread[2]:
            bad = "above" if c.lower else "below"
            share = "more than half" if "more than half" in spread[0] else "more than 5%"
            near.append(
                f"allowing for the uncertainty, {share} of the samples rest {bad} the limit of "
                f"{c.s(limit_level)} (the tolerance is {wording.percent(tol, given='fraction')})"
            )
        else:
            clear.append(
                "allowing for the uncertainty, at least 95% of the samples rest inside the "
                f"limit of {c.s(limit_level)}"
            )
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
    """The "limits in plain words" section, in reading order. Of the uncertainty it keeps
    only the precautionary setting; the risk itself is told in the uncertainty section."""
    c = Context.of(summary, scenario)
    out: list[Sentence] = []
    for build in (
        current_setting,
        milestones,
        largest_setting,
        lever_settings,
        past_the_limit,
        recovery,
        msy,
        stock_status,
        reference_levels,
        _safe_setting,
    ):
        out.extend(build(c))
    return out


def _safe_setting(c: Context) -> list[Sentence]:
    return [s for s in certainty(c) if s.topic == "safe-setting"]


def headline(summary: dict[str, Any], scenario: Scenario) -> list[Sentence]:
    """One to three sentences: the verdict a board member reads first."""
    c = Context.of(summary, scenario)
    out: list[Sentence] = []
    limit = largest_setting(c)
    fall = past_the_limit(c) if get(summary, "dynamics", "collapse") else []
    timed = [s for s in milestones(c) if s.topic == "milestone" and " after " in s.text]
    if fall:
        out.extend(fall[:1])
    elif limit:
        out.extend(limit)
    elif timed:
        # The story is how long until a level is crossed, by option, then where it rests.
        out.extend(timed[:1])
        out.extend(s for s in section_leads(c)["policies"] if s.topic == "policies-time")
        out.extend(reference_levels(c, every=True, wrong_only=True)[:1])
    else:
        # No tipping point in the lever: where the state rests against its limit, and how
        # far the lever may go before it passes it.
        out.extend((reference_levels(c, every=True) or current_setting(c))[:1])
        out.extend(lever_settings(c)[:1])
    risk = [s for s in certainty(c) if s.topic in ("certainty", "safe-setting")]
    o = base_outcome(summary)
    tol = get(summary, "uncertainty", "tolerance")
    spread = rest_spread(c)
    if risk and o is not None and finite(tol) and (o.get("collapse_risk") or 0.0) > tol:
        out.extend(risk[:2])
    elif risk and len(out) < 3:
        out.append(risk[0])
    elif not risk and spread is not None and spread[2] is not None and not limit:
        out.extend(s for s in section_leads(c)["uncertainty"] if s.topic == "state-spread")
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
    told = {s.text for s in limit_sentences(summary, scenario)}
    risk = [s for s in certainty(c) if s.text not in told]
    leads["uncertainty"] = risk + leads.get("uncertainty", [])
    return leads
