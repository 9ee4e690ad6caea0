"""The analysis as the JSON summary (a contract: keys are added, never renamed) and as text."""

from __future__ import annotations

import json
import math
from typing import Any

from sitegen.analysis.records import Analysis, Bifurcation, Equilibrium


def _number(value: float | None) -> float | None:
    """JSON has no infinity or NaN: those become null."""
    if value is None or not math.isfinite(value):
        return None
    return float(value)


def _equilibrium(e: Equilibrium) -> dict[str, Any]:
    return {
        "value": e.value,
        "stability": e.stability,
        "derivative": _number(e.derivative),
        "return_time": _number(e.return_time),
        "closed_form": e.closed_form,
        "multiplicity": e.multiplicity,
        "precise": e.precise,
        "residual": e.residual,
        "on_boundary": e.on_boundary,
    }


def _bifurcation(b: Bifurcation) -> dict[str, Any]:
    return {
        "parameter": b.parameter,
        "kind": b.kind,
        "parameter_value": b.parameter_value,
        "state_value": b.state_value,
        "closed_form": b.closed_form,
        "state_closed_form": b.state_closed_form,
        "more_equilibria": b.more_equilibria,
        "equilibria_below_above": list(b.counts),
        "residual": b.residual,
    }


def summary(analysis: Analysis) -> dict[str, Any]:
    """The ``analyse --json`` summary as plain Python data."""
    low, high = analysis.region
    return {
        "slug": analysis.slug,
        "state": {
            "symbol": analysis.state_symbol,
            "unit": analysis.state_unit,
            "min": low,
            "max": high,
        },
        "parameters": dict(analysis.parameters),
        "equilibria": [_equilibrium(e) for e in analysis.equilibria],
        "basins": [
            {"low": b.low, "high": b.high, "attractor": b.attractor, "exit": b.exit}
            for b in analysis.basins
        ],
        "thresholds": list(analysis.thresholds),
        "bifurcations": [_bifurcation(b) for b in analysis.bifurcations],
        "cusps": [
            {"parameters": dict(c.parameters), "state_value": c.state_value} for c in analysis.cusps
        ],
        "maps": [
            {
                "x": m.x,
                "y": m.y,
                "fold_curves": [
                    {"points": len(c.x_values), "closed_form": c.closed_form} for c in m.fold_curves
                ],
                "cusps": len(m.cusps),
                "notes": list(m.notes),
            }
            for m in analysis.maps
        ],
        "branches": [
            {"parameter": b.parameter, "points": len(b.parameter_values)} for b in analysis.branches
        ],
        "method": {"equilibria": analysis.method, "notes": list(analysis.notes)},
        "warnings": list(analysis.warnings),
    }


def to_json(analysis: Analysis) -> str:
    """The summary as JSON text (sorted keys, so identical input gives identical text)."""
    return json.dumps(summary(analysis), indent=2, sort_keys=True, allow_nan=False)


def _g(value: float | None, digits: int = 6) -> str:
    if value is None:
        return "-"
    if not math.isfinite(value):
        return "infinite"
    return f"{value:.{digits}g}"


def to_text(analysis: Analysis, time_unit: str) -> str:
    """A readable terminal report of the analysis."""
    unit = analysis.state_unit
    low, high = analysis.region
    lines = [
        f"{analysis.slug}: d{analysis.state_symbol}/dt over [{_g(low)}, {_g(high)}] {unit}",
        "",
        "Equilibria:",
    ]
    if not analysis.equilibria:
        lines.append("  none in the region")
    for e in analysis.equilibria:
        back = f", returns in {_g(e.return_time, 4)} {time_unit}" if e.return_time else ""
        closed = f"  = {e.closed_form}" if e.closed_form else ""
        multiple = f", multiplicity {e.multiplicity}" if e.multiplicity > 1 else ""
        lines.append(
            f"  {analysis.state_symbol} = {_g(e.value, 10)} {unit}: {e.stability} "
            f"(f' = {_g(e.derivative, 6)} /{time_unit}{multiple}{back}){closed}"
        )
    if analysis.thresholds:
        lines.append("Thresholds: " + ", ".join(f"{_g(t, 8)} {unit}" for t in analysis.thresholds))
    lines.append("")
    lines.append("Bifurcations:")
    if not analysis.bifurcations:
        lines.append("  none inside the parameter ranges")
    for b in analysis.bifurcations:
        closed = f"  = {b.closed_form}" if b.closed_form else ""
        lines.append(
            f"  {b.kind} in {b.parameter} at {b.parameter} = {_g(b.parameter_value, 10)}"
            f" (state {_g(b.state_value, 8)} {unit}; equilibria below/above: "
            f"{b.counts[0]}/{b.counts[1]}){closed}"
        )
    for cusp in analysis.cusps:
        where = ", ".join(f"{k} = {_g(v, 8)}" for k, v in sorted(cusp.parameters.items()))
        lines.append(f"  cusp at {where} (state {_g(cusp.state_value, 8)} {unit})")
    lines.append("")
    lines.append(f"Method: equilibria {analysis.method}")
    lines.extend(f"  note: {note}" for note in analysis.notes)
    lines.extend(f"  WARNING: {warning}" for warning in analysis.warnings)
    return "\n".join(lines)
