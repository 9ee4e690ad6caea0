"""Trend figure: the lever setting and the lever limit by year, with the margin shaded.

Each ``[[history]]`` year's values (parameters and the state) override the
scenario's, and the limit is recomputed for that year with the same engine as
the assessment: continuation in the lever
(:func:`sitegen.analysis.continuation.continue_equilibria`), bifurcation
records, then :func:`sitegen.dynamics.limits.stable_run` and
:func:`sitegen.dynamics.limits.lever_limit`. The assessment year is the last
point, taken from the assessment itself. A year whose history does not give
the lever has no setting point (its limit is still shown). The margin is
shaded hatched where the setting is on the safe side of the limit and
cross-hatched where it is past it.

Units: years on the x axis, the lever in its unit.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from sitegen.analysis.bifurcations import build_bifurcations
from sitegen.analysis.continuation import continue_equilibria
from sitegen.analysis.equilibria import find_equilibria
from sitegen.dynamics.assess import NUMERIC_FAILURES, Assessment
from sitegen.dynamics.limits import lever_limit, stable_run
from sitegen.figures.common import (
    PALETTE,
    STYLES,
    Figure,
    finish,
    new_figure,
    rounded,
    table_of,
    tag,
)
from sitegen.model.model import Model, build_model
from sitegen.scenario.records import Scenario


def _n(value: float) -> str:
    return f"{value:,.0f}" if abs(value) >= 100 else f"{value:.3g}"


def limit_for(model: Model, values: dict[str, float], state: float | None) -> float:
    """The lever limit with ``values`` overriding the model's (NaN where there is none)."""
    assert model.lever is not None
    year = model.with_values(values)
    if state is not None:
        year = dataclasses.replace(year, current_state=float(state))
    try:
        branches, points = continue_equilibria(year, year.lever)
        records, _ = build_bifurcations(
            year, year.lever, [(p.parameter_value, p.state_value) for p in points], []
        )
        equilibria, _ = find_equilibria(year)
        run = stable_run(year, branches, records, equilibria)
    except NUMERIC_FAILURES:
        return float("nan")
    limit = lever_limit(year, run) if run is not None else None
    return float(limit.limit) if limit is not None else float("nan")


def trend_data(
    scenario: Scenario, assessment: Assessment
) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """(years, settings, limits), the assessment year last; None without two years."""
    model = build_model(scenario)
    lever = model.lever
    if lever is None or lever not in model.ranges or assessment.lever_limit is None:
        return None
    earlier = [h for h in scenario.history if h.year != scenario.assessment_year]
    if len(earlier) + 1 < 2:
        return None
    years, settings, limits = [], [], []
    for entry in sorted(earlier, key=lambda h: h.year):  # a few years, each its own analysis
        overrides = {k: v for k, v in entry.values.items() if k in model.parameters}
        years.append(entry.year)
        settings.append(overrides.get(lever, np.nan))
        limits.append(limit_for(model, overrides, entry.values.get(scenario.state.symbol)))
    years.append(scenario.assessment_year)
    settings.append(float(assessment.lever_value or np.nan))
    limits.append(assessment.lever_limit.limit)
    return np.array(years), np.array(settings, dtype=float), np.array(limits, dtype=float)


def trend(scenario: Scenario, assessment: Assessment) -> Figure | None:
    """Lever setting and limit by year with the margin shaded (None without history)."""
    data = trend_data(scenario, assessment)
    if data is None:
        return None
    years, settings, limits = data
    lever = assessment.lever or ""
    unit = assessment.units["lever"]
    largest = assessment.lever_limit is None or assessment.lever_limit.direction == "largest"
    margin = limits - settings if largest else settings - limits
    # A setting exactly at the limit is a margin of zero, not a rounding error's sign.
    margin = np.where(np.abs(margin) <= 1e-9 * np.abs(limits), 0.0, margin)
    figure, (axes,) = new_figure()
    both = np.isfinite(settings) & np.isfinite(limits)
    safe = axes.fill_between(
        years,
        settings,
        limits,
        where=both & (margin >= 0),
        facecolor=PALETTE["green"],
        alpha=0.15,
        hatch="//",
        edgecolor=PALETTE["green"],
        linewidth=0,
        interpolate=True,
        label="margin (safe side)",
    )
    tag(safe, "margin-safe")
    if np.any(both & (margin < 0)):
        past = axes.fill_between(
            years,
            settings,
            limits,
            where=both & (margin < 0),
            facecolor=PALETTE["vermillion"],
            alpha=0.25,
            hatch="xx",
            edgecolor=PALETTE["vermillion"],
            linewidth=0,
            interpolate=True,
            label="past the limit",
        )
        tag(past, "margin-past")
    limit_style, today_style = STYLES["limit"], STYLES["today"]
    (limit_line,) = axes.plot(
        years,
        limits,
        color=limit_style.colour,
        linestyle=limit_style.dash,
        marker=limit_style.marker,
        label=f"lever limit ({'largest' if largest else 'smallest'} safe {lever})",
    )
    tag(limit_line, "limit")
    (setting_line,) = axes.plot(
        years,
        settings,
        color=today_style.colour,
        linestyle=today_style.dash,
        marker=today_style.marker,
        label=f"setting of {lever}",
    )
    tag(setting_line, "setting")
    axes.annotate(
        f"{scenario.assessment_year}: margin {_n(float(margin[-1]))} {unit}",
        (years[-1], limits[-1]),
        xytext=(-6, 8),
        textcoords="offset points",
        ha="right",
        fontsize=7.5,
    )
    axes.set_xticks(years)
    axes.set_xticklabels([str(int(y)) for y in years])
    axes.set_xlabel("year (last: assessment year)")
    axes.set_ylabel(f"{lever} [{unit}]" if unit not in ("", "1") else lever)
    axes.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize=7.5)
    shown = margin[np.isfinite(margin)]
    words = (
        f"the margin went from {_n(float(shown[0]))} to {_n(float(shown[-1]))} {unit}"
        if shown.size >= 2
        else "the margin is known for one year only"
    )
    closest = int(np.nanargmin(np.where(np.isfinite(margin), margin, np.inf)))
    description = (
        f"Setting and limit of {lever} from {int(years[0])} to {int(years[-1])}, the limit "
        f"recomputed from each year's estimates: {words}; the smallest margin was "
        f"{_n(float(margin[closest]))} {unit} in {int(years[closest])}. Today's setting "
        f"{_n(float(settings[-1]))} {unit} against the limit {_n(float(limits[-1]))} {unit}."
    )
    at_or_past = [str(int(y)) for y, m in zip(years, margin, strict=True) if m <= 0]
    if at_or_past:
        description += f" The setting was at or past the limit in {', '.join(at_or_past)}."
    table = table_of(
        ("year", f"setting of {lever} [{unit}]", f"limit of {lever} [{unit}]", f"margin [{unit}]"),
        [
            [int(y) for y in years],
            [rounded(float(v)) for v in settings],
            [rounded(float(v)) for v in limits],
            [rounded(float(v)) for v in margin],
        ],
    )
    return finish(figure, "trend", f"Setting and limit of {lever} by year", description, table)
