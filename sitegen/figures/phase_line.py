"""The phase line: the rate f(x) over the region, with flow, equilibria, basins and today.

Conventions (textbook): the horizontal line rate = 0 is the state axis; an arrow
on it points the way the state moves (right where f > 0, left where f < 0);
equilibria are drawn filled (stable), open (unstable) or half-filled
(semi-stable), each a group with id ``equilibrium-<stability>-<k>`` (k its
index in the analysis); basins are shaded with a light fill *and* a hatch;
thresholds are dotted vertical lines labelled with their value and unit; today's
state is a diamond. Units: state in the state unit, rate in state unit per time
unit. The table is the sampled curve, exactly the points drawn (gid ``rate-curve``).
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure as MplFigure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from sitegen.analysis.records import SEMI_STABLE, STABLE, Analysis, Basin
from sitegen.dynamics.assess import Assessment
from sitegen.figures.analysis_parts import (
    HATCH_COLOUR,
    LIGHT,
    amount,
    legend_below,
    listing,
    state_unit,
)
from sitegen.figures.common import STYLES, Figure, Table, finish, new_figure, table_of, tag
from sitegen.model.model import build_model
from sitegen.scenario.records import Scenario

NAME = "phase-line"
SAMPLES = 301  # even grid over the region; the equilibria are added to it exactly
BASIN_LOOKS = (("sky", "//"), ("orange", "\\\\"), ("purple", "||"), ("yellow", "--"))
EXIT_LOOK = ("grey", "xx")  # states that leave the region (collapse or run away)
MIN_ARROW_SPAN = 0.02  # of the region: narrower gaps between equilibria get no arrow


def curve_points(scenario: Scenario, analysis: Analysis) -> tuple[np.ndarray, np.ndarray]:
    """States (an even grid over the region plus every equilibrium) and the rate there.

    Rates that are not finite (outside the rate's domain) are NaN and leave a gap.
    """
    model = build_model(scenario)
    low, high = analysis.region
    states = np.union1d(
        np.linspace(low, high, SAMPLES),
        np.array([e.value for e in analysis.equilibria if low <= e.value <= high], dtype=float),
    )
    rates = model.f(states, analysis.parameters)
    rates = np.where(np.isfinite(rates), rates, np.nan)
    return states, rates


def _basin_words(basin: Basin, unit: str) -> str:
    if basin.attractor is not None:
        return f"settles at {amount(basin.attractor, unit)}"
    return "collapses" if basin.exit == "lower end" else "runs away above"


def draw(scenario: Scenario, assessment: Assessment) -> tuple[MplFigure, Table, str, str]:
    """The Matplotlib figure, its table, title and description (before SVG rendering)."""
    analysis = assessment.analysis
    unit, time_unit = state_unit(scenario), scenario.model.time_unit
    low, high = analysis.region
    span = high - low
    states, rates = curve_points(scenario, analysis)
    figure, (axes,) = new_figure(height_in=3.9)

    # Basins first, so everything else is drawn over them.
    handles: list = []
    for k, basin in enumerate(analysis.basins):
        colour, hatch = (
            BASIN_LOOKS[k % len(BASIN_LOOKS)] if basin.attractor is not None else (EXIT_LOOK)
        )
        patch = axes.axvspan(
            basin.low,
            basin.high,
            facecolor=LIGHT[colour],
            edgecolor=HATCH_COLOUR,
            hatch=hatch,
            linewidth=0,
            zorder=0,
        )
        patch.set_hatch_linewidth(0.6)  # light hatch: readable in grey, quiet in colour
        tag(patch, f"basin-{k}")
        words = _basin_words(basin, unit)
        handles.append(
            Patch(
                facecolor=LIGHT[colour],
                edgecolor=HATCH_COLOUR,
                hatch=hatch,
                label=f"{amount(basin.low, unit)} to {amount(basin.high, unit)}: {words}",
            )
        )
        # Near an end of the region the label hangs inward, so it is never cut off.
        middle, align = (basin.low + basin.high) / 2, "center"
        if middle < low + 0.15 * span:
            middle, align = basin.low, "left"
        elif middle > high - 0.15 * span:
            middle, align = basin.high, "right"
        axes.text(
            middle,
            0.97,
            words,
            transform=axes.get_xaxis_transform(),
            ha=align,
            va="top",
            fontsize=7.5,
            clip_on=True,
            bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.8, "pad": 1.5},
        )

    rate_style = STYLES["rate"]
    (curve,) = axes.plot(
        states, rates, color=rate_style.colour, linestyle=rate_style.dash, zorder=3
    )
    tag(curve, "rate-curve")
    axes.axhline(0.0, color="#444444", linewidth=1.0, zorder=2)

    # Flow arrows on the state axis, one per gap between neighbouring equilibria.
    stops = np.unique(np.concatenate(([low, high], [e.value for e in analysis.equilibria])))
    middles = (stops[:-1] + stops[1:]) / 2
    widths = stops[1:] - stops[:-1]
    model = build_model(scenario)
    signs = np.sign(model.f(middles, analysis.parameters))
    for k, (middle, width, sign) in enumerate(zip(middles, widths, signs, strict=True)):
        if width < MIN_ARROW_SPAN * span or not np.isfinite(sign) or sign == 0:
            continue
        reach = min(0.3 * width, 0.06 * span) * sign
        arrow = axes.annotate(
            "",
            xy=(middle + reach, 0),
            xytext=(middle - reach, 0),
            arrowprops={
                "arrowstyle": "-|>,head_width=0.35,head_length=0.7",
                "color": "#222222",
                "linewidth": 1.6,
            },
            zorder=4,
        )
        tag(arrow, f"flow-{'up' if sign > 0 else 'down'}-{k}")

    for threshold in analysis.thresholds:
        axes.axvline(
            threshold, color=STYLES["unstable"].colour, linestyle=":", linewidth=1.2, zorder=2
        )
        axes.text(
            threshold,
            0.89,
            f"threshold {amount(threshold, unit)}",
            transform=axes.get_xaxis_transform(),
            ha="center",
            va="top",
            fontsize=7.5,
            color="#222222",
            bbox={
                "facecolor": "white",
                "edgecolor": STYLES["unstable"].colour,
                "linestyle": ":",
                "pad": 1.5,
            },
        )

    previous = -np.inf
    for k, equilibrium in enumerate(analysis.equilibria):
        # A label close to the previous one goes above the axis instead of below it.
        crowded = equilibrium.value - previous < 0.05 * span
        previous = equilibrium.value if not crowded else -np.inf
        look = STYLES[equilibrium.stability]
        fill = {"stable": "full", "semi-stable": "left"}.get(equilibrium.stability, "full")
        face = look.colour if equilibrium.stability in (STABLE, SEMI_STABLE) else "white"
        (marker,) = axes.plot(
            [equilibrium.value],
            [0.0],
            linestyle="none",
            marker="o",
            markersize=9,
            markeredgewidth=1.6,
            color=look.colour,
            markerfacecolor=face,
            markerfacecoloralt="white",
            fillstyle=fill,
            zorder=6,
            clip_on=False,
        )
        tag(marker, f"equilibrium-{equilibrium.stability}-{k}")
        axes.annotate(
            number_label(equilibrium.value, unit),
            (equilibrium.value, 0.0),
            xytext=(0, 8 if crowded else -13),
            textcoords="offset points",
            ha="center",
            va="bottom" if crowded else "top",
            fontsize=7.5,
            color="#222222",
        )

    current = assessment.current_state
    if current is not None:
        today = STYLES["today"]
        axes.axvline(current, color=today.colour, linestyle=today.dash, linewidth=1.2, zorder=2)
        # On the bottom edge, not on the state axis, so it never hides an equilibrium there.
        (diamond,) = axes.plot(
            [current],
            [0.0],
            linestyle="none",
            marker=today.marker,
            markersize=8,
            color=today.colour,
            markeredgecolor="black",
            transform=axes.get_xaxis_transform(),
            zorder=7,
            clip_on=False,
        )
        tag(diamond, "today")
        right = current < low + 0.75 * span
        axes.text(
            current,
            0.04,
            f" today {amount(current, unit)} ",
            ha="left" if right else "right",
            va="bottom",
            transform=axes.get_xaxis_transform(),
            fontsize=8,
            fontweight="bold",
            color="#1b5e45",
            bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.85, "pad": 1},
        )

    axes.set_xlim(low, high)
    finite = rates[np.isfinite(rates)]
    if finite.size:
        top = max(abs(finite.min()), abs(finite.max())) or 1.0
        axes.set_ylim(min(finite.min(), -0.25 * top) * 1.15, max(finite.max(), 0.25 * top) * 1.3)
    symbol = scenario.state.symbol
    axes.set_xlabel(with_state(scenario.state.name, symbol, unit))
    rate_unit = f"{unit}/{time_unit}" if unit else f"1/{time_unit}"
    axes.set_ylabel(f"rate of change d{symbol}/dt [{rate_unit}]")
    handles = [
        *_marker_handles(analysis, current is not None),
        Line2D([], [], color=rate_style.colour, label="rate (above 0: rises)"),
        *handles,
    ]
    legend_below(axes, handles, columns=2)

    table = table_of(
        (f"{symbol} [{unit}]" if unit else symbol, f"d{symbol}/dt [{rate_unit}]"),
        (states.tolist(), rates.tolist()),
    )
    title = f"Phase line of {scenario.state.name}: {scenario.title}"
    return figure, table, title, describe(scenario, assessment)


def number_label(value: float, unit: str) -> str:
    """The label under an equilibrium marker (its value; the unit is on the axis)."""
    return amount(value, "")


def with_state(name: str, symbol: str, unit: str) -> str:
    """State axis label, e.g. ``spawning biomass B [kt]``."""
    return f"{name} {symbol}" + (f" [{unit}]" if unit else "")


def _marker_handles(analysis: Analysis, with_today: bool) -> list:
    """Legend proxies for the marker kinds that appear (proxies carry no gid)."""
    kinds = [
        s
        for s in (STABLE, "unstable", SEMI_STABLE)
        if any(e.stability == s for e in analysis.equilibria)
    ]
    handles = []
    for kind in kinds:
        look = STYLES[kind]
        handles.append(
            Line2D(
                [],
                [],
                linestyle="none",
                marker="o",
                markersize=8,
                color=look.colour,
                markerfacecolor="white" if kind == "unstable" else look.colour,
                markerfacecoloralt="white",
                fillstyle="left" if kind == SEMI_STABLE else "full",
                label=f"{kind} state",
            )
        )
    if with_today:
        handles.append(
            Line2D(
                [],
                [],
                linestyle="none",
                marker="D",
                color=STYLES["today"].colour,
                markeredgecolor="black",
                label="today",
            )
        )
    return handles


def describe(scenario: Scenario, assessment: Assessment) -> str:
    """The figure's description in words, with the numbers."""
    analysis = assessment.analysis
    unit = state_unit(scenario)
    name = scenario.state.name
    parts = [
        f"Rate of change of {name} against {name}, from {amount(analysis.region[0], unit)} "
        f"to {amount(analysis.region[1], unit)}; the state rises where the curve is above "
        "zero and falls where it is below."
    ]
    for kind, plural in (
        (STABLE, "Stable states"),
        ("unstable", "Unstable equilibria"),
        (SEMI_STABLE, "Semi-stable equilibria"),
    ):
        values = [amount(e.value, unit) for e in analysis.equilibria if e.stability == kind]
        if values:
            single = plural.replace("states", "state").replace("equilibria", "equilibrium")
            parts.append(f"{single if len(values) == 1 else plural} at {listing(values)}.")
    if not analysis.equilibria:
        parts.append("No equilibrium in the region.")
    if analysis.thresholds:
        words = listing([amount(t, unit) for t in analysis.thresholds])
        parts.append(f"Threshold{'s' if len(analysis.thresholds) > 1 else ''} at {words}.")
    current = assessment.current_state
    if current is not None:
        basin = next((b for b in analysis.basins if b.low <= current <= b.high), None)
        where = f"Today {amount(current, unit)}"
        if basin is None:
            parts.append(f"{where} lies outside the region.")
        elif basin.attractor is not None:
            parts.append(
                f"{where} lies in the basin of the stable state at {amount(basin.attractor, unit)}."
            )
        else:
            parts.append(f"{where} lies where the state {_basin_words(basin, unit)}.")
    return " ".join(parts)


def phase_line_figure(scenario: Scenario, assessment: Assessment) -> Figure:
    """The phase-line figure of a scenario (always applies)."""
    figure, table, title, description = draw(scenario, assessment)
    return finish(figure, NAME, title, description, table)
