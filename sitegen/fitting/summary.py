"""A fit as plain data (:func:`fit_summary`) and as text for the terminal (:func:`fit_text`).

The summary is JSON-safe: floats (NaN and infinities become None), ints, text,
lists and dicts with sorted keys, so equal fits give equal JSON. ``units`` maps
each numeric field (dotted path, ``*`` for every entry) to its unit;
``changes`` compares each estimate and derived figure with the previous
assessment year's fit stored in the companion file.
"""

from __future__ import annotations

import math
from typing import Any

from sitegen.fitting.records import Derived, Estimate, FitReport
from sitegen.scenario.records import FitEntry

LOG_RESIDUAL = "1 (natural log of observed / predicted)"


def _clean(value: Any) -> Any:
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {str(k): _clean(value[k]) for k in sorted(value)}
    if isinstance(value, list | tuple):
        return [_clean(v) for v in value]
    return value


def _change(value: float, previous: float | None) -> dict[str, Any] | None:
    if previous is None:
        return None
    difference = value - previous
    percent = 100.0 * difference / abs(previous) if previous else None
    return {"previous": previous, "now": value, "change": difference, "percent": percent}


def _estimate(item: Estimate) -> dict[str, Any]:
    return {
        "label": item.label,
        "unit": item.unit,
        "value": item.value,
        "standard_error": item.standard_error,
        "interval_jacobian": list(item.jacobian),
        "interval_bootstrap": list(item.bootstrap) if item.bootstrap else None,
        "search_range": list(item.search_range),
        "at_bound": item.at_bound,
        "previous": item.previous,
    }


def _derived(item: Derived) -> dict[str, Any]:
    return {
        "label": item.label,
        "unit": item.unit,
        "value": item.value,
        "interval_bootstrap": list(item.bootstrap) if item.bootstrap else None,
        "previous": item.previous,
    }


def provenance(report: FitReport) -> str:
    """Where the estimates come from, e.g. "fitted to 2002-2026 data (sha256 1a2b3c4d)"."""
    return (
        f"fitted to {report.years[0]}-{report.years[-1]} data "
        f"({report.data_source}, sha256 {report.data_hash[:12]})"
    )


def fit_summary(report: FitReport) -> dict[str, Any]:
    """The fit as sorted, JSON-safe plain data (see the module docstring)."""
    estimates = {e.name: _estimate(e) for e in report.estimates}
    derived = {d.name: _derived(d) for d in report.derived}
    changes = {
        name: change
        for name, change in (
            *((e.name, _change(e.value, e.previous)) for e in report.estimates),
            *((d.name, _change(d.value, d.previous)) for d in report.derived),
        )
        if change is not None
    }
    units: dict[str, str] = {f"estimates.{e.name}": e.unit for e in report.estimates}
    units.update({f"derived.{d.name}": d.unit for d in report.derived})
    units.update({f"changes.{e.name}": e.unit for e in report.estimates if e.name in changes})
    units.update({f"changes.{d.name}": d.unit for d in report.derived if d.name in changes})
    units.update(
        {
            "changes.*.percent": "%",
            "years": "calendar year",
            "removals": report.lever_unit,
            "states": report.state_unit,
            "indices.*.q": f"index units per {report.state_unit}",
            "indices.*.observed": "index units",
            "indices.*.predicted": "index units",
            "indices.*.residuals": LOG_RESIDUAL,
            "diagnostics.residual_sd": LOG_RESIDUAL,
            "diagnostics.correlation": "1",
            "diagnostics.bootstrap_correlation": "1",
            "time": report.time_unit,
        }
    )
    summary = {
        "scenario": report.slug,
        "assessment_year": report.assessment_year,
        "provenance": provenance(report),
        "method": (
            "observation-error fit: the model run year by year under the observed removals, "
            f"each index = q x state at the {report.timing} of the year, least squares on log "
            "residuals with q in closed form; 95% intervals from the Jacobian and a residual "
            "bootstrap"
        ),
        "data": {
            "source": report.data_source,
            "sha256": report.data_hash,
            "first_year": report.years[0],
            "last_year": report.years[-1],
            "timing": report.timing,
        },
        "state": report.state,
        "lever": report.lever,
        "years": list(report.years),
        "removals": list(report.removals),
        "states": list(report.states),
        "estimates": estimates,
        "derived": derived,
        "changes": changes,
        "previous_fit": (
            {
                "assessment_year": report.previous.assessment_year,
                "first_year": report.previous.first_year,
                "last_year": report.previous.last_year,
                "sha256": report.previous.data_hash,
            }
            if report.previous
            else None
        ),
        "indices": [
            {
                "name": i.name,
                "q": i.q,
                "years": list(i.years),
                "observed": list(i.observed),
                "predicted": list(i.predicted),
                "residuals": list(i.residuals),
            }
            for i in report.indices
        ],
        "diagnostics": {
            "converged": report.converged,
            "message": report.message,
            "residual_sd": report.residual_sd,
            "observations": report.observations,
            "free_parameters": report.free_parameters,
            "starts": report.starts,
            "starts_agreeing": report.starts_agreeing,
            "correlation": report.correlation,
            "bootstrap_correlation": report.bootstrap_correlation,
            "lacks_contrast": report.lacks_contrast,
            "poorly_determined": list(report.poorly_determined),
            "collapsed": report.collapsed,
            "replicates": report.replicates,
            "replicates_failed": report.replicates_failed,
            "seed": report.seed,
        },
        "notes": list(report.notes),
        "units": units,
    }
    return _clean(summary)


def _g(value: float | None) -> str:
    if value is None or not math.isfinite(value):
        return "n/a"
    return f"{value:.4g}"


def _span(interval: tuple[float, float] | None) -> str:
    return f"[{_g(interval[0])}, {_g(interval[1])}]" if interval else "n/a"


def fit_text(report: FitReport) -> str:
    """The fit for the terminal: estimates, intervals, derived figures, diagnostics."""
    lines = [
        f"{report.slug}: {provenance(report)}",
        f"{len(report.years)} years, {report.observations} index observations, "
        f"residual sd {_g(report.residual_sd)} (log scale), "
        f"{report.starts_agreeing} of {report.starts} starting points agree",
        "",
        f"{'estimate':<12} {'value':>10} {'std err':>10}  {'95% (Jacobian)':<22} "
        f"{'95% (bootstrap)':<22} last year",
    ]
    for e in report.estimates:
        lines.append(
            f"{e.name:<12} {_g(e.value):>10} {_g(e.standard_error):>10}  "
            f"{_span(e.jacobian):<22} {_span(e.bootstrap):<22} {_g(e.previous)}  {e.unit}"
        )
    lines.append("")
    for d in report.derived:
        lines.append(
            f"{d.name:<12} {_g(d.value):>10} {'':>10}  {'':<22} {_span(d.bootstrap):<22} "
            f"{_g(d.previous)}  {d.unit}  ({d.label})"
        )
    for i in report.indices:
        lines.append(f"index {i.name}: q = {_g(i.q)} index units per {report.state_unit}")
    if report.correlation:
        pairs = ", ".join(f"{k} {v:+.2f}" for k, v in report.correlation.items())
        lines.append(f"correlations (Jacobian): {pairs}")
    if report.replicates:
        lines.append(
            f"bootstrap: {report.replicates - report.replicates_failed} of "
            f"{report.replicates} replicates (seed {report.seed})"
        )
    lines.append("converged" if report.converged else "NOT converged: " + report.message)
    lines.extend(f"note: {n}" for n in report.notes)
    return "\n".join(lines) + "\n"


def fit_entry(report: FitReport) -> FitEntry:
    """The report as one companion-file entry (estimates and derived figures by name)."""
    return FitEntry(
        report.assessment_year,
        report.data_hash,
        report.years[0],
        report.years[-1],
        {e.name: e.value for e in report.estimates},
        {d.name: d.value for d in report.derived if math.isfinite(d.value)},
    )
