"""The "limits in plain words" sentences, one builder per topic.

Each builder reads one part of the summary and returns a list of sentences
(empty when the part is missing or None): a sentence is written only with its
number, and every number comes from the summary or the scenario (or a percent
of them). Direction: for better = "higher" losing the state is a collapse (a
fall); for better = "lower" (pollutants, pests) it is a flip up to the high state.
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
    risk_applies,
    sentence,
)


def current_setting(c: Context) -> list[Sentence]:
    """Where today's setting leads: the state it settles at and when, or the fall and when."""
    run = get(c.summary, "dynamics", "trajectory")
    if not run or not finite(run.get("start")):
        return []
    setting = ""
    value = get(c.summary, "limits", "lever_value")
    if c.lever is not None and finite(value):
        setting = f"With the {c.lever_label} at today's {c.lv(value)}, "
        if value == 0:
            setting = f"With no {c.lever_label} (today's setting is {c.lv(value)}), "
    start = run["start"]
    now = f"from {c.s(start)}" if start == 0 else f"now {c.s(start)}"
    lead = (setting or "") + f"the {c.state}, {now},"
    lead = lead[0].upper() + lead[1:]
    events = {e.get("kind"): e.get("time") for e in run.get("events") or []}
    fate = run.get("fate")
    figure = c.figure("trajectories")
    if fate == "settles" and finite(run.get("attractor")):
        rest = run["attractor"]
        near = events.get("within 1%")
        st = c.scenario.state
        width = st.max - st.min if finite(st.max) and finite(st.min) else None
        if finite(near) and near > 0 and rest == 0 and finite(width):
            # Within 1% of zero is measured on the region's width (dynamics stage).
            way = "falls" if start > 0 else "rises"
            text = (
                f"{lead} {c.verb(way)} towards zero; {c.it} {c.verb('is')} under "
                f"{c.s(width / 100)} (1% of the range studied) after about {c.t(near)}."
            )
            return [sentence("current-setting", text, figure, value, start, width / 100, near)]
        if finite(near) and near > 0:
            text = (
                f"{lead} {c.verb('settles')} at {c.s(rest)}; {c.it} {c.verb('is')} within 1% "
                f"of that level after about {c.t(near)}."
            )
            return [sentence("current-setting", text, figure, value, start, rest, near)]
        text = f"{lead} {c.verb('stays')} at about {c.s(rest)}."
        return [sentence("current-setting", text, figure, value, start, rest)]
    fall = events.get("collapse")
    level = run.get("collapse_level")
    if fate == "collapses" and finite(fall) and finite(level):
        verb = c.verb("rises") + " past" if c.lower else c.verb("falls") + " to"
        what = "the level counted as a flip" if c.lower else "the collapse level"
        text = f"{lead} {verb} {what}, {c.s(level)}, in about {c.t(fall)}."
        return [sentence("current-setting", text, figure, value, start, level, fall)]
    return []


def largest_setting(c: Context) -> list[Sentence]:
    """The furthest sustainable lever setting and today's margin to it."""
    limit = get(c.summary, "limits", "lever_limit")
    if not limit or not finite(limit.get("limit")) or not finite(limit.get("current")):
        return []
    largest = limit.get("direction") != "smallest"
    word = "largest" if largest else "smallest"
    kept = f"the {c.state} at {c.its} low stable level" if c.lower else c.stable_state
    end = (
        "where the stable state meets zero"
        if limit.get("kind") == "transcritical"
        else "a tipping point where the stable state vanishes"
    )
    first = (
        f"The {word} setting of the {c.lever_label} that keeps {kept} is "
        f"{c.lv(limit['limit'])} ({end})."
    )
    margin = limit.get("margin")
    pct = limit.get("margin_percent")
    figure = c.figure("bifurcation")
    if not finite(margin):
        return [sentence("largest-setting", first, figure, limit["limit"])]
    share = f" ({wording.percent(abs(pct), given='percent')} of the limit)" if finite(pct) else ""
    if margin > 0:
        side = "below" if largest else "above"
        second = (
            f"Today's {c.lv(limit['current'])} is {c.lv(margin)}{share} {side} it, "
            "on the safe side."
        )
    elif margin == 0:
        second = f"Today's {c.lv(limit['current'])} sits exactly on it, with no margin."
    else:
        second = f"Today's {c.lv(limit['current'])} is {c.lv(-margin)}{share} past it."
    values = (limit["limit"], limit["current"], abs(margin), abs(pct) if finite(pct) else None)
    return [sentence("largest-setting", f"{first} {second}", figure, *values)]


def past_the_limit(c: Context) -> list[Sentence]:
    """What happens past the limit: today's fall and its time, or where the state goes."""
    fall = get(c.summary, "dynamics", "collapse")
    if fall and finite(fall.get("fold_value")) and finite(fall.get("distance")):
        verb = c.verb("flips") + " up to" if c.lower else c.verb("collapses") + " to"
        lead = (
            f"Today's {c.lv(fall['lever_value'])} is {c.lv(fall['distance'])} past the tipping "
            f"point at {c.lv(fall['fold_value'])}: the {c.state} {verb} "
            f"{c.s(fall['collapse_level'])}"
        )
        done, ghost = fall.get("collapse_time"), fall.get("ghost_time")
        if finite(done):
            text = f"{lead} in about {c.t(done)}"
            if finite(ghost) and wording.number(ghost) != wording.number(done):
                text += (
                    " (the quick estimate from the slow passage near the tipping point gives "
                    f"{c.t(ghost)})"
                )
            values = (fall["lever_value"], fall["distance"], fall["fold_value"])
            return [
                sentence(
                    "past-the-limit",
                    text + ".",
                    c.figure("collapse"),
                    *values,
                    fall["collapse_level"],
                    done,
                    ghost if finite(ghost) else None,
                )
            ]
        if finite(ghost):
            text = f"{lead}; the slow passage near the tipping point takes about {c.t(ghost)}."
            values = (fall["lever_value"], fall["distance"], fall["fold_value"])
            return [sentence("past-the-limit", text, None, *values, fall["collapse_level"], ghost)]
    h = get(c.summary, "dynamics", "hysteresis")
    if h and finite(h.get("fold_value")) and finite(h.get("collapsed_state")):
        verb = c.verb("flips") + " up to" if c.lower else c.verb("falls") + " to"
        beyond = (
            "Below"
            if get(c.summary, "limits", "lever_limit", "direction") == "smallest"
            else "Above"
        )
        level = get(c.summary, "dynamics", "trajectory", "collapse_level")
        named = " (the collapse level)" if not c.lower and level == h["collapsed_state"] else ""
        text = (
            f"{beyond} {c.lv(h['fold_value'])} the {c.state} {c.verb('has')} no stable level "
            f"left near "
            f"{c.s(h['fold_state'])} and {verb} {c.s(h['collapsed_state'])}{named}."
        )
        values = (h["fold_value"], h.get("fold_state"), h["collapsed_state"])
        return [sentence("past-the-limit", text, c.figure("bifurcation"), *values)]
    return []


def recovery(c: Context) -> list[Sentence]:
    """How far back the lever must go once the state is lost (hysteresis)."""
    h = get(c.summary, "dynamics", "hysteresis")
    if not h or not finite(h.get("fold_value")):
        return []
    fold = h["fold_value"]
    lost = "the low state" if c.lower else f"the {c.state}"
    lost_verb = "is" if c.lower else c.verb("is")
    first = f"Once the {c.lever_label} has passed {c.lv(fold)} and {lost} {lost_verb} lost"
    figure = c.figure("bifurcation")
    if h.get("irreversible") or not finite(h.get("return_value")):
        text = (
            f"{first}, {'it' if c.lower else c.it} cannot be recovered by the {c.lever_label} "
            "alone: no setting inside the range studied brings it back."
        )
        return [sentence("recovery", text, figure, fold)]
    back = h["return_value"]
    way, side = ("down", "below") if back < fold else ("up", "above")
    distance = h.get("distance") if finite(h.get("distance")) else abs(fold - back)
    text = (
        f"{first}, {'it comes' if c.lower else c.it + ' ' + c.verb('comes')} back only when "
        f"the {c.lever_label} is brought {way} to {c.lv(back)}, "
        f"{c.lv(distance)} {side} the tipping point: just undoing the last step is not enough."
    )
    return [sentence("recovery", text, figure, fold, back, distance)]


def msy(c: Context) -> list[Sentence]:
    """MSY, B_MSY and the caution that MSY on a fold is a limit, not a target."""
    y = get(c.summary, "limits", "sustainable_yield")
    if not y or not finite(y.get("msy")):
        return []
    figure = c.figure("yield-curve")
    if not y.get("at_fold") and c.at_range_end(y.get("lever_at_msy")):
        text = (
            f"The sustainable yield still grows at the end of the range of the {c.lever_label} "
            f"studied, {c.lv(y['lever_at_msy'])}, where it is {c.y(y['msy'])}: the model "
            "shows no maximum sustainable yield inside that range."
        )
        return [sentence("msy", text, figure, y["lever_at_msy"], y["msy"])]
    first = (
        f"The maximum sustainable yield (MSY, the largest yield that can be taken year after "
        f"year) is {c.y(y['msy'])}, with the {c.state} at {c.s(y['state_at_msy'])} (BMSY)."
    )
    out = [sentence("msy", first, figure, y["msy"], y["state_at_msy"])]
    if y.get("at_fold"):
        text = (
            f"With a fixed {c.lever_label}, taking MSY puts the setting exactly on the tipping "
            f"point ({c.lv(y['lever_at_msy'])}): any shortfall in growth then collapses the "
            "stock, so MSY is a limit, not a target."
        )
        out.append(sentence("msy-caution", text, figure, y["lever_at_msy"]))
    if finite(y.get("current_yield")):
        share = wording.percent(y["current_yield"] / y["msy"], given="fraction")
        text = f"Today's sustainable yield is {c.y(y['current_yield'])}, {share} of MSY."
        out.append(
            sentence(
                "current-yield",
                text,
                figure,
                y["current_yield"],
                y["current_yield"] / y["msy"] * 100,
            )
        )
    return out


def stock_status(c: Context) -> list[Sentence]:
    """Today's stock against B_MSY and the limit, trigger and target reference levels."""
    st = get(c.summary, "limits", "stock_status")
    if not st or not finite(st.get("current")) or not finite(st.get("limit")):
        return []
    current, limit = st["current"], st["limit"]
    source = (
        f"{c.its} declared limit level"
        if str(st.get("limit_source", "")).startswith("[reference]")
        else "a limit level taken as half of BMSY (common practice)"
    )
    above = "below" if st.get("below_limit") else "above"
    text = f"Today's {c.state} of {c.s(current)} {c.verb('is')} {above} {source}, {c.s(limit)}"
    values: list[float | None] = [current, limit]
    ratio = st.get("ratio_to_b_msy")
    if finite(ratio):
        text += f", and {wording.number(ratio)} times BMSY"
        values.append(ratio)
    ref = c.scenario.reference
    others = [(w, v) for w, v in (("trigger", ref.trigger), ("target", ref.target)) if finite(v)]
    if others:
        parts = [
            f"{'above' if current >= v else 'below'} the {w} level of {c.s(v)}" for w, v in others
        ]
        text += f"; {c.it} {c.verb('is')} " + " and ".join(parts)
        values.extend(v for _, v in others)
    out = [sentence("stock-status", text + ".", None, *values)]
    if c.fishery and not c.lower:
        out.extend(_overfished(c, st))
    return out


def _overfished(c: Context, st: dict[str, Any]) -> list[Sentence]:
    """Overfished (the stock, against its limit) and overfishing (the catch, against MSY's)."""
    y = get(c.summary, "limits", "sustainable_yield")
    lever_value = get(c.summary, "limits", "lever_value")
    fished = "overfished" if st.get("below_limit") else "not overfished"
    text = f"The stock is {fished} (its size against the limit level, {c.s(st['limit'])})"
    values: list[float | None] = [st["limit"]]
    if y and finite(y.get("lever_at_msy")) and finite(lever_value):
        over = lever_value > y["lever_at_msy"]
        text += (
            f", and {'overfishing is' if over else 'there is no overfishing'} (today's "
            f"{c.lv(lever_value)} against {c.lv(y['lever_at_msy'])} at MSY)"
        )
        values.extend([lever_value, y["lever_at_msy"]])
    return [sentence("overfished", text + ".", None, *values)]


def certainty(c: Context) -> list[Sentence]:
    """How sure: the collapse (flip) risk under today's lever, the safe lever, quantiles."""
    o = base_outcome(c.summary)
    u = get(c.summary, "uncertainty") or {}
    if not risk_applies(c, o) or o is None or not finite(o.get("samples")):
        return []  # e.g. no sample has a high state to flip to: no risk to state
    names = [parameter_words(c, p.get("name", "")) for p in u.get("parameters") or []]
    listed = ", ".join(names[:-1]) + " and " + names[-1] if len(names) > 1 else "".join(names)
    spread = f" in the {listed}" if listed else ""
    risk, samples, tol = o["collapse_risk"], o["samples"], u.get("tolerance")
    what = "a flip to the high state" if c.lower else "collapse"
    under = (
        f"under today's {c.lever_label}"
        if o.get("lever_value") is not None
        else "under today's settings"
    )
    figure = c.figure("risk")
    if o.get("collapsed"):
        text = (
            f"Allowing for the uncertainty{spread} ({wording.number(samples)} samples), the "
            f"risk of {what} {under} is {wording.percent(risk, given='fraction')}"
        )
        values: list[float | None] = [samples, risk * 100]
    else:
        text = (
            f"Allowing for the uncertainty{spread}, none of {wording.number(samples)} samples "
            f"ends in {what} {under}"
        )
        values = [samples]
    if finite(tol):
        verdict = "above" if risk > tol else "within"
        text += f", {verdict} the tolerance of {wording.percent(tol, given='fraction')}"
        values.append(tol * 100)
    out = [sentence("certainty", text + ".", figure, *values)]
    safe = o.get("safe_lever")
    search = o.get("lever_search") or ()
    inside = (
        len(search) != 2
        or not all(finite(v) for v in search)
        or (min(search) <= safe <= max(search) if finite(safe) else False)
    )
    if finite(safe) and finite(tol) and c.lever is not None and inside:
        side = "at most" if o.get("limit_side") != "smallest" else "at least"
        text = (
            f"To keep the risk of {what} at {wording.percent(tol, given='fraction')} or less, "
            f"allowing for the uncertainty, the {c.lever_label} must be {side} {c.lv(safe)}."
        )
        out.append(sentence("safe-setting", text, figure, tol * 100, safe))
    q = o.get("lever_limit")
    spread_ok = q and all(finite(q.get(k)) for k in ("p05", "p50", "p95"))
    if spread_ok and q["p05"] != q["p95"] and c.lever is not None:
        text = (
            f"The tipping point itself is uncertain: 90% of the samples put it "
            f"between {c.lv(q['p05'])} and {c.lv(q['p95'])} (median {c.lv(q['p50'])})."
        )
        out.append(sentence("limit-spread", text, figure, q["p05"], q["p95"], q["p50"]))
    return out
