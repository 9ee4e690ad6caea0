"""Risk figures from the Monte Carlo: the lever limit's distribution, and a fan chart.

``limit_histogram`` shows the per-sample lever limits of the base model
(:class:`sitegen.dynamics.uncertainty.UncertaintyOutcome.lever_limits`) as a
hatched histogram in percent of samples, with today's setting as a vertical
line. The bins are aligned so that today's setting is a bin edge: the bars on
the unsafe side (limit below today's setting when the lever must stay below
its limit, above it otherwise) are exactly the samples that collapse (or flip)
at today's setting; they are shaded, hatched differently and labelled with the
report's collapse risk. Limits outside the searched interval (+-inf) are
counted in the end bins.

``fan_chart`` integrates today's state under today's lever for the first
:data:`FAN_SAMPLES` parameter draws at once (fixed-step RK4 across samples,
:func:`sitegen.figures.sampling.rk4_many`) and draws the 5%, 50% and 95%
quantiles of the state over time.

Units: lever in its unit, state in the state unit, time in the time unit,
shares in percent of the samples.
"""

from __future__ import annotations

import numpy as np

from sitegen.dynamics.assess import Assessment
from sitegen.dynamics.records import COLLAPSE, WITHIN_1
from sitegen.dynamics.uncertainty import UncertaintyOutcome, sample_arguments
from sitegen.figures.common import (
    PALETTE,
    STYLES,
    Figure,
    finish,
    new_figure,
    rounded,
    table_of,
    tag,
    with_unit,
)
from sitegen.figures.sampling import nice_end, rk4_many
from sitegen.model.model import build_model
from sitegen.scenario.records import LOWER, Scenario

FAN_SAMPLES = 500
BINS = 40  # about this many bins across the bulk of the limits
BULK = (0.001, 0.999)  # quantiles that set the histogram's span (the tails go to the end bins)
FAN_MARGIN = 3.0  # past today's run settling: slower samples and collapses take longer


def _n(value: float) -> str:
    return f"{value:,.0f}" if abs(value) >= 100 else f"{value:.3g}"


def unsafe_share(outcome: UncertaintyOutcome) -> tuple[np.ndarray, float]:
    """(mask of samples whose limit is on the unsafe side of today's setting, its share)."""
    limits, today = outcome.lever_limits, float(outcome.lever_value or 0.0)
    mask = limits < today if outcome.limit_side == "largest" else limits > today
    return mask, float(np.count_nonzero(mask)) / limits.size


def histogram_of(outcome: UncertaintyOutcome) -> tuple[np.ndarray, np.ndarray]:
    """(bin edges, counts) with today's setting on an edge and every sample counted."""
    limits, today = outcome.lever_limits, float(outcome.lever_value or 0.0)
    finite = limits[np.isfinite(limits)]
    bulk = np.quantile(finite, BULK) if finite.size else np.array([today, today])
    low, high = min(float(bulk[0]), today), max(float(bulk[1]), today)
    width = (high - low) / BINS if high > low else max(abs(today), 1.0) / BINS
    first = int(np.floor((low - today) / width)) - 1
    last = int(np.ceil((high - today) / width)) + 1
    edges = today + width * np.arange(first, last + 1)
    # Tails and censored limits (+-inf) go into the end bins, so the bars sum to all samples.
    clipped = np.clip(limits, edges[0] + 0.5 * width, edges[-1] - 0.5 * width)
    counts, _ = np.histogram(clipped, bins=edges)
    return edges, counts


def limit_histogram(scenario: Scenario, assessment: Assessment) -> Figure | None:
    """Histogram of the lever limit under uncertainty against today's setting."""
    report = assessment.uncertainty
    if report is None:
        return None
    outcome = report.outcome("base")
    if outcome.lever is None or outcome.lever_value is None or outcome.lever_limits.size == 0:
        return None
    if not np.isfinite(outcome.lever_limits).any():
        return None
    word = "flip" if scenario.state.better == LOWER else "collapse"
    units = assessment.units
    lever, today = outcome.lever, float(outcome.lever_value)
    edges, counts = histogram_of(outcome)
    percent = 100.0 * counts / outcome.lever_limits.size
    # With today's setting on an edge, each bar lies wholly on one side of it.
    unsafe = edges[:-1] < today if outcome.limit_side == "largest" else edges[:-1] >= today
    _, share = unsafe_share(outcome)
    risk = 100.0 * outcome.collapse_risk
    figure, (axes,) = new_figure()
    width = float(edges[1] - edges[0])
    safe_bars = axes.bar(
        edges[:-1][~unsafe],
        percent[~unsafe],
        width=width,
        align="edge",
        color="white",
        edgecolor=PALETTE["blue"],
        hatch="//",
        linewidth=0.6,
        label=f"limit on the safe side ({100 - risk:.1f}%)",
    )
    for k, bar in enumerate(safe_bars.patches):
        tag(bar, f"safe-bar-{k}")
    risk_bars = axes.bar(
        edges[:-1][unsafe],
        percent[unsafe],
        width=width,
        align="edge",
        color=PALETTE["vermillion"],
        alpha=0.85,
        edgecolor="black",
        hatch="xx",
        linewidth=0.6,
        label=f"{word} risk {risk:.1f}% (limit past today's setting)",
    )
    for k, bar in enumerate(risk_bars.patches):
        tag(bar, f"risk-bar-{k}")
    side = (edges[0], today) if outcome.limit_side == "largest" else (today, edges[-1])
    span = axes.axvspan(*side, color=PALETTE["vermillion"], alpha=0.08, linewidth=0)
    tag(span, "risk-shade")
    style = STYLES["today"]
    line = axes.axvline(
        today,
        color=style.colour,
        linestyle=style.dash,
        linewidth=1.6,
        label=f"today: {lever} = {_n(today)} {units['lever']}",
    )
    tag(line, "today")
    axes.annotate(
        f"{word} risk\n{risk:.1f}%",
        (today, 0.95),
        xycoords=("data", "axes fraction"),
        xytext=(-4 if outcome.limit_side == "largest" else 4, 0),
        textcoords="offset points",
        va="top",
        ha="right" if outcome.limit_side == "largest" else "left",
        fontsize=8,
        color=PALETTE["vermillion"],
    )
    axes.set_xlim(edges[0], edges[-1])
    axes.set_xlabel(with_unit(f"lever limit of {lever}", units["lever"]))
    axes.set_ylabel("share of samples [%]")
    axes.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize=7.5)
    q = outcome.lever_limit
    spread = (
        f"the limit's median is {_n(q.p50)} {units['lever']} (5-95%: {_n(q.p05)} to {_n(q.p95)})"
        if q is not None
        else "the limits lie outside the searched interval"
    )
    side_words = "below" if outcome.limit_side == "largest" else "above"
    description = (
        f"Lever limit of {lever} over {outcome.lever_limits.size:,} parameter samples: "
        f"{spread}. Today's setting {_n(today)} {units['lever']}: {risk:.1f}% of the samples "
        f"have their limit {side_words} it (the {word} risk, shaded); {share:.1%} by count "
        "of the limits."
    )
    table = table_of(
        (
            with_unit("bin from", units["lever"]),
            with_unit("bin to", units["lever"]),
            "samples",
            "share [%]",
            "past today's setting",
        ),
        [
            [rounded(float(v)) for v in edges[:-1]],
            [rounded(float(v)) for v in edges[1:]],
            [int(c) for c in counts],
            [rounded(float(p)) for p in percent],
            ["yes" if u else "no" for u in unsafe],
        ],
    )
    return finish(
        figure,
        "risk",
        f"Lever limit of {lever} under uncertainty: {word} risk {risk:.1f}% at today's setting",
        description,
        table,
    )


def fan_chart(scenario: Scenario, assessment: Assessment) -> Figure | None:
    """5/50/95% quantiles of the state over time from today, under today's lever."""
    report = assessment.uncertainty
    if report is None or assessment.current_state is None or not report.draws:
        return None
    model = build_model(scenario)
    draws = {name: values[:FAN_SAMPLES] for name, values in report.draws.items()}
    arguments = sample_arguments(model, draws)
    count = min(FAN_SAMPLES, report.samples)
    run = assessment.trajectory
    settle = None
    if run is not None:
        settle = run.time_of(WITHIN_1) or run.time_of(COLLAPSE) or float(run.times[-1])
    end = nice_end(FAN_MARGIN * settle) if settle else 100.0
    times, states = rk4_many(model, arguments, float(assessment.current_state), end)
    low, middle, high = np.quantile(states, (0.05, 0.5, 0.95), axis=0)
    units = assessment.units
    figure, (axes,) = new_figure()
    band = axes.fill_between(
        times,
        low,
        high,
        facecolor=PALETTE["sky"],
        alpha=0.35,
        edgecolor=PALETTE["blue"],
        linewidth=0.0,
        label="5% to 95% of samples",
    )
    tag(band, "band")
    for gid, values, style, words in (
        ("p05", low, STYLES["unstable"], "5% quantile"),
        ("p50", middle, STYLES["stable"], "median"),
        ("p95", high, STYLES["limit"], "95% quantile"),
    ):
        (line,) = axes.plot(times, values, color=style.colour, linestyle=style.dash, label=words)
        tag(line, gid)
    if scenario.state.collapse_level is not None:
        level = axes.axhline(
            scenario.state.collapse_level,
            color="black",
            linestyle=":",
            linewidth=0.9,
            label=f"collapse level {_n(scenario.state.collapse_level)} {units['state']}",
        )
        tag(level, "collapse-level")
    axes.set_xlim(0.0, end)
    axes.set_xlabel(with_unit("time", units["time"]))
    axes.set_ylabel(with_unit(scenario.state.name, units["state"]))
    axes.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize=7.5)
    lever = (
        f" under today's {model.lever} = {_n(float(model.values[model.lever]))} {units['lever']}"
        if model.lever
        else ""
    )
    description = (
        f"{scenario.state.name.capitalize()} from today's {_n(assessment.current_state)} "
        f"{units['state']}{lever}, for {count:,} parameter samples: after {_n(end)} "
        f"{units['time']} the median is {_n(float(middle[-1]))} {units['state']} and 90% of the "
        f"samples lie between {_n(float(low[-1]))} and {_n(float(high[-1]))} {units['state']}."
    )
    if scenario.state.collapse_level is not None:
        fallen = float(np.mean(states[:, -1] <= scenario.state.collapse_level))
        description += f" {fallen:.0%} of the samples end at or below the collapse level."
    table = table_of(
        (
            with_unit("time", units["time"]),
            with_unit("5% quantile", units["state"]),
            with_unit("median", units["state"]),
            with_unit("95% quantile", units["state"]),
        ),
        [[rounded(float(v)) for v in col] for col in (times, low, middle, high)],
    )
    return finish(
        figure,
        "risk-fan",
        f"Spread of the {scenario.state.name} over time under uncertainty",
        description,
        table,
    )


def risk(scenario: Scenario, assessment: Assessment) -> list[Figure] | None:
    """The lever-limit histogram and the fan chart (None without [uncertainty])."""
    made = [
        f
        for f in (limit_histogram(scenario, assessment), fan_chart(scenario, assessment))
        if f is not None
    ]
    return made or None
