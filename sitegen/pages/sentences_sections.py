"""Lead sentences of the dossier sections, and the sentences of scenarios without a lever.

``milestones`` reads ``summary["dynamics"]["milestones"]`` when the dynamics
stage provides it (times until the state crosses a declared reference level,
the 50% and 95% times of the approach, the half-life) and writes nothing when
it is absent. ``reference_levels`` compares the resting state with the declared
limit and target levels.
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

SECTIONS = ("equilibria", "dynamics", "policies", "uncertainty", "sensitivity", "economics")


def _stable(c: Context) -> list[float]:
    return [
        e["value"]
        for e in c.summary.get("equilibria") or []
        if e.get("stability") == "stable" and finite(e.get("value"))
    ]


def _milestone_set(data: Any) -> dict[str, Any] | None:
    """The base model's milestones: the stage gives one set, or one per model (by name)."""
    if isinstance(data, list):
        sets = [m for m in data if isinstance(m, dict)]
        data = next((m for m in sets if m.get("name") == "base"), sets[0] if sets else None)
    return data if isinstance(data, dict) else None


def milestones(c: Context) -> list[Sentence]:
    """Times until the state crosses its reference levels, and the 50% / 95% times."""
    found = _milestone_set(get(c.summary, "dynamics", "milestones"))
    if found is None:
        return []
    marks = [m for m in found.get("milestones") or [] if isinstance(m, dict)]
    figure = c.figure("trajectories")
    out: list[Sentence] = []
    shares = {str(m.get("kind")): m for m in marks if str(m.get("kind", "")).endswith("way")}
    half, most = shares.get("50% of the way"), shares.get("95% of the way")
    start, rest = found.get("start"), found.get("attractor")
    for m in marks:
        kind, level, time = str(m.get("kind", "")), m.get("level"), m.get("time")
        if kind.endswith("way") or not finite(level):
            continue
        if finite(time):
            text = f"The {c.state} reaches its {kind} level of {c.s(level)} after {c.t(time)}."
            out.append(sentence("milestone", text, figure, level, time))
        elif m.get("settles") in ("above", "below") and finite(rest):
            text = (
                f"The {c.state} never reaches its {kind} level of {c.s(level)}: it comes to "
                f"rest {m['settles']} it, at {c.s(rest)}."
            )
            out.append(sentence("milestone", text, figure, level, rest))
    if half and finite(half.get("time")) and finite(start) and finite(rest):
        text = (
            f"Half of the way from today's {c.s(start)} to the resting {c.s(rest)} takes "
            f"{c.t(half['time'])}"
        )
        values: list[float | None] = [start, rest, half["time"]]
        if most and finite(most.get("time")):
            text += f"; 95% of the way takes {c.t(most['time'])}"
            values.append(most["time"])
        out.append(sentence("milestone", text + ".", figure, *values))
    return out


def reference_levels(c: Context) -> list[Sentence]:
    """The resting state against the declared limit and target (when no stock status does it)."""
    if get(c.summary, "limits", "stock_status"):
        return []
    stable = _stable(c)
    attractor = get(c.summary, "dynamics", "trajectory", "attractor")
    rest = attractor if finite(attractor) else (stable[0] if len(stable) == 1 else None)
    ref = c.scenario.reference
    out: list[Sentence] = []
    for word, level in (("limit", ref.limit), ("target", ref.target), ("trigger", ref.trigger)):
        if not finite(level) or not finite(rest):
            continue
        good = rest <= level if c.lower else rest >= level
        side = "above" if rest > level else "below" if rest < level else "at"
        verdict = "meets" if good else "misses"
        text = (
            f"The {c.state} comes to rest at {c.s(rest)}, {side} the {word} level of "
            f"{c.s(level)}: it {verdict} it."
        )
        out.append(sentence("reference", text, c.figure("phase-line"), rest, level))
    return out


def _equilibria(c: Context) -> list[Sentence]:
    stable = _stable(c)
    figure = c.figure("phase-line")
    if not stable:
        return []
    if len(stable) == 1:
        text = f"At today's settings the {c.state} has one stable resting level, {c.s(stable[0])}."
    else:
        levels = ", ".join(c.s(v) for v in stable[:-1]) + " and " + c.s(stable[-1])
        text = (
            f"At today's settings the {c.state} has {len(stable)} stable resting levels: {levels}."
        )
    out = [sentence("equilibria", text, figure, *stable)]
    thresholds = [t for t in c.summary.get("thresholds") or [] if finite(t)]
    if thresholds:
        t = thresholds[0]
        if len(stable) > 1:
            text = (
                f"The threshold at {c.s(t)} divides them: from below it the {c.state} goes "
                "to the lower level, from above it to the upper one."
            )
        elif c.lower:
            text = f"Above {c.s(t)} the {c.state} runs away upwards instead of returning."
        else:
            text = f"Below {c.s(t)} the {c.state} falls away instead of returning."
        out.append(sentence("threshold", text, figure, t))
    return out


def _dynamics(c: Context) -> list[Sentence]:
    r = get(c.summary, "dynamics", "recovery")
    if not r or not finite(r.get("shock")) or not finite(r.get("stable_state")):
        return []
    if not finite(r.get("start")):
        return []
    lead = (
        f"After a shock that moves it from its resting level of {c.s(r['stable_state'])} to "
        f"{c.s(r['start'])}, the {c.state}"
    )
    figure = c.figure("trajectories")
    if finite(r.get("time_to_10")):
        text = f"{lead} is back within 10% of it in {c.t(r['time_to_10'])}"
        values = [r["stable_state"], r["start"], r["time_to_10"]]
        if finite(r.get("time_to_1")):
            text += f" and within 1% in {c.t(r['time_to_1'])}"
            values.append(r["time_to_1"])
        return [sentence("recovery-time", text + ".", figure, *values)]
    text = f"{lead} does not come back: the shock pushes it past a threshold."
    return [sentence("recovery-time", text, None, r["stable_state"], r["start"])]


def _policies(c: Context) -> list[Sentence]:
    rows = get(c.summary, "policies", "rows") or []
    best = get(c.summary, "policies", "best") or {}
    named = {r.get("name"): r for r in rows}
    out: list[Sentence] = []
    key, words = ("stable_state", "the lowest resting level" if c.lower else "the largest stock")
    row = named.get(best.get(key))
    if row is not None and finite(row.get(key)) and len(rows) > 1:
        text = f"Of the {len(rows)} rows compared, {row['name']} gives {words}, {c.s(row[key])}."
        out.append(sentence("policies", text, None, len(rows), row[key]))
    row = named.get(best.get("yield"))
    if row is not None and finite(row.get("yield")) and len(rows) > 1:
        text = f"The largest sustainable yield comes from {row['name']}: {c.y(row['yield'])}."
        out.append(sentence("policies-yield", text, None, row["yield"]))
    lost = [r for r in rows if r.get("stable_state") is None and r.get("name")]
    if lost and len(rows) > 1:
        what = "flips the state up" if c.lower else "loses the stable state"
        text = (
            f"{len(lost)} of the {len(rows)} rows {what}: "
            + ", ".join(r["name"] for r in lost)
            + "."
        )
        out.append(sentence("policies-lost", text, None, len(lost), len(rows)))
    return out


def _uncertainty(c: Context) -> list[Sentence]:
    o = base_outcome(c.summary)
    q = o.get("stable_state") if o else None
    if not q or not all(finite(q.get(k)) for k in ("p05", "p50", "p95")):
        return []
    text = (
        f"Under the uncertainty, the resting {c.state} lies between {c.s(q['p05'])} and "
        f"{c.s(q['p95'])} in 90% of the samples (median {c.s(q['p50'])})."
    )
    return [sentence("state-spread", text, None, q["p05"], q["p95"], q["p50"])]


def _sensitivity(c: Context) -> list[Sentence]:
    models = get(c.summary, "sensitivity", "models") or []
    base = next((m for m in models if m.get("name") == "base"), None)
    target = get(base, "lever_limit") or get(base, "states", 0)
    if not target:
        return []
    ranked = [s for s in target.get("sensitivities") or [] if finite(s.get("elasticity"))]
    if not ranked:
        return []
    top = max(ranked, key=lambda s: abs(s["elasticity"]))
    what = (
        f"the limit of the {c.lever_label}"
        if get(base, "lever_limit")
        else f"the resting {c.state}"
    )
    e, name = top["elasticity"], str(top.get("parameter"))
    way = "rises" if e > 0 else "falls"
    text = (
        f"{what[0].upper() + what[1:]} depends most on the {parameter_words(c, name)} ({name}): "
        f"a 1% rise in it {way.replace('rises', 'raises').replace('falls', 'lowers')} it by "
        f"{wording.percent(abs(e), given='percent')}."
    )
    return [sentence("sensitivity", text, None, abs(e))]


def _economics(c: Context) -> list[Sentence]:
    e = get(c.summary, "economics", "economic_yield")
    if not e or not finite(e.get("mey_lever")) or not finite(e.get("mey_yield")):
        return []
    money = wording.quantity(e.get("mey_rent"), f"{e.get('currency', '')}/{c.units['time']}")
    text = (
        f"The most profitable setting (maximum economic yield) is {c.lv(e['mey_lever'])}, "
        f"yielding {c.y(e['mey_yield'])} with a rent of {money}."
    )
    out = [sentence("economics", text, None, e["mey_lever"], e["mey_yield"], e.get("mey_rent"))]
    limit = get(c.summary, "limits", "lever_limit", "limit")
    if finite(limit) and wording.number(limit) == wording.number(e["mey_lever"]):
        text = (
            f"That setting is the tipping point itself ({c.lv(limit)}): it leaves no margin "
            "and is not a safe setting."
        )
        out.append(sentence("economics-caution", text, c.figure("bifurcation"), limit))
    return out


def section_leads(c: Context) -> dict[str, list[Sentence]]:
    """The lead sentences of each section (every section key present)."""
    return {
        "equilibria": _equilibria(c),
        "dynamics": _dynamics(c),
        "policies": _policies(c),
        "uncertainty": _uncertainty(c),
        "sensitivity": _sensitivity(c),
        "economics": _economics(c),
    }
