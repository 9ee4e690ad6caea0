"""Sentences about the declared reference levels: when the state crosses them, where it
rests against them, how far the lever may go before the resting state passes them, and
where the uncertainty puts the resting state against the limit level.

``milestones`` reads ``summary["dynamics"]["milestones"]`` when the dynamics stage
provides it (times until the state crosses a declared reference level, the 50% and 95%
times of the approach, the lever settings that rest the state on a level) and writes
nothing when it is absent.
"""

from __future__ import annotations

from typing import Any

from sitegen.pages import wording
from sitegen.pages.sentences_context import (
    Context,
    Sentence,
    base_outcome,
    finite,
    get,
    parameter_words,
    sentence,
)


def stable_levels(c: Context) -> list[float]:
    return [
        e["value"]
        for e in c.summary.get("equilibria") or []
        if e.get("stability") == "stable" and finite(e.get("value"))
    ]


def _milestone_set(data: Any, name: str = "base") -> dict[str, Any] | None:
    """One model's milestones: the stage gives one set, or one per model (by name)."""
    if isinstance(data, list):
        sets = [m for m in data if isinstance(m, dict)]
        data = next((m for m in sets if m.get("name") == name), None)
        if data is None and name == "base":
            data = sets[0] if sets else None
    return data if isinstance(data, dict) else None


def crossings(c: Context, name: str = "base") -> dict[str, tuple[float, float]]:
    """{level kind: (level, time)} for the reference levels the run of ``name`` crosses."""
    found = _milestone_set(get(c.summary, "dynamics", "milestones"), name) or {}
    out: dict[str, tuple[float, float]] = {}
    for m in found.get("milestones") or []:
        kind = str(m.get("kind", "")) if isinstance(m, dict) else ""
        if kind and not kind.endswith("way") and finite(m.get("level")) and finite(m.get("time")):
            out[kind] = (float(m["level"]), float(m["time"]))
    return out


def listed(parts: list[str]) -> str:
    return ", ".join(parts[:-1]) + " and " + parts[-1] if len(parts) > 1 else "".join(parts)


def crossing_verb(c: Context, rising: bool) -> str:
    """ "reaches" a level on the good way, "rises past" / "falls below" on the bad way."""
    bad = rising == c.lower
    words = (("rises past" if rising else "falls below") if bad else "reaches").split()
    return " ".join([c.verb(words[0]), *words[1:]])


def milestones(c: Context) -> list[Sentence]:
    """Times until the state crosses its reference levels (topic "milestone"), the levels
    it never crosses in one sentence, and the 50% / 95% times ("milestone-pace")."""
    found = _milestone_set(get(c.summary, "dynamics", "milestones"))
    if found is None:
        return []
    marks = [m for m in found.get("milestones") or [] if isinstance(m, dict)]
    figure = c.figure("trajectories")
    out: list[Sentence] = []
    shares = {str(m.get("kind")): m for m in marks if str(m.get("kind", "")).endswith("way")}
    half, most = shares.get("50% of the way"), shares.get("95% of the way")
    start, rest = found.get("start"), found.get("attractor")
    kept: list[tuple[str, float, str]] = []
    for m in marks:
        kind, level, time = str(m.get("kind", "")), m.get("level"), m.get("time")
        if kind.endswith("way") or not finite(level):
            continue
        if finite(time):
            way = "rise" if finite(start) and level > start else "fall"
            verb = crossing_verb(c, way == "rise")
            lead = f"From today's {c.s(start)}, the" if finite(start) else "The"
            text = (
                f"{lead} {c.state} {verb} {c.its} {kind} level of {c.s(level)} after {c.t(time)}."
            )
            out.append(sentence("milestone", text, figure, start, level, time))
        elif m.get("settles") in ("above", "below") and finite(rest):
            kept.append((kind, float(level), str(m["settles"])))
    for side in ("above", "below"):
        levels = [(k, v) for k, v, s in kept if s == side]
        if not levels or not finite(start):
            continue
        named = listed([f"{k} level of {c.s(v)}" for k, v in levels])
        already = all((start > v) == (side == "above") for _, v in levels)
        verb = c.verb("stays") if already else f"{c.verb('does')} not reach"
        text = (
            f"The {c.state} {verb} {side if already else ''} {c.its} {named} "
            f"on {c.its} way to rest at {c.s(rest)}."
        ).replace("  ", " ")
        out.append(sentence("milestone", text, figure, *(v for _, v in levels), rest))
    if half and finite(half.get("time")) and finite(start) and finite(rest):
        values: list[float | None] = [start, rest, half["time"]]
        if rest == 0 and finite(half.get("level")):
            verb = c.verb("falls") if start > 0 else c.verb("rises")
            text = (
                f"The {c.state} {verb} from today's {c.s(start)} to {c.s(half['level'])} "
                f"(half) in {c.t(half['time'])}"
            )
            values = [start, half["level"], half["time"]]
            if most and finite(most.get("time")) and finite(most.get("level")):
                text += f" and to {c.s(most['level'])} (5%) in {c.t(most['time'])}"
                values.extend([most["level"], most["time"]])
        else:
            text = (
                f"Half of the way from today's {c.s(start)} to the resting {c.s(rest)} takes "
                f"{c.t(half['time'])}"
            )
            if most and finite(most.get("time")):
                text += f"; 95% of the way takes {c.t(most['time'])}"
                values.append(most["time"])
        out.append(sentence("milestone-pace", text + ".", figure, *values))
    return out


def _reference_rest(c: Context) -> float | None:
    stable = stable_levels(c)
    attractor = get(c.summary, "dynamics", "trajectory", "attractor")
    return attractor if finite(attractor) else (stable[0] if len(stable) == 1 else None)


def reference_levels(
    c: Context, *, every: bool = False, wrong_only: bool = False
) -> list[Sentence]:
    """The resting state against the declared limit and target (when no stock status does
    it, and, unless ``every``, for the levels no milestone sentence already names; with
    ``wrong_only``, only the levels it rests on the wrong side of)."""
    if get(c.summary, "limits", "stock_status"):
        return []
    rest = _reference_rest(c)
    found = _milestone_set(get(c.summary, "dynamics", "milestones")) or {}
    named = {str(m.get("kind")) for m in found.get("milestones") or [] if isinstance(m, dict)}
    crossed = set() if every else named
    ref = c.scenario.reference
    out: list[Sentence] = []
    for word, level in (("limit", ref.limit), ("target", ref.target), ("trigger", ref.trigger)):
        if not finite(level) or not finite(rest) or word in crossed:
            continue
        good = rest <= level if c.lower else rest >= level
        if good and wrong_only:
            continue
        side = "above" if rest > level else "below" if rest < level else "at"
        if side == "at":
            text = f"The {c.state} {c.verb('settles')} at {c.its} {word} level, {c.s(level)}."
            out.append(sentence("reference", text, c.figure("phase-line"), level))
            continue
        verdict = {
            ("limit", True): "inside the limit",
            ("limit", False): "past the limit",
            ("target", True): "meeting the target",
            ("target", False): "short of the target",
            ("trigger", True): "on the safe side of the trigger",
            ("trigger", False): "past the trigger",
        }[(word, good)]
        gap = abs(rest - level)
        text = (
            f"The {c.state} {c.verb('settles')} at {c.s(rest)}, {c.s(gap)} {side} "
            f"{c.its} {word} level of {c.s(level)}: {verdict}."
        )
        out.append(sentence("reference", text, c.figure("phase-line"), rest, gap, level))
    return out


def lever_margins(c: Context) -> list[dict[str, Any]]:
    """The lever settings at which the resting state sits on a reference level (from the
    milestones): kind, level, setting, today's setting, margin (negative past it), margin
    as a percent of the setting, and whether the lever must stay at most that setting."""
    found = _milestone_set(get(c.summary, "dynamics", "milestones")) or {}
    now = get(c.summary, "limits", "lever_value")
    rest = found.get("attractor")
    out: list[dict[str, Any]] = []
    for m in found.get("lever_settings") or []:
        level, at = m.get("level"), m.get("lever_value")
        if not (finite(level) and finite(at) and finite(now) and finite(rest)) or at == now:
            continue
        if not m.get("stable") or rest == level:
            continue
        rises = (level - rest) * (at - now) > 0  # the resting state rises with the lever
        most = rises == c.lower  # the lever must stay at most this setting
        margin = (at - now) if most else (now - at)
        out.append(
            {
                "kind": str(m.get("kind", "limit")),
                "level": level,
                "setting": at,
                "now": now,
                "margin": margin,
                "percent": abs(margin) / abs(at) * 100 if at else None,
                "most": most,
            }
        )
    return out


def lever_settings(c: Context) -> list[Sentence]:
    """How far the lever may go before the resting state passes a reference level."""
    out: list[Sentence] = []
    for m in lever_margins(c):
        side = "at or below" if c.lower else "at or above"
        bound = "at most" if m["most"] else "at least"
        text = (
            f"To keep the resting {c.state} {side} {c.its} {m['kind']} level of "
            f"{c.s(m['level'])}, the {c.lever_label} must be {bound} {c.lv(m['setting'])}"
        )
        margin, pct = m["margin"], m["percent"]
        share = f" ({wording.percent(pct, given='percent')})" if finite(pct) and margin > 0 else ""
        where = "inside it" if margin > 0 else "past it"
        text += f"; today's {c.lv(m['now'])} is {c.lv(abs(margin))}{share} {where}."
        values = (m["level"], m["setting"], m["now"], abs(margin), pct)
        out.append(sentence("lever-setting", text, None, *values))
    return out


def rest_spread(c: Context) -> tuple[str, list[float | None], bool | None] | None:
    """The resting state's 90% band under the uncertainty, against the limit level:
    (text, values, whether more than the tolerance of samples rest past the limit, or
    None when the quantiles cannot tell)."""
    o = base_outcome(c.summary)
    q = o.get("stable_state") if o else None
    if not q or not all(finite(q.get(k)) for k in ("p05", "p50", "p95")):
        return None
    if wording.number(q["p05"]) == wording.number(q["p95"]):
        return None  # every sample rests at the same level (decay to zero): no spread
    names = [
        parameter_words(c, p.get("name", ""))
        for p in get(c.summary, "uncertainty", "parameters") or []
    ]
    spread = f" in the {listed(names)}" if names else ""
    text = (
        f"Allowing for the uncertainty{spread}, the resting {c.state} {c.verb('lies')} between "
        f"{c.s(q['p05'])} and {c.s(q['p95'])} in 90% of the samples (median {c.s(q['p50'])})"
    )
    values: list[float | None] = [q["p05"], q["p95"], q["p50"]]
    limit = c.scenario.reference.limit
    tol = get(c.summary, "uncertainty", "tolerance")
    rest = _reference_rest(c)
    if not finite(limit) or not finite(rest) or (rest > limit if c.lower else rest < limit):
        return text + ".", values, None  # no limit, or the model itself rests past it
    bad_side = "above" if c.lower else "below"
    tail, median = (q["p95"], q["p50"]) if c.lower else (q["p05"], q["p50"])
    past = (lambda v: v > limit) if c.lower else (lambda v: v < limit)
    near = (lambda v: v <= limit) if c.lower else (lambda v: v >= limit)
    if past(median):
        text += f": more than half of them rest {bad_side} the limit of {c.s(limit)}"
        share = 0.5
    elif past(tail):
        text += f": more than 5% of them rest {bad_side} the limit of {c.s(limit)}"
        share = 0.05
    else:
        text += f": at least 95% of them rest on the safe side of the limit of {c.s(limit)}"
        share = None
    values.append(limit)
    exceeds: bool | None = None
    if finite(tol):
        if share is not None and share >= tol:
            exceeds = True
            text += f" (the tolerance is {wording.percent(tol, given='fraction')})"
            values.append(tol * 100)
        elif share is None and tol >= 0.05 and near(tail):
            exceeds = False
    return text + ".", values, exceeds
