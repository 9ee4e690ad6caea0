"""Fit figures: each index observed against predicted by year, and the log residuals by year.

Not in the registry (its kinds take an Assessment): the site build calls
:func:`fit_figures` with the :class:`~sitegen.fitting.records.FitReport`.
Observed points are drawn as markers, predictions (q times the fitted state) as
a line, so the two differ by shape as well as colour. Units: years on the x
axis; the index in its own units; residuals are natural logs of observed over
predicted (dimensionless).
"""

from __future__ import annotations

from sitegen.figures.common import (
    PALETTE,
    POLICY_COLOURS,
    POLICY_MARKERS,
    STYLES,
    Figure,
    finish,
    new_figure,
    rounded,
    table_of,
    tag,
)
from sitegen.fitting.records import FitReport
from sitegen.scenario.records import Scenario


def _observed_predicted(scenario: Scenario, report: FitReport) -> Figure:
    figure, (axes,) = new_figure()
    years, names, observed, predicted = [], [], [], []
    for k, index in enumerate(report.indices):
        colour = POLICY_COLOURS[k % len(POLICY_COLOURS)]
        marker = POLICY_MARKERS[k % len(POLICY_MARKERS)]
        (points,) = axes.plot(
            index.years,
            index.observed,
            linestyle="none",
            marker=marker,
            color=colour,
            label=f"{index.name}, observed",
        )
        (line,) = axes.plot(
            index.years,
            index.predicted,
            linestyle=STYLES["rate"].dash,
            color=colour,
            label=f"{index.name}, predicted (q × {report.state})",
        )
        tag(points, f"observed-{k + 1}")
        tag(line, f"predicted-{k + 1}")
        years += list(index.years)
        names += [index.name] * len(index.years)
        observed += [rounded(v) for v in index.observed]
        predicted += [rounded(v) for v in index.predicted]
    axes.set_xlabel("year")
    axes.set_ylabel("index (its own units)")
    axes.set_ylim(bottom=0)
    axes.legend(loc="best", fontsize=8)
    first, last = report.years[0], report.years[-1]
    description = (
        f"The abundance index of {scenario.title} by year, {first} to {last}: the observed "
        f"values as markers and the model's prediction (q times the fitted "
        f"{scenario.state.name}) as a line."
    )
    table = table_of(
        ("year", "index", "observed", "predicted"), (years, names, observed, predicted)
    )
    return finish(figure, "fit-index", "Index: observed and predicted", description, table)


def _residuals(scenario: Scenario, report: FitReport) -> Figure:
    figure, (axes,) = new_figure(height_in=2.8)
    axes.axhline(0.0, color=PALETTE["black"], linewidth=0.8)
    years, names, values = [], [], []
    for k, index in enumerate(report.indices):
        colour = POLICY_COLOURS[k % len(POLICY_COLOURS)]
        marker = POLICY_MARKERS[k % len(POLICY_MARKERS)]
        (points,) = axes.plot(
            index.years,
            index.residuals,
            linestyle=":",
            marker=marker,
            color=colour,
            label=index.name,
        )
        tag(points, f"residuals-{k + 1}")
        years += list(index.years)
        names += [index.name] * len(index.years)
        values += [rounded(v) for v in index.residuals]
    axes.set_xlabel("year")
    axes.set_ylabel("log(observed / predicted)")
    if len(report.indices) > 1:
        axes.legend(loc="best", fontsize=8)
    description = (
        f"The log residuals of the fit of {scenario.title} by year: above zero the index "
        "was higher than the model predicts. A run of residuals of one sign points to a "
        "model that misses a trend."
    )
    table = table_of(("year", "index", "log residual"), (years, names, values))
    return finish(figure, "fit-residuals", "Residuals of the fit by year", description, table)


def fit_figures(scenario: Scenario, report: FitReport) -> list[Figure]:
    """The fit figures: index observed against predicted, and residuals, by year."""
    return [_observed_predicted(scenario, report), _residuals(scenario, report)]
