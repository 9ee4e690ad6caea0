"""The readable sections of the terminal report, one builder per assessment section.

Every number is given to 4 significant figures with its unit (state, lever,
time, yield and money units from :attr:`Assessment.units`); '-' means the
figure does not apply. The policy table marks the best cell of each row
with an asterisk, ties included.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from sitegen.dynamics.assess import Assessment
from sitegen.dynamics.records import FALLING, Milestone, Milestones, PolicyRow
from sitegen.dynamics.uncertainty import Quantiles, UncertaintyOutcome
from sitegen.scenario.records import LOWER

TIE = 1e-9  # relative: values this close to the best of a row are marked best too
TOP_ELASTICITIES = 3


def _n(value: float | None, unit: str = "", digits: int = 4) -> str:
    """A number to ``digits`` significant figures with its unit; '-' for none."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    if not math.isfinite(value):
        return "unbounded"
    text = f"{value:.{digits}g}"
    return f"{text} {unit}".rstrip() if unit else text


def _time(value: float | None, unit: str) -> str:
    return "does not happen" if value is None else _n(value, unit)


def limits_lines(a: Assessment) -> list[str]:
    u = a.units
    lines = ["Limits and margins:"]
    limit = a.lever_limit
    if limit is not None:
        side = "at most" if limit.direction == "largest" else "at least"
        lines.append(
            f"  lever limit: {limit.lever} {side} {_n(limit.limit, u['lever'])} ({limit.kind}; "
            f"state there {_n(limit.state_at_limit, u['state'])})"
        )
        percent = "" if limit.margin_percent is None else f", {_n(limit.margin_percent, '%')}"
        verdict = "safe side" if limit.margin > 0 else "PAST THE LIMIT"
        lines.append(
            f"  today {limit.lever} = {_n(limit.current, u['lever'])}: margin "
            f"{_n(limit.margin, u['lever'])}{percent} of the limit ({verdict})"
        )
    msy = a.sustainable_yield
    if msy is not None:
        at = " (at the tipping point)" if msy.at_fold else ""
        lines.append(
            f"  MSY {_n(msy.msy, u['yield'])} at {msy.lever} = {_n(msy.lever_at_msy, u['lever'])}"
            f"{at}; B_MSY {_n(msy.state_at_msy, u['state'])}"
        )
        lines.append(f"  today's sustainable yield: {_n(msy.current_yield, u['yield'])}")
    status = a.stock_status
    if status is not None:
        below = "BELOW the limit" if status.below_limit else "above the limit"
        lines.append(
            f"  stock status: {_n(status.current, u['state'])} = {_n(status.ratio_to_b_msy)} x "
            f"B_MSY; limit {_n(status.limit, u['state'])} ({status.limit_source}): "
            f"{_n(status.ratio_to_limit)} x the limit, {below}"
        )
    return lines


def dynamics_lines(a: Assessment) -> list[str]:
    u = a.units
    lines = ["Dynamics:"]
    t = a.trajectory
    if t is not None:
        settle = t.time_of("within 1%")
        where = f" to {_n(t.attractor, u['state'])}" if t.attractor is not None else ""
        when = f", within 1% after {_n(settle, u['time'])}" if settle is not None else ""
        lines.append(f"  from today's {_n(t.start, u['state'])}: {t.fate}{where}{when}")
        fall = t.time_of("collapse")
        if fall is not None:
            lines.append(
                f"  reaches the collapse level {_n(t.collapse_level, u['state'])} "
                f"after {_n(fall, u['time'])}"
            )
    c = a.collapse
    lower = a.better == LOWER
    if c is not None:
        lines.append(
            f"  {c.lever} = {_n(c.lever_value, u['lever'])} is {_n(c.distance, u['lever'])} past "
            f"the fold at {_n(c.fold_value, u['lever'])}: "
            + ("flip up to " if lower else "collapse to ")
            + f"{_n(c.collapse_level, u['state'])} in {_time(c.collapse_time, u['time'])} "
            f"(bottleneck estimate pi/sqrt(ab) = {_n(c.ghost_time, u['time'])})"
        )
    r = a.recovery
    shock = ""
    if r is not None:
        how = "a rise of" if lower else "losing"
        shock = (
            f"  after {how} {_n(100 * r.shock, '%')} of {_n(r.stable_state, u['state'])} (to "
            f"{_n(r.start, u['state'])})"
        )
    if r is not None and r.time_to_10 is None:
        lines.append(f"{shock}: no return; {r.note or r.fate}")
    elif r is not None:
        lines.append(
            f"{shock}: back "
            f"within 10% in {_time(r.time_to_10, u['time'])}, within 1% in "
            f"{_time(r.time_to_1, u['time'])} (return time 1/|f'| = "
            f"{_n(r.return_time, u['time'])})"
        )
    lines.extend(milestone_lines(a))
    h = a.hysteresis
    if h is not None:
        if h.irreversible:
            back = "no setting inside its range brings it back (irreversible there)"
        else:
            back = (
                f"it returns only once {h.lever} is back at {_n(h.return_value, u['lever'])} "
                f"({_n(h.distance, u['lever'])} beyond the fold)"
            )
        lines.append(
            f"  hysteresis: once {h.lever} passes {_n(h.fold_value, u['lever'])} the state "
            + ("flips up " if lower else "falls ")
            + f"to {_n(h.collapsed_state, u['state'])}; {back}"
        )
    return lines


def _milestone_text(row: Milestones, m: Milestone, u: dict[str, str]) -> str:
    """One milestone: its level and time, or why the run does not cross it."""
    if m.kind in ("limit", "target", "trigger"):
        label = f"{m.kind} {_n(m.level, u['state'])}"
    else:
        label = f"{m.kind} ({_n(m.level, u['state'])})"
    if m.time is not None:
        return f"{label} after {_n(m.time, u['time'])}"
    sign = -1.0 if row.direction == FALLING else 1.0
    if sign * (m.level - row.start) <= 0:
        side = "above" if row.start > m.level else "below"
        return f"{label} not crossed (already {side} it)"
    if row.attractor is not None and m.settles is not None:
        return f"{label} not crossed (settles {m.settles} it, at {_n(row.attractor, u['state'])})"
    return f"{label} not crossed ({m.note})"


def milestone_lines(a: Assessment) -> list[str]:
    """How long until: the reference levels and 50% / 95% of the way, per model."""
    if not a.milestones:
        return []
    u = a.units
    lines = [f"  milestones from today's {_n(a.milestones[0].start, u['state'])}:"]
    for row in a.milestones:
        if row.attractor is not None:
            where = f"{row.direction} to {_n(row.attractor, u['state'])}"
        else:
            where = f"{row.direction}, does not settle in the region"
        parts = "; ".join(_milestone_text(row, m, u) for m in row.milestones)
        lines.append(f"    {row.name} ({where}): {parts or row.note or 'no levels to cross'}")
    for setting in a.milestones[0].lever_settings:
        where = f"{setting.kind} {_n(setting.level, u['state'])}"
        if setting.lever_value is None:
            lines.append(f"  {where}: {setting.note}")
            continue
        kind = "stable" if setting.stable else "unstable"
        lines.append(
            f"  {where} is the {kind} resting state at {setting.lever} = "
            f"{_n(setting.lever_value, u['lever'])} (today {_n(a.lever_value, u['lever'])})"
        )
    return lines


def _marked(rows: Sequence[PolicyRow], values: list[float | None], best: str | None) -> list[bool]:
    """Which cells carry the best marker: the named best row and any exact tie with it."""
    target = next((v for r, v in zip(rows, values, strict=True) if r.name == best), None)
    if target is None:
        return [False] * len(values)
    return [v is not None and abs(v - target) <= TIE * max(abs(target), 1e-300) for v in values]


def _bound(value: float | None, o: UncertaintyOutcome | None) -> str:
    """A safe lever setting, with the censored ends of the lever search spelt out."""
    if value is None or o is None or o.lever_search is None or math.isfinite(value):
        return _n(value)
    if o.limit_side == "smallest":  # the lever must stay above the limits
        return "none found" if value > 0 else f"any >= {_n(o.lever_search[0])}"
    if value > 0:
        return f">= {_n(o.lever_search[1])}"
    return "none found"


def policy_lines(a: Assessment) -> list[str]:
    table = a.policies
    if table is None:
        return []
    u = a.units
    rows = table.rows
    outcomes = {o.name: o for o in a.uncertainty.outcomes} if a.uncertainty else {}
    lever = a.lever or "lever"

    def limit_of(r: PolicyRow, key: str) -> float | None:
        return getattr(r.limit, key) if r.limit is not None else None

    def risk(r: PolicyRow) -> float | None:
        o = outcomes.get(r.name)
        return 100.0 * o.collapse_risk if o is not None else None

    def safe(r: PolicyRow) -> float | None:
        o = outcomes.get(r.name)
        return o.safe_lever if o is not None else None

    lower = a.better == LOWER
    word = "flip" if lower else "collapse"
    flips = any(np.isfinite(o.lever_limits).any() or o.collapsed for o in outcomes.values())
    if lower and not flips:
        outcomes = {}  # no sample can flip (e.g. a decaying contaminant): no risk rows
    risks = [risk(r) for r in rows]
    present = [(v, r.name) for v, r in zip(risks, rows, strict=True) if v is not None]
    figures: list[tuple[str, list[float | None], str | None]] = [
        (f"{lever} setting ({u['lever']})", [r.lever_value for r in rows], None),
        (f"stable state ({u['state']})", [r.stable_state for r in rows], "stable_state"),
        (f"sustainable yield ({u['yield']})", [r.yield_ for r in rows], "yield_"),
        (f"{lever} limit ({u['lever']})", [limit_of(r, "limit") for r in rows], None),
        (f"margin ({u['lever']})", [limit_of(r, "margin") for r in rows], "margin"),
        ("margin (% of limit)", [limit_of(r, "margin_percent") for r in rows], None),
        (f"return time ({u['time']})", [r.return_time for r in rows], "return_time"),
        (f"recovery to 10% ({u['time']})", [r.recovery_time for r in rows], "recovery_time"),
        (f"time to {word} ({u['time']})", [r.collapse_time for r in rows], "collapse_time"),
    ]
    if outcomes:
        lowest = min(present)[1] if present else None
        figures.append((f"{word} risk (%)", risks, f"risk:{lowest}"))
        figures.append((f"safe {lever} ({u['lever']})", [safe(r) for r in rows], None))
    grid = [["", *[r.name for r in rows]]]
    for label, values, key in figures:
        if all(v is None for v in values) or (key == "recovery_time" and not a.shock_applies):
            continue  # a figure no policy has (no lever, no yield, no shock test) is left out
        best = key[5:] if key and key.startswith("risk:") else table.best.get(key) if key else None
        marks = _marked(rows, values, best)
        cells = [_n(v) + ("*" if m else " ") for v, m in zip(values, marks, strict=True)]
        if key == "recovery_time":
            # A stable state without a return: the shock pushes it past a threshold.
            cells = [
                "no return " if r.stable_state is not None and v is None else c
                for r, v, c in zip(rows, values, cells, strict=True)
            ]
        if label.startswith("safe "):
            cells = [
                _bound(v, outcomes.get(r.name)) + " " for r, v in zip(rows, values, strict=True)
            ]
        grid.append([label, *cells])
    widths = [max(len(line[k]) for line in grid) for k in range(len(grid[0]))]
    lines = ["Policies side by side (* best on the row):"]
    for line in grid:
        cells = [line[0].ljust(widths[0])] + [
            c.rjust(w) for c, w in zip(line[1:], widths[1:], strict=True)
        ]
        lines.append("  " + "  ".join(cells).rstrip())
    lines.append(
        "  best: "
        + ("lowest stable state; largest yield" if lower else "largest stable state, yield")
        + f" and margin; shortest return and recovery; longest time to {word}; lowest "
        + f"{word} risk; '-' = does not apply"
    )
    for r in rows:
        if a.lever is not None and r.lever_value is None:
            lines.append(f"  note ({r.name}): this rule does not use {a.lever}")
        lines.extend(f"  note ({r.name}): {text}" for text in r.notes)
    return lines


def uncertainty_lines(a: Assessment) -> list[str]:
    u = a.uncertainty
    if u is None:
        return []
    units = a.units
    spread = ", ".join(f"{p.name} {p.distribution}" for p in u.parameters)
    lower = a.better == LOWER
    word = "flip" if lower else "collapse"
    lines = [
        f"Uncertainty ({u.samples} samples, seed {u.seed}; {spread}; "
        + (
            "flip = no low stable state left, the state goes up to the high one):"
            if lower
            else "collapse = no stable positive state left):"
        )
    ]

    def q(value: Quantiles | None, unit: str) -> str:
        if value is None:
            return "-"
        return f"{_n(value.p05)} / {_n(value.p50)} / {_n(value.p95, unit)}"

    for o in u.outcomes:
        if lower and not o.collapsed and not np.isfinite(o.lever_limits).any():
            lines.append(
                f"  {o.name}: no sample has a high state to flip to; the low state "
                f"{q(o.stable_state, units['state'])} (5/50/95%) holds at every setting: "
                "no flip risk or lever limit applies"
            )
            continue
        lines.append(
            f"  {o.name}: "
            + ("risk of a flip to the high state " if lower else "collapse risk ")
            + f"{_n(100 * o.collapse_risk, '%')} "
            f"({o.collapsed} of {o.samples} samples, s.e. {_n(100 * o.collapse_risk_se, '%')})"
        )
        lines.append(
            ("    low " if lower else "    ")
            + f"stable state 5/50/95%: {q(o.stable_state, units['state'])}"
        )
        if o.yield_ is not None:
            lines.append(f"    yield 5/50/95%: {q(o.yield_, units['yield'])}")
        if o.lever_limit is not None:
            lines.append(f"    {o.lever} limit 5/50/95%: {q(o.lever_limit, units['lever'])}")
        if o.safe_lever is not None:
            bound = f" ({o.safe_lever_bound})" if o.safe_lever_bound else ""
            if o.limit_side == "smallest" and not bound:
                bound = f" ({o.lever} at least this)"  # a control effort: more is safer
            lines.append(
                f"    safe {o.lever} setting ({word} risk at most {_n(100 * u.tolerance, '%')}, "
                f"a common precautionary choice, no single source): "
                f"{_bound(o.safe_lever, o)} {units['lever']}{bound}"
            )
        lines.extend(f"    WARNING: {w}" for w in o.warnings)
    lines.append(f"  tolerance: {u.tolerance_note}")
    return lines


def sensitivity_lines(a: Assessment) -> list[str]:
    if not a.sensitivity:
        return []
    lines = ["Sensitivity (largest elasticities, % change per % change of a parameter):"]
    for report in a.sensitivity:
        for state in report.states:
            ranked = sorted(
                (s for s in state.sensitivities if s.elasticity is not None),
                key=lambda s: -abs(s.elasticity or 0.0),
            )[:TOP_ELASTICITIES]
            tops = ", ".join(f"{s.parameter} {_n(s.elasticity)}" for s in ranked)
            lines.append(f"  {report.name}, state {_n(state.state, a.units['state'])}: {tops}")
        if report.lever_limit is not None:
            limit = report.lever_limit
            ranked = sorted(
                (s for s in limit.sensitivities if s.elasticity is not None),
                key=lambda s: -abs(s.elasticity or 0.0),
            )[:TOP_ELASTICITIES]
            tops = ", ".join(f"{s.parameter} {_n(s.elasticity)}" for s in ranked)
            lines.append(
                f"  {report.name}, {limit.lever} limit {_n(limit.lever_limit, a.units['lever'])}: "
                f"{tops}"
            )
        lines.extend(f"  WARNING ({report.name}): {w}" for w in report.warnings)
    return lines


def economics_lines(a: Assessment) -> list[str]:
    e = a.economics
    if e is None:
        return []
    u = a.units
    money = f"{e.currency}/{u['time']}".lstrip("/")
    lines = [
        f"Economics (price {_n(e.price, e.currency)} per {u['state']}, cost "
        f"{_n(e.cost, e.currency)} per {u['lever']} per {u['time']}):"
    ]
    if e.open_access_lever is None:
        lines.append("  open access: none (rent stays positive along the stable branch)")
    else:
        lines.append(
            f"  open access: {a.lever} = {_n(e.open_access_lever, u['lever'])}, state "
            f"{_n(e.open_access_state, u['state'])}, yield {_n(e.open_access_yield, u['yield'])}"
        )
    lines.append(
        f"  MEY: {a.lever} = {_n(e.mey_lever, u['lever'])}, state {_n(e.mey_state, u['state'])}, "
        f"yield {_n(e.mey_yield, u['yield'])}, rent {_n(e.mey_rent, money)}"
    )
    lines.append(f"  MSY: {_n(e.msy, u['yield'])} at {a.lever} = {_n(e.msy_lever, u['lever'])}")
    limit = a.lever_limit
    if limit is not None and abs(e.mey_lever - limit.limit) <= TIE * max(abs(limit.limit), 1.0):
        lines.append(
            "  MEY sits at the tipping point itself: it leaves no margin and is not a safe setting"
        )
    return lines
