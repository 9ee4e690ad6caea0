"""The dossier's tables, built from the scenario record and the assessment summary.

Each function returns a :class:`~sitegen.pages.tables.TableView` (or None when
the part does not apply). Units come from the summary's ``units`` map: state,
lever, time, yield and money.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from sitegen.pages import wording
from sitegen.pages.tables import Cell, TableView, cell, row_heading, transpose_policies
from sitegen.scenario.records import Scenario


def _facts(caption: str, facts: list[tuple[str, Any, str]]) -> TableView | None:
    """A two-column table of (label, value, unit); rows with no value are left out."""
    rows = tuple(
        (row_heading(label), cell(value, unit=unit))
        for label, value, unit in facts
        if value is not None
    )
    return TableView(caption, ("Quantity", "Value"), rows) if rows else None


def parameter_table(scenario: Scenario) -> TableView:
    rows = []
    for p in scenario.parameters:
        low_high = (
            f"{wording.number(p.range[0])} to {wording.number(p.range[1])}" if p.range else "–"
        )
        rows.append(
            (
                row_heading(p.name),
                Cell(p.label or "–"),
                cell(p.value, sig=4),
                Cell(p.unit or "–"),
                Cell(low_high, numeric=bool(p.range)),
                Cell("; ".join(part for part in (p.source, p.note) if part) or "–"),
            )
        )
    headers = ("Symbol", "Meaning", "Value", "Unit", "Range explored", "Source and note")
    return TableView("Parameters", headers, tuple(rows))


def state_table(scenario: Scenario, summary: Mapping[str, Any]) -> TableView:
    s = scenario.state
    region = summary["state"]
    facts: list[tuple[str, Any, str]] = [
        ("Lowest value considered", region.get("min"), s.unit),
        ("Highest value considered", region.get("max"), s.unit),
        ("Today's value", s.current, s.unit),
        ("Counted as collapsed below" if s.better == "higher" else "Counted as flipped above",
         s.collapse_level, s.unit),
        ("Limit reference level", scenario.reference.limit, s.unit),
        ("Trigger reference level", scenario.reference.trigger, s.unit),
        ("Target reference level", scenario.reference.target, s.unit),
    ]  # fmt: skip
    table = _facts(f"The state: {s.name} ({s.symbol})", facts)
    assert table is not None  # the region always has a lower end
    better = "higher values are better" if s.better == "higher" else "lower values are better"
    return TableView(table.caption, table.headers, table.rows, (better,))


def equilibria_table(summary: Mapping[str, Any]) -> TableView | None:
    unit = summary["units"]["state"]
    time = summary["units"]["time"]
    rows = []
    for e in summary["equilibria"]:
        rows.append(
            (
                cell(e["value"], sig=6, unit=unit),
                Cell(e["stability"] + (" (on the boundary)" if e.get("on_boundary") else "")),
                cell(e.get("derivative"), sig=4),
                cell(e.get("return_time"), unit=time),
                Cell(e.get("closed_form") or "numeric only"),
                cell(e.get("residual"), sig=2),
            )
        )
    if not rows:
        return None
    headers = (
        "Resting state",
        "Stability",
        f"Slope of the rate there (1/{time})",
        "Return time",
        "Closed form",
        "Residual |f|",
    )
    return TableView("Equilibria of today's model", headers, tuple(rows))


def limits_table(summary: Mapping[str, Any]) -> TableView | None:
    units = summary["units"]
    limits = summary["limits"]
    ll = limits.get("lever_limit") or {}
    sy = limits.get("sustainable_yield") or {}
    ss = limits.get("stock_status") or {}
    word = "Largest" if ll.get("direction") == "largest" else "Smallest"
    facts: list[tuple[str, Any, str]] = [
        ("Today's lever", limits.get("lever_value"), units.get("lever", "")),
        (f"{word} sustainable lever (the limit)", ll.get("limit"), units.get("lever", "")),
        ("Margin to the limit", ll.get("margin"), units.get("lever", "")),
        ("Margin to the limit (% of today's lever)", ll.get("margin_percent"), ""),
        ("State at the limit", ll.get("state_at_limit"), units["state"]),
        ("Maximum sustainable yield (MSY)", sy.get("msy"), units.get("yield", "")),
        ("Lever at MSY", sy.get("lever_at_msy"), units.get("lever", "")),
        ("State at MSY (B_MSY)", sy.get("state_at_msy"), units["state"]),
        ("Today's yield", sy.get("current_yield"), units.get("yield", "")),
        ("Limit level of the state", ss.get("limit"), units["state"]),
        ("Today's state / B_MSY", ss.get("ratio_to_b_msy"), ""),
        ("Today's state / limit level", ss.get("ratio_to_limit"), ""),
    ]
    return _facts("Limits and margins", facts)


def dynamics_table(summary: Mapping[str, Any]) -> TableView | None:
    units = summary["units"]
    d = summary["dynamics"]
    t = d.get("trajectory") or {}
    c = d.get("collapse") or {}
    r = d.get("recovery") or {}
    h = d.get("hysteresis") or {}
    time, state = units["time"], units["state"]
    facts: list[tuple[str, Any, str]] = [
        ("Today's state", t.get("start"), state),
        ("Where it settles", t.get("attractor"), state),
        ("Time to collapse (integrated)", c.get("collapse_time"), time),
        ("Time to collapse (bottleneck estimate)", c.get("ghost_time"), time),
        ("Recovery: start after the shock", r.get("start"), state),
        ("Recovery: time to within 10%", r.get("time_to_10"), time),
        ("Recovery: time to within 1%", r.get("time_to_1"), time),
        ("Return time near the stable state", r.get("return_time"), time),
        ("Fold: lever value where the state is lost", h.get("fold_value"), units.get("lever", "")),
        ("Lever value where it comes back", h.get("return_value"), units.get("lever", "")),
    ]
    for event in t.get("events") or ():
        facts.append((f"Trajectory: {event['kind']}", event.get("time"), time))
    return _facts("Dynamics", facts)


def milestone_table(summary: Mapping[str, Any]) -> TableView | None:
    """How long until the state crosses each level, one row per model (base and policies)."""
    runs = summary["dynamics"].get("milestones") or []
    if not runs:
        return None
    units = summary["units"]
    kinds: list[tuple[str, float | None]] = []
    for run in runs:
        for m in run.get("milestones") or ():
            key = (m["kind"], m["level"] if m["kind"] in ("limit", "target", "trigger") else None)
            if key not in kinds:
                kinds.append(key)
    if not kinds:
        return None
    headers = ["Model", "Starts at", "Settles at"]
    for kind, level in kinds:
        headers.append(
            f"Time to the {kind} level ({wording.quantity(level, units['state'])})"
            if level is not None
            else f"Time to {kind}"
        )
    rows = []
    for run in runs:
        found = {(m["kind"], m["level"] if m["kind"] in ("limit", "target", "trigger") else None):
                 m.get("time") for m in run.get("milestones") or ()}  # fmt: skip
        rows.append(
            (
                row_heading(str(run["name"])),
                cell(run.get("start"), unit=units["state"]),
                cell(run.get("attractor"), unit=units["state"]),
                *(cell(found.get(key), unit=units["time"]) for key in kinds),
            )
        )
    note = "A dash: the level is not reached from today's state under that model."
    return TableView("How long until", tuple(headers), tuple(rows), (note,))


POLICY_MEASURES = (
    ("stable_state", "Stable state", "state"),
    ("yield", "Yield", "yield"),
    ("lever_value", "Lever", "lever"),
    ("margin", "Margin to the limit", "lever"),
    ("return_time", "Return time", "time"),
    ("recovery_time", "Recovery after the shock (to within 10%)", "time"),
    ("collapse_time", "Time to collapse", "time"),
)


def policy_table(summary: Mapping[str, Any]) -> TableView | None:
    policies = summary["policies"]
    rows = policies.get("rows")
    if not rows or len(rows) < 2:
        return None
    units = summary["units"]
    measures = [(key, label, units.get(kind, "")) for key, label, kind in POLICY_MEASURES]
    return transpose_policies(rows, measures, policies.get("best") or {})


def uncertainty_table(summary: Mapping[str, Any]) -> TableView | None:
    u = summary["uncertainty"]
    outcomes = u.get("outcomes")
    if not outcomes:
        return None
    units = summary["units"]
    rows = []
    for o in outcomes:
        state = o.get("stable_state") or {}
        limit = o.get("lever_limit") or {}
        search = o.get("lever_search")

        def lever_cell(value: Any, o_search: Any = search) -> Cell:
            # A limit found outside the range searched is an extrapolation, not a result.
            if value is not None and o_search and not o_search[0] <= value <= o_search[1]:
                return Cell("beyond the range studied")
            return cell(value, unit=units.get("lever", ""))

        rows.append(
            (
                row_heading(str(o["name"])),
                cell(o.get("collapse_risk") * 100 if o.get("collapse_risk") is not None else None),
                cell(state.get("p05"), unit=units["state"]),
                cell(state.get("p50"), unit=units["state"]),
                cell(state.get("p95"), unit=units["state"]),
                lever_cell(limit.get("p05")),
                lever_cell(limit.get("p50")),
                lever_cell(o.get("safe_lever")),
            )
        )
    headers = (
        "Model",
        "Collapse risk (%)",
        "Stable state, 5%",
        "median",
        "95%",
        "Lever limit, 5%",
        "median",
        f"Safe lever (risk ≤ {wording.number((u.get('tolerance') or 0) * 100)}%)",
    )
    note = f"{wording.number(u.get('samples'), 6)} samples, seed {u.get('seed')}."
    return TableView("Under the uncertainty in the parameters", headers, tuple(rows), (note,))


def sensitivity_table(summary: Mapping[str, Any]) -> TableView | None:
    models = summary["sensitivity"].get("models")
    if not models:
        return None
    rows = []
    for model in models:
        for state in model.get("states") or ():
            for s in state["sensitivities"]:
                rows.append(
                    (
                        row_heading(
                            f"{model['name']}: stable state {wording.number(state['state'])}"
                        ),
                        Cell(s["parameter"]),
                        cell(s.get("elasticity"), sig=3),
                        Cell(s.get("method") or "–"),
                    )
                )
        limit = model.get("lever_limit")
        if limit:
            for s in limit["sensitivities"]:
                rows.append(
                    (
                        row_heading(
                            f"{model['name']}: lever limit {wording.number(limit['lever_limit'])}"
                        ),
                        Cell(s["parameter"]),
                        cell(s.get("elasticity"), sig=3),
                        Cell(s.get("method") or "–"),
                    )
                )
    if not rows:
        return None
    headers = ("Quantity", "Parameter", "Elasticity (% change per 1% change)", "Method")
    return TableView("Local sensitivities", headers, tuple(rows))


def economics_table(summary: Mapping[str, Any]) -> TableView | None:
    e = summary["economics"].get("economic_yield")
    if not e:
        return None
    units = summary["units"]
    money = units.get("money", "")
    facts: list[tuple[str, Any, str]] = [
        (f"Price per {units['state']} of yield", e.get("price"), e.get("currency") or ""),
        (
            f"Cost per unit of lever ({units.get('lever', '')}), per {units['time']}",
            e.get("cost"),
            e.get("currency") or "",
        ),
        ("Lever at maximum economic yield (MEY)", e.get("mey_lever"), units.get("lever", "")),
        ("Yield at MEY", e.get("mey_yield"), units.get("yield", "")),
        ("State at MEY", e.get("mey_state"), units["state"]),
        ("Resource rent at MEY", e.get("mey_rent"), money),
        ("Lever under open access", e.get("open_access_lever"), units.get("lever", "")),
        ("State under open access", e.get("open_access_state"), units["state"]),
    ]
    return _facts("Economics", facts)


def method_table(summary: Mapping[str, Any], version: str, input_hash: str) -> TableView:
    residuals = [abs(e["residual"]) for e in summary["equilibria"] if e.get("residual") is not None]
    residuals += [
        abs(b["residual"]) for b in summary["bifurcations"] if b.get("residual") is not None
    ]
    facts: list[tuple[str, Any, str]] = [
        ("Equilibria found", summary["method"].get("equilibria"), ""),
        ("Largest residual |f| at a reported point", max(residuals) if residuals else None, ""),
        ("Tool version", f"sitegen {version}", ""),
        ("Input hash (SHA-256 of every file read)", input_hash, ""),
    ]
    table = _facts("How these numbers were computed", facts)
    assert table is not None
    return table
