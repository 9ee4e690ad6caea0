"""The assessment as the ``analyse --json`` summary and as the terminal report.

The JSON extends stage 3's :func:`sitegen.analysis.summary.summary` (its keys
are kept as they are) with ``units``, ``dynamics``, ``limits``, ``policies``,
``uncertainty``, ``sensitivity`` and ``economics``; ``dynamics`` holds
``milestones``, one entry per model (base first, then each policy) with its
level crossings, ``half_time`` and ``time_95``, or null without a current state.
Each new section always has ``notes`` (why a part does not apply) and
``warnings`` (a part that failed); a part that does not apply is null.
Numbers are full precision; NaN and infinities become null, since JSON has
neither. The text report gives 4 significant figures with the unit beside every number.
"""

from __future__ import annotations

import json
import math
from dataclasses import fields, is_dataclass
from typing import Any

import numpy as np

from sitegen.analysis.summary import summary, to_text
from sitegen.dynamics.assess import Assessment
from sitegen.dynamics.records import Milestones, PolicyRow, Trajectory
from sitegen.dynamics.report_text import (
    dynamics_lines,
    economics_lines,
    limits_lines,
    policy_lines,
    sensitivity_lines,
    uncertainty_lines,
)
from sitegen.dynamics.sensitivity import SensitivityReport
from sitegen.dynamics.uncertainty import UncertaintyOutcome, UncertaintyReport
from sitegen.scenario.records import Scenario


def _safe(value: Any) -> Any:
    """Plain JSON data: dataclasses to dicts, tuples to lists, NaN and inf to None."""
    if is_dataclass(value) and not isinstance(value, type):
        return {f.name.rstrip("_"): _safe(getattr(value, f.name)) for f in fields(value)}
    if isinstance(value, dict):
        return {str(k): _safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_safe(v) for v in value]
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        return float(value) if math.isfinite(value) else None
    return value


def _trajectory(t: Trajectory | None) -> dict[str, Any] | None:
    if t is None:
        return None
    return {
        "start": _safe(t.start),
        "attractor": _safe(t.attractor),
        "fate": t.fate,
        "collapse_level": _safe(t.collapse_level),
        "events": _safe(list(t.events)),
        "points": int(t.times.size),
        "end_time": _safe(float(t.times[-1])),
        "note": t.note,
    }


def _milestones(rows: tuple[Milestones, ...] | None) -> list[dict[str, Any]] | None:
    if rows is None:
        return None
    return [
        {**_safe(row), "half_time": _safe(row.half_time), "time_95": _safe(row.time_95)}
        for row in rows
    ]


def _row(row: PolicyRow) -> dict[str, Any]:
    data = _safe(row)
    data["margin"] = _safe(row.limit.margin) if row.limit is not None else None
    return data


def _outcome(o: UncertaintyOutcome) -> dict[str, Any]:
    # The per-sample arrays are for figures; the summary keeps the statistics.
    skip = {"states", "yields", "lever_limits"}
    return {f.name.rstrip("_"): _safe(getattr(o, f.name)) for f in fields(o) if f.name not in skip}


def _uncertainty(u: UncertaintyReport | None) -> dict[str, Any]:
    if u is None:
        keys = ("samples", "seed", "tolerance", "tolerance_note", "parameters", "outcomes")
        return dict.fromkeys(keys)
    return {
        "samples": u.samples,
        "seed": u.seed,
        "tolerance": u.tolerance,
        "tolerance_note": u.tolerance_note,
        "parameters": _safe(list(u.parameters)),
        "outcomes": [_outcome(o) for o in u.outcomes],
    }


def _sensitivity(report: SensitivityReport) -> dict[str, Any]:
    data = _safe(report)
    for state, source in zip(data["states"], report.states, strict=True):
        for entry, s in zip(state["sensitivities"], source.sensitivities, strict=True):
            entry["value"] = _safe(s.value)
    if report.lever_limit is not None:
        for entry, s in zip(
            data["lever_limit"]["sensitivities"], report.lever_limit.sensitivities, strict=True
        ):
            entry["value"] = _safe(s.value)
    return data


def _section(a: Assessment, name: str, body: dict[str, Any]) -> dict[str, Any]:
    return {
        **body,
        "notes": list(a.notes.get(name, ())),
        "warnings": list(a.warnings.get(name, ())),
    }


def assessment_summary(a: Assessment) -> dict[str, Any]:
    """Stage 3's summary with the stage-4 sections added (plain, JSON-safe data)."""
    data = summary(a.analysis)
    # Which way is better for the state ("higher" for stocks, "lower" for pollutants and
    # pests): it decides what collapse, limit and best mean in every section below.
    data["state"]["better"] = a.better
    data["units"] = dict(a.units)
    data["dynamics"] = _section(
        a,
        "dynamics",
        {
            "better": a.better,
            "shock": a.shock,
            "trajectory": _trajectory(a.trajectory),
            "collapse": _safe(a.collapse),
            "recovery": _safe(a.recovery),
            "hysteresis": _safe(a.hysteresis),
            "milestones": _milestones(a.milestones),
        },
    )
    data["limits"] = _section(
        a,
        "limits",
        {
            "better": a.better,
            "lever": a.lever,
            "lever_value": _safe(a.lever_value),
            "lever_limit": _safe(a.lever_limit),
            "sustainable_yield": _safe(a.sustainable_yield),
            "stock_status": _safe(a.stock_status),
        },
    )
    table = a.policies
    data["policies"] = _section(
        a,
        "policies",
        {
            "better": a.better,
            "rows": [_row(r) for r in table.rows] if table else None,
            "best": {k.rstrip("_"): v for k, v in table.best.items()} if table else None,
        },
    )
    data["uncertainty"] = _section(a, "uncertainty", _uncertainty(a.uncertainty))
    data["sensitivity"] = _section(
        a,
        "sensitivity",
        {"models": [_sensitivity(r) for r in a.sensitivity] if a.sensitivity else None},
    )
    data["economics"] = _section(a, "economics", {"economic_yield": _safe(a.economics)})
    return data


def assessment_json(a: Assessment) -> str:
    """The summary as JSON text: sorted keys, no NaN (identical input, identical text)."""
    return json.dumps(assessment_summary(a), indent=2, sort_keys=True, allow_nan=False)


def assessment_text(a: Assessment, scenario: Scenario) -> str:
    """The stage-3 report followed by the stage-4 sections, for the terminal."""
    blocks = [to_text(a.analysis, scenario.model.time_unit)]
    titles = {
        "limits": limits_lines,
        "dynamics": dynamics_lines,
        "policies": policy_lines,
        "uncertainty": uncertainty_lines,
        "sensitivity": sensitivity_lines,
        "economics": economics_lines,
    }
    for name, build in titles.items():
        lines = build(a)
        if not lines:
            lines = [f"{name.capitalize()}:"]
        lines.extend(f"  note: {text}" for text in a.notes.get(name, ()))
        lines.extend(f"  WARNING: {text}" for text in a.warnings.get(name, ()))
        if len(lines) > 1:
            blocks.append("\n".join(lines))
    return "\n\n".join(blocks)
