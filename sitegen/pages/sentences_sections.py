"""Lead sentences of the dossier sections, and the sentences of scenarios without a lever.

The sentences about reference levels (milestones, resting state against the limit and
target, lever settings, the resting state's spread) are in
:mod:`sitegen.pages.sentences_levels`.
"""

from __future__ import annotations

from typing import Any

from sitegen.pages import wording
from sitegen.pages.sentences_context import (
    Context,
    Sentence,
    base_outcome,
    can_tip,
    finite,
    get,
    parameter_words,
    sentence,
)
from sitegen.pages.sentences_levels import (
    crossing_verb,
    crossings,
    listed,
    rest_spread,
    stable_levels,
)

SECTIONS = ("equilibria", "dynamics", "policies", "uncertainty", "sensitivity", "economics")


def _equilibria(c: Context) -> list[Sentence]:
    stable = stable_levels(c)
    figure = c.figure("phase-line")
    if not stable:
        return []
    if len(stable) == 1:
        text = (
            f"At today's settings the {c.state} {c.verb('has')} one stable resting level, "
            f"{c.s(stable[0])}."
        )
    else:
        levels = ", ".join(c.s(v) for v in stable[:-1]) + " and " + c.s(stable[-1])
        text = (
            f"At today's settings the {c.state} {c.verb('has')} {len(stable)} stable resting "
            f"levels: {levels}."
        )
    out = [sentence("equilibria", text, figure, *stable)]
    thresholds = [t for t in c.summary.get("thresholds") or [] if finite(t)]
    if thresholds:
        t = thresholds[0]
        if len(stable) > 1:
            text = (
                f"The threshold at {c.s(t)} divides them: from below it the {c.state} "
                f"{c.verb('goes')} to the lower level, from above it to the upper one."
            )
        elif c.lower:
            text = (
                f"Above {c.s(t)} the {c.state} {c.verb('runs')} away upwards instead of returning."
            )
        else:
            text = f"Below {c.s(t)} the {c.state} {c.verb('falls')} away instead of returning."
        out.append(sentence("threshold", text, figure, t))
    return out


def _dynamics(c: Context) -> list[Sentence]:
    r = get(c.summary, "dynamics", "recovery")
    if not r or not finite(r.get("shock")) or not finite(r.get("stable_state")):
        return []
    if not finite(r.get("start")):
        return []
    lead = (
        f"After a shock that moves {c.it} from {c.its} resting level of "
        f"{c.s(r['stable_state'])} to {c.s(r['start'])}, the {c.state}"
    )
    figure = c.figure("trajectories")
    if finite(r.get("time_to_10")):
        text = f"{lead} {c.verb('is')} back within 10% of it in {c.t(r['time_to_10'])}"
        values = [r["stable_state"], r["start"], r["time_to_10"]]
        if finite(r.get("time_to_1")):
            text += f" and within 1% in {c.t(r['time_to_1'])}"
            values.append(r["time_to_1"])
        return [sentence("recovery-time", text + ".", figure, *values)]
    text = f"{lead} {c.verb('does')} not come back: the shock pushes {c.it} past a threshold."
    return [sentence("recovery-time", text, None, r["stable_state"], r["start"])]


def _row_name(name: str) -> str:
    """An option's name for a list: quoted when it holds a comma of its own."""
    if name == "base":
        return "today's settings"
    return f"\u201c{name}\u201d" if "," in name else name


def _distinct(c: Context, rows: list[dict[str, Any]], key: Any) -> list[dict[str, Any]]:
    """Rows with ``key(row)`` finite, "base" dropped when a named row gives the same."""
    kept = [r for r in rows if r.get("name") and finite(key(r))]
    others = [wording.number(key(r)) for r in kept if r["name"] != "base"]
    return [r for r in kept if r["name"] != "base" or wording.number(key(r)) not in others]


def _policy_times(c: Context, rows: list[dict[str, Any]]) -> list[Sentence]:
    """How long each option takes to cross the first reference level most of them cross."""
    times = {r["name"]: crossings(c, r["name"]) for r in rows if r.get("name")}
    kinds = [k for k in ("limit", "target", "trigger") if sum(k in v for v in times.values()) > 1]
    if not kinds:
        return []
    kind = kinds[0]
    rows = _distinct(c, rows, lambda r: times.get(r["name"], {}).get(kind, (0, None))[1])
    if len(rows) < 2:
        return []
    level = times[rows[0]["name"]][kind][0]
    start = get(c.summary, "dynamics", "trajectory", "start")
    verb = crossing_verb(c, level > start if finite(start) else c.lower)
    parts = [f"{c.t(times[r['name']][kind][1])} with {_row_name(r['name'])}" for r in rows]
    text = (
        f"The time until the {c.state} {verb} {c.its} {kind} level of {c.s(level)}: "
        f"{listed(parts)}."
    )
    values = [level, *(times[r["name"]][kind][1] for r in rows)]
    return [sentence("policies-time", text, c.figure("trajectories"), *values)]


def _policy_levels(c: Context, rows: list[dict[str, Any]]) -> list[Sentence]:
    """Where each option leaves the resting state against the declared limit level."""
    limit = c.scenario.reference.limit
    rows = _distinct(c, rows, lambda r: r.get("stable_state"))
    rests = {wording.number(r["stable_state"]) for r in rows}
    if not finite(limit) or len(rows) < 2 or len(rests) < 2:
        return []
    sides = {(r["stable_state"] <= limit) == c.lower for r in rows}
    if can_tip(c) and len(sides) < 2:
        return []  # every option on the same side: the tipping point tells the story
    parts = []
    for r in rows:
        rest = r["stable_state"]
        good = rest <= limit if c.lower else rest >= limit
        parts.append(f"{_row_name(r['name'])}, {c.s(rest)} ({'inside' if good else 'past'} it)")
    text = f"Against {c.its} limit of {c.s(limit)}, the {c.state} {c.verb('settles')} at: "
    text += "; ".join(parts) + "."
    values = [limit, *(r["stable_state"] for r in rows)]
    return [sentence("policies-limit", text, None, *values)]


def _policies(c: Context) -> list[Sentence]:
    rows = [r for r in get(c.summary, "policies", "rows") or [] if isinstance(r, dict)]
    best = get(c.summary, "policies", "best") or {}
    named = {r.get("name"): r for r in rows}
    out: list[Sentence] = _policy_times(c, rows) + _policy_levels(c, rows)
    key = "stable_state"
    words = f"the lowest resting {c.state}" if c.lower else f"the highest resting {c.state}"
    if c.fishery and not c.lower:
        words = "the largest stock"
    row = named.get(best.get(key))
    rests = {wording.number(r.get(key)) for r in rows if finite(r.get(key))}
    if row is not None and finite(row.get(key)) and len(rests) > 1 and not out:
        text = (
            f"Of the {len(rows)} options compared, {_row_name(row['name'])} gives {words}, "
            f"{c.s(row[key])}."
        )
        out.append(sentence("policies", text, None, len(rows), row[key]))
    row = named.get(best.get("yield"))
    if row is not None and finite(row.get("yield")) and len(rows) > 1:
        text = (
            f"The largest sustainable yield comes from {_row_name(row['name'])}: "
            f"{c.y(row['yield'])}."
        )
        out.append(sentence("policies-yield", text, None, row["yield"]))
    # An option whose state rests on the region's edge (decay to zero) has no stable
    # state in the table but a resting level in its milestones: it has lost nothing.
    resting = {
        m.get("name")
        for m in get(c.summary, "dynamics", "milestones") or []
        if isinstance(m, dict) and finite(m.get("attractor"))
    }
    lost = [
        r
        for r in rows
        if r.get("stable_state") is None and r.get("name") and r["name"] not in resting
    ]
    if lost and len(rows) > 1:
        what = "flip the state up" if c.lower else "lose the stable state"
        if len(lost) == 1:
            what = "flips the state up" if c.lower else "loses the stable state"
        text = (
            f"{len(lost)} of the {len(rows)} options {what}: "
            + ", ".join(_row_name(r["name"]) for r in lost)
            + "."
        )
        out.append(sentence("policies-lost", text, None, len(lost), len(rows)))
    return out


def _uncertainty(c: Context) -> list[Sentence]:
    found = rest_spread(c)
    if found is None:
        return []
    return [sentence("state-spread", found[0], None, *found[1])]


def _sensitivity(c: Context) -> list[Sentence]:
    models = get(c.summary, "sensitivity", "models") or []
    base = next((m for m in models if m.get("name") == "base"), None)
    # A lever limit means a tipping point only where the model can tip at all.
    on_limit = bool(get(base, "lever_limit")) and can_tip(c)
    target = get(base, "lever_limit") if on_limit else get(base, "states", 0)
    if not target:
        return []
    ranked = [s for s in target.get("sensitivities") or [] if finite(s.get("elasticity"))]
    if not ranked:
        return []
    top = max(ranked, key=lambda s: abs(s["elasticity"]))
    if on_limit:
        side = get(c.summary, "limits", "lever_limit", "direction") or get(
            base_outcome(c.summary), "limit_side"
        )
        word = "smallest" if side == "smallest" else "largest"
        kept = f"the {c.state} at {c.its} low stable level" if c.lower else c.stable_state
        what = f"The {word} {c.lever_label} that keeps {kept}"
        verb = "depends"
    else:
        what, verb = f"The resting {c.state}", c.verb("depends")
    e, name = top["elasticity"], str(top.get("parameter"))
    words = parameter_words(c, name)
    way = "raises" if e > 0 else "lowers"
    text = (
        f"{what} {verb} most on the {words} ({name}): a 1% rise in the {words} {way} it by "
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
