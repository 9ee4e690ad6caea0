"""Figures of the state over time: runs from several starts, and the collapse past a fold.

``trajectories`` draws x(t) from up to :data:`MAX_STARTS` initial states (each
its own colour *and* dash, start value in the legend) with the stable states
as horizontal reference lines and the thresholds dashed. ``collapse`` draws the
fall once the lever is past the fold that ends the stable state: today's
setting when that already holds (the assessment's collapse record), else the
"what if" setting :data:`PAST_FOLD` beyond the lever limit (the title says
which), with the integrated time and the bottleneck estimate as two labelled
vertical markers.

Every curve is sampled on one fixed time grid (:mod:`sitegen.figures.sampling`),
so the table rows are exactly the plotted points. Units: state unit, time unit
and lever unit of the scenario.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from sitegen.analysis.bifurcations import SADDLE_NODE
from sitegen.analysis.equilibria import find_equilibria
from sitegen.analysis.records import STABLE, Equilibrium
from sitegen.dynamics.assess import NUMERIC_FAILURES, Assessment
from sitegen.dynamics.collapse import collapse_past_fold
from sitegen.dynamics.records import COLLAPSE, COLLAPSES, WITHIN_1, Collapse
from sitegen.dynamics.trajectories import integrate, region_starts
from sitegen.figures.common import (
    POLICY_COLOURS,
    POLICY_DASHES,
    POLICY_MARKERS,
    STYLES,
    Figure,
    finish,
    new_figure,
    rounded,
    table_of,
    tag,
    with_unit,
)
from sitegen.figures.sampling import Sampled, nice_end, sample_runs
from sitegen.model.model import Model, build_model
from sitegen.scenario.records import LOWER, Scenario

MAX_STARTS = 8
INTERIOR_STARTS = 6  # evenly spaced starts across the region, plus today's state
PAST_FOLD = 0.10  # the "what if" lever: this fraction beyond the limit, away from safety
SETTLE_MARGIN = 1.15  # the time axis runs this much past the slowest settling run


def _n(value: float) -> str:
    """A number for words: three significant figures, no exponent for everyday sizes."""
    return f"{value:,.0f}" if abs(value) >= 100 else f"{value:.3g}"


def _equilibria(assessment: Assessment) -> list[Equilibrium]:
    return list(assessment.analysis.equilibria)


def trajectory_runs(
    model: Model, equilibria: list[Equilibrium], collapse_level: float | None
) -> tuple[tuple[Sampled, ...], list, float]:
    """(sampled runs, the dynamics stage's trajectories, time axis end) for the starts."""
    starts = region_starts(model, INTERIOR_STARTS)[:MAX_STARTS]
    runs = [integrate(model, float(x0), equilibria, collapse_level) for x0 in starts]
    ends = [
        t
        for run in runs
        for t in (run.time_of(WITHIN_1), run.time_of(COLLAPSE))
        if t is not None and t > 0
    ]
    end = nice_end(SETTLE_MARGIN * max(ends)) if ends else nice_end(float(runs[0].times[-1]))
    return sample_runs(model, starts, end, collapse_level), runs, end


def _describe_runs(
    model: Model, scenario: Scenario, runs: list, end: float, equilibria: list[Equilibrium]
) -> str:
    """Words: which starts settle where and when, which collapse, and the threshold."""
    unit, time_unit = model.state_unit, model.time_unit
    low, high = model.region
    groups: dict[object, list] = {}
    for run in runs:
        groups.setdefault(run.attractor if run.fate != COLLAPSES else COLLAPSES, []).append(run)
    parts = []
    for key, members in groups.items():
        first = min(r.start for r in members)
        last = max(r.start for r in members)
        span = (
            f"from {_n(first)} {unit}"
            if first == last
            else f"starts from {_n(first)} to {_n(last)} {unit}"
        )
        if key == COLLAPSES:
            times = [r.time_of(COLLAPSE) for r in members if r.time_of(COLLAPSE) is not None]
            when = f" within {_n(max(times))} {time_unit}" if times else ""
            parts.append(
                f"{span} fall to the collapse level {_n(members[0].collapse_level)} {unit}{when}"
            )
        elif key is None:
            parts.append(f"{span} leave the region or keep moving")
        else:
            times = [r.time_of(WITHIN_1) for r in members if r.time_of(WITHIN_1) is not None]
            when = f" (within 1% after {_n(max(times))} {time_unit})" if times else ""
            parts.append(f"{span} settle at {_n(float(key))} {unit}{when}")
    thresholds = sorted({e.level for r in runs for e in r.events if e.kind == "threshold"})
    thresholds += [e.value for e in equilibria if e.stability != STABLE and low < e.value < high]
    split = (
        " The threshold "
        + " and ".join(f"{_n(v)} {unit}" for v in sorted(set(thresholds)))
        + " separates them."
        if thresholds
        else ""
    )
    return (
        f"{scenario.state.name.capitalize()} over {_n(end)} {time_unit} from {len(runs)} "
        f"starting levels: " + "; ".join(parts) + "." + split
    )


def trajectory_figure(scenario: Scenario, assessment: Assessment) -> Figure:
    """x(t) from several starts with the stable states and thresholds as reference lines."""
    model = build_model(scenario)
    equilibria = _equilibria(assessment)
    sampled, runs, end = trajectory_runs(model, equilibria, scenario.state.collapse_level)
    figure, (axes,) = new_figure()
    low, high = model.region
    for e in equilibria:
        if not low < e.value < high and e.stability != STABLE:
            continue
        style = STYLES["stable"] if e.stability == STABLE else STYLES["unstable"]
        word = "stable state" if e.stability == STABLE else "threshold"
        line = axes.axhline(e.value, color=style.colour, linestyle=style.dash, linewidth=0.9)
        tag(line, f"{'stable' if e.stability == STABLE else 'threshold'}-{_n(e.value)}")
        axes.annotate(
            f"{word} {_n(e.value)} {model.state_unit}",
            (1.0, e.value),
            xycoords=("axes fraction", "data"),
            xytext=(3, 0),
            textcoords="offset points",
            va="center",
            fontsize=7.5,
            color=style.colour,
        )
    rows: list[list[object]] = [[], [], []]
    today = model.current_state
    for k, run in enumerate(sampled):
        label = f"from {_n(run.start)} {model.state_unit}" + (
            " (today)" if today is not None and run.start == today else ""
        )
        (line,) = axes.plot(
            run.times,
            run.states,
            color=POLICY_COLOURS[k % len(POLICY_COLOURS)],
            linestyle=POLICY_DASHES[k % len(POLICY_DASHES)],
            marker=POLICY_MARKERS[k % len(POLICY_MARKERS)],
            markevery=[0],
            label=label,
        )
        tag(line, f"run-{k}")
        rows[0].extend([rounded(run.start)] * run.times.size)
        rows[1].extend(rounded(float(t)) for t in run.times)
        rows[2].extend(rounded(float(x)) for x in run.states)
    axes.set_xlim(0.0, end)
    axes.set_xlabel(with_unit("time", model.time_unit))
    axes.set_ylabel(with_unit(scenario.state.name, model.state_unit))
    axes.legend(loc="upper left", bbox_to_anchor=(1.22, 1.0), fontsize=7.5, title="start")
    title = f"{scenario.state.name.capitalize()} over time from {len(sampled)} starting levels"
    table = table_of(
        (
            with_unit("start", model.state_unit),
            with_unit("time", model.time_unit),
            with_unit(scenario.state.name, model.state_unit),
        ),
        rows,
    )
    return finish(
        figure, "trajectories", title, _describe_runs(model, scenario, runs, end, equilibria), table
    )


@dataclass(frozen=True)
class CollapseCase:
    """The collapse to draw: the model at the lever value, its record, and whether
    that value is today's (``today``) or the "what if" one past the limit."""

    model: Model
    record: Collapse
    today: bool


def collapse_case(scenario: Scenario, assessment: Assessment) -> CollapseCase | None:
    """Today's collapse record, else the one :data:`PAST_FOLD` beyond a fold limit."""
    model = build_model(scenario)
    if assessment.collapse is not None and assessment.collapse.collapse_time is not None:
        return CollapseCase(model, assessment.collapse, True)
    limit = assessment.lever_limit
    if assessment.collapse is not None or limit is None or limit.kind != SADDLE_NODE:
        return None
    sign = 1.0 if limit.direction == "largest" else -1.0
    value = limit.limit + sign * PAST_FOLD * abs(limit.limit)
    past = model.with_values({limit.lever: value})
    try:
        equilibria, _ = find_equilibria(past)
        record = collapse_past_fold(
            past,
            list(assessment.analysis.bifurcations),
            collapse_level=scenario.state.collapse_level,
            equilibria=equilibria,
        )
    except NUMERIC_FAILURES:
        # The what-if run failed numerically (e.g. a log-rate solver stepping below zero):
        # no figure rather than a wrong one; today's assessment itself is unaffected.
        return None
    if record is None or record.collapse_time is None:
        return None
    return CollapseCase(past, record, False)


def collapse_figure(scenario: Scenario, assessment: Assessment) -> Figure | None:
    """The fall past the fold with the integrated and the bottleneck time marked."""
    case = collapse_case(scenario, assessment)
    if case is None:
        return None
    model, record = case.model, case.record
    flip = scenario.state.better == LOWER
    word = "flip" if flip else "collapse"
    integrated = float(record.collapse_time)  # type: ignore[arg-type]
    ghost = record.ghost_time
    shown = [integrated] + ([ghost] if math.isfinite(ghost) else [])
    end = nice_end(SETTLE_MARGIN * max(shown))
    (run,) = sample_runs(
        model, [record.start], end, None if flip else scenario.state.collapse_level
    )
    lever_unit = assessment.units.get("lever", "")
    setting = f"{record.lever} = {_n(record.lever_value)} {lever_unit}".rstrip()
    which = (
        f"today's {setting}"
        if case.today
        else f"{setting}, {PAST_FOLD:.0%} past the limit {_n(record.fold_value)} {lever_unit} "
        f"(a what-if: today's {_n(float(assessment.lever_value or 0.0))} {lever_unit} is safe)"
    )
    figure, (axes,) = new_figure()
    style = STYLES["rate"]
    (line,) = axes.plot(
        run.times,
        run.states,
        color=style.colour,
        linestyle=style.dash,
        label=f"{scenario.state.name} under {setting}",
    )
    tag(line, "fall")
    level_style = STYLES["unstable"]
    level = axes.axhline(
        record.collapse_level,
        color=level_style.colour,
        linestyle=level_style.dash,
        linewidth=0.9,
        label=f"{word} level {_n(record.collapse_level)} {model.state_unit}",
    )
    tag(level, "collapse-level")
    ghost_style = STYLES["semi-stable"]
    fold = axes.axhline(
        record.fold_state,
        color=ghost_style.colour,
        linestyle=ghost_style.dash,
        linewidth=0.9,
        label=f"ghost of the lost state {_n(record.fold_state)} {model.state_unit}",
    )
    tag(fold, "ghost-state")
    for gid, time_value, key, words in (
        ("integrated-time", integrated, "today", "integrated"),
        ("bottleneck-time", ghost, "limit", "bottleneck estimate"),
    ):
        if not math.isfinite(time_value):
            continue
        marker_style = STYLES[key]
        marker = axes.axvline(
            time_value,
            color=marker_style.colour,
            linestyle=marker_style.dash,
            linewidth=1.4,
            label=f"{words}: {_n(time_value)} {model.time_unit}",
        )
        tag(marker, gid)
        axes.annotate(
            f"{words}\n{_n(time_value)} {model.time_unit}",
            (time_value, 1.0),
            xycoords=("data", "axes fraction"),
            xytext=(3, -3),
            textcoords="offset points",
            va="top",
            fontsize=7.5,
            color=marker_style.colour,
        )
    axes.set_xlim(0.0, end)
    axes.set_xlabel(with_unit("time", model.time_unit))
    axes.set_ylabel(with_unit(scenario.state.name, model.state_unit))
    axes.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize=7.5)
    title = f"Time to {word} under {which}"
    ghost_words = (
        f"the bottleneck estimate pi/sqrt(ab) is {_n(ghost)} {model.time_unit}"
        if math.isfinite(ghost)
        else "the bottleneck estimate does not apply (no slow passage)"
    )
    description = (
        f"{scenario.state.name.capitalize()} from {_n(record.start)} {model.state_unit} under "
        f"{which}: it reaches the {word} level {_n(record.collapse_level)} {model.state_unit} "
        f"after {_n(integrated)} {model.time_unit} (integrated); {ghost_words}. "
        f"The fall is slowest near {_n(record.fold_state)} {model.state_unit}, where the "
        "stable state was lost." + (f" {record.note.capitalize()}." if record.note else "")
    )
    table = table_of(
        (with_unit("time", model.time_unit), with_unit(scenario.state.name, model.state_unit)),
        [[rounded(float(t)) for t in run.times], [rounded(float(x)) for x in run.states]],
    )
    return finish(figure, "collapse", title, description, table)


def trajectories(scenario: Scenario, assessment: Assessment) -> list[Figure] | None:
    """The trajectories figure and, where a fold can be passed, the collapse figure."""
    made = [trajectory_figure(scenario, assessment)]
    fall = collapse_figure(scenario, assessment)
    if fall is not None:
        made.append(fall)
    return made
