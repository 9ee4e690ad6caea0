"""Bifurcation diagrams: the continued equilibria against each ranged parameter.

One figure per ranged parameter, named ``bifurcation-<parameter>`` (lowercase,
other characters as ``-``), the lever first. Conventions: stable branch parts are
solid blue, unstable ones dashed vermillion (dash *and* colour); every branch
part is a line with gid ``branch-<b>-<j>-<stability>``; folds and other
bifurcation points are black-edged squares with gid ``bifurcation-<kind>-<k>``
(k counts within the figure) and a label with the parameter value and its unit;
today's setting is a dash-dot vertical line, today's state a diamond on it. For
the lever, the safe range (``assessment.lever_limit``) is shaded with a light cross-grid and
the tipping setting drawn as a limit line. Settings with no stable positive
state are shaded with crosses and labelled "no stable state: collapse"; with
``better = "lower"`` (a pollutant or pest) the side past the lever limit is
labelled as the flip to the high state instead.

Units: parameter in its own unit (x axis), state in the state unit (y axis).
The table lists every plotted branch point (branch, part, parameter, state,
stable yes/no); a point where stability changes ends one part and starts the
next, so it appears in both, exactly as drawn.
"""

from __future__ import annotations

import re

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure as MplFigure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from sitegen.analysis.records import Analysis, Branch
from sitegen.dynamics.assess import Assessment
from sitegen.figures.analysis_parts import (
    HATCH_COLOUR,
    LIGHT,
    amount,
    better_of,
    legend_below,
    listing,
    parameter_label,
    parameter_unit,
    state_unit,
)
from sitegen.figures.common import STYLES, Figure, Table, finish, new_figure, table_of, tag
from sitegen.model.model import build_model
from sitegen.scenario.records import LOWER, Scenario

COVER_POINTS = 801  # grid over the parameter range for "is there a stable positive state?"
POSITIVE = 1e-9  # of the region's width: states above its lower end by more are "positive"
LABEL_BOX = {"facecolor": "white", "edgecolor": "none", "alpha": 0.85, "pad": 1}
KIND_WORDS = {"saddle-node": "fold", "transcritical": "transcritical", "pitchfork": "pitchfork"}

Part = tuple[int, int, np.ndarray, np.ndarray, bool]  # branch, part, parameter, state, stable


def figure_name(parameter: str) -> str:
    """``bifurcation-<parameter>`` with the name lowercased and other characters as ``-``."""
    return "bifurcation-" + (re.sub(r"[^a-z0-9]+", "-", parameter.lower()).strip("-") or "p")


def figure_names(parameters: list[str]) -> list[str]:
    """Unique figure names; a name that differs only in case ("H" after "h") gets "-2"."""
    used: list[str] = []
    for parameter in parameters:
        name = figure_name(parameter)
        while name in used:
            name += "-2"
        used.append(name)
    return used


def ordered_parameters(scenario: Scenario, analysis: Analysis) -> list[str]:
    """The ranged parameters that have a continued branch, the lever first."""
    model = build_model(scenario)
    names = [n for n in model.ranged if any(b.parameter == n for b in analysis.branches)]
    lever = model.lever
    return sorted(names, key=lambda n: n != lever)  # stable sort: model order otherwise


def branch_parts(branches: list[Branch]) -> list[Part]:
    """Each branch cut where stability changes; the change point belongs to both parts."""
    parts: list[Part] = []
    for b, branch in enumerate(branches):
        stable = np.asarray(branch.stable, dtype=bool)
        cuts = np.flatnonzero(stable[1:] != stable[:-1]) + 1
        starts, ends = np.concatenate(([0], cuts)), np.concatenate((cuts, [stable.size]))
        for j, (start, end) in enumerate(zip(starts, ends, strict=True)):
            stop = min(end + 1, stable.size)  # include the next point: no gap at the change
            parts.append(
                (
                    b,
                    j,
                    branch.parameter_values[start:stop],
                    branch.state_values[start:stop],
                    bool(stable[start]),
                )
            )
    return parts


def uncovered(
    parts: list[Part], p_range: tuple[float, float], floor: float
) -> list[tuple[float, float]]:
    """Intervals of the parameter range where no stable part has a state above ``floor``."""
    grid = np.linspace(p_range[0], p_range[1], COVER_POINTS)
    spans = [
        (p.min(), p.max())
        for _, _, p, x, stable in parts
        if stable and p.size and np.all(x > floor)
    ]
    if spans:
        lows, highs = np.array(spans).T
        covered = np.any((grid[:, None] >= lows) & (grid[:, None] <= highs), axis=1)
    else:
        covered = np.zeros(grid.size, dtype=bool)
    edges = np.flatnonzero(np.diff(np.concatenate(([0], (~covered).astype(int), [0]))))
    return [
        (grid[a], grid[min(b, grid.size - 1)]) for a, b in zip(edges[::2], edges[1::2], strict=True)
    ]


def draw(
    scenario: Scenario, assessment: Assessment, parameter: str
) -> tuple[MplFigure, Table, str, str]:
    """The diagram for one parameter, its table, title and description."""
    analysis = assessment.analysis
    model = build_model(scenario)
    p_range = model.ranges[parameter]
    p_unit, x_unit = parameter_unit(scenario, parameter), state_unit(scenario)
    low, high = analysis.region
    better = better_of(assessment)
    branches = [b for b in analysis.branches if b.parameter == parameter]
    parts = branch_parts(branches)
    figure, (axes,) = new_figure(height_in=3.9)
    words: list[str] = []
    axes.set_xlim(*p_range)
    axes.set_ylim(low, high)

    limit = assessment.lever_limit if parameter == assessment.lever else None
    if limit is not None:
        safe_low, safe_high = (
            max(p_range[0], limit.safe_interval[0]),
            min(p_range[1], limit.safe_interval[1]),
        )
        patch = axes.axvspan(
            safe_low,
            safe_high,
            facecolor=LIGHT["green"],
            edgecolor=HATCH_COLOUR,
            hatch="++",  # dots would be Bezier circles: 68 kB of SVG per pattern
            linewidth=0,
            zorder=0,
        )
        patch.set_hatch_linewidth(0.6)
        tag(patch, "safe-range")
        look = STYLES["limit"]
        axes.axvline(limit.limit, color=look.colour, linestyle=look.dash, linewidth=1.6, zorder=2)
        axes.text(
            limit.limit,
            0.97,
            f"limit {parameter} = {amount(limit.limit, p_unit)}",
            rotation=90,
            transform=axes.get_xaxis_transform(),
            ha="right",
            va="top",
            fontsize=7.5,
            fontweight="bold",
            color="#7a4d00",
            bbox=LABEL_BOX,
            zorder=5,
        )
        words.append(
            f"The safe range of {parameter} is {amount(safe_low, p_unit)} to "
            f"{amount(safe_high, p_unit)}; the limit is {amount(limit.limit, p_unit)}."
        )
        if better == LOWER:
            side = (
                (limit.limit, p_range[1])
                if limit.direction == "largest"
                else (p_range[0], limit.limit)
            )
            _shade(axes, side, "yellow", "//", "low state lost: flip to the high state", parts)
            words.append(
                f"Past {amount(limit.limit, p_unit)} the low state is lost and the "
                "state flips to the high one."
            )

    floor = low + POSITIVE * (high - low)
    # A pest or pollutant driven to zero is a good outcome, so only "no state at all" is shaded.
    gaps = uncovered(parts, p_range, floor if better != LOWER else -np.inf)
    for gap in gaps:
        _shade(
            axes,
            gap,
            "grey",
            "xx",
            "no stable state: collapse" if better != LOWER else "no stable state",
            parts,
        )
    if gaps:
        where = listing([f"{amount(a, p_unit)} to {amount(b, p_unit)}" for a, b in gaps])
        words.append(f"No stable positive state for {parameter} from {where}.")

    for b, j, p, x, stable in parts:
        look = STYLES["stable" if stable else "unstable"]
        (line,) = axes.plot(
            p, x, color=look.colour, linestyle=look.dash, zorder=3, linewidth=2.0 if stable else 1.6
        )
        tag(line, f"branch-{b}-{j}-{'stable' if stable else 'unstable'}")

    marks = [r for r in analysis.bifurcations if r.parameter == parameter]
    for k, record in enumerate(marks):
        kind = re.sub(r"[^a-z0-9]+", "-", record.kind.lower())
        (marker,) = axes.plot(
            [record.parameter_value],
            [record.state_value],
            linestyle="none",
            marker="s",
            markersize=7,
            markerfacecolor="white",
            markeredgecolor="black",
            markeredgewidth=1.5,
            zorder=6,
        )
        tag(marker, f"bifurcation-{kind}-{k}")
        label = (
            f"{KIND_WORDS.get(record.kind, record.kind)} {amount(record.parameter_value, p_unit)}"
        )
        axes.annotate(
            label,
            (record.parameter_value, record.state_value),
            xytext=(6, 6),
            textcoords="offset points",
            fontsize=7.5,
            fontweight="bold",
            bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.85, "pad": 1},
        )
    if marks:
        words.insert(
            0,
            "Bifurcations at "
            + listing(
                [
                    f"{parameter} = {amount(r.parameter_value, p_unit)} "
                    f"({KIND_WORDS.get(r.kind, r.kind)}, "
                    f"state {amount(r.state_value, x_unit)})"
                    for r in marks
                ]
            )
            + ".",
        )
    else:
        words.insert(0, f"No bifurcation of the equilibria inside the range of {parameter}.")

    today_value = float(analysis.parameters[parameter])
    look = STYLES["today"]
    axes.axvline(today_value, color=look.colour, linestyle=look.dash, linewidth=1.3, zorder=2)
    axes.text(
        today_value,
        0.97,
        f"today {parameter} = {amount(today_value, p_unit)}",
        rotation=90,
        transform=axes.get_xaxis_transform(),
        ha="left",
        va="top",
        fontsize=7.5,
        fontweight="bold",
        color="#1b5e45",
        bbox=LABEL_BOX,
        zorder=5,
    )
    words.append(f"Today {parameter} = {amount(today_value, p_unit)}.")
    current = assessment.current_state
    if current is not None:
        (diamond,) = axes.plot(
            [today_value],
            [current],
            linestyle="none",
            marker=look.marker,
            markersize=8,
            color=look.colour,
            markeredgecolor="black",
            zorder=7,
            clip_on=False,
        )
        tag(diamond, "today")
        words[-1] = words[-1][:-1] + f", with the state at {amount(current, x_unit)}."

    axes.set_xlabel(parameter_label(scenario, parameter))
    symbol = scenario.state.symbol
    axes.set_ylabel(f"equilibrium {symbol}" + (f" [{x_unit}]" if x_unit else ""))
    legend_below(axes, _handles(limit is not None, bool(gaps), bool(marks), current is not None))

    table = table_of(
        (
            "branch",
            "part",
            parameter_label(scenario, parameter),
            f"{symbol} [{x_unit}]" if x_unit else symbol,
            "stable",
        ),
        _columns(parts),
    )
    title = f"Equilibria of {scenario.state.name} against {parameter}: {scenario.title}"
    description = (
        f"Equilibria of {scenario.state.name} ({amount(low, x_unit)} to {amount(high, x_unit)}) "
        f"against {parameter_label(scenario, parameter)} from {amount(p_range[0], p_unit)} to "
        f"{amount(p_range[1], p_unit)}; stable branches solid, unstable dashed. " + " ".join(words)
    )
    return figure, table, title, description


def _columns(parts: list[Part]) -> list[list[object]]:
    """Table columns from the drawn parts, point for point."""
    if not parts:
        return [[], [], [], [], []]
    sizes = [p.size for _, _, p, _, _ in parts]
    return [
        np.repeat([b for b, *_ in parts], sizes).tolist(),
        np.repeat([j for _, j, *_ in parts], sizes).tolist(),
        np.concatenate([p for _, _, p, _, _ in parts]).tolist(),
        np.concatenate([x for _, _, _, x, _ in parts]).tolist(),
        np.repeat(["yes" if s else "no" for *_, s in parts], sizes).tolist(),
    ]


def draw_all(scenario: Scenario, assessment: Assessment) -> list[tuple[MplFigure, Table, str, str]]:
    """:func:`draw` for every parameter of :func:`ordered_parameters`."""
    names = ordered_parameters(scenario, assessment.analysis)
    return [draw(scenario, assessment, n) for n in names]


def _shade(
    axes: Axes, span: tuple[float, float], colour: str, hatch: str, text: str, parts: list[Part]
) -> None:
    """A hatched band over a parameter interval with its meaning written in it.

    The words go in the widest stretch of the state axis with no branch inside the
    band, so they never hide a branch.
    """
    patch = axes.axvspan(
        span[0],
        span[1],
        facecolor=LIGHT[colour],
        edgecolor=HATCH_COLOUR,
        hatch=hatch,
        linewidth=0,
        zorder=0,
    )
    patch.set_hatch_linewidth(0.6)
    tag(patch, f"region-{colour}")
    low, high = axes.get_ylim()
    inside = [x[(p >= span[0]) & (p <= span[1])] for _, _, p, x, _ in parts]
    levels = np.sort(np.concatenate([[low, high], *inside]).clip(low, high))
    widest = int(np.argmax(np.diff(levels)))
    middle = (levels[widest] + levels[widest + 1]) / 2
    narrow = span[1] - span[0] < 0.3 * (axes.get_xlim()[1] - axes.get_xlim()[0])
    axes.text(
        (span[0] + span[1]) / 2,
        middle,
        text,
        rotation=90 if narrow else 0,
        ha="center",
        va="center",
        fontsize=8,
        fontweight="bold",
        color="#333333",
        bbox={"facecolor": "white", "edgecolor": "#999999", "pad": 2},
        zorder=5,
    )


def _handles(safe: bool, gaps: bool, marks: bool, today: bool) -> list:
    """Legend proxies for what the figure shows (proxies carry no gid)."""
    handles: list = [
        Line2D([], [], color=STYLES["stable"].colour, linestyle="-", label="stable equilibrium"),
        Line2D(
            [], [], color=STYLES["unstable"].colour, linestyle="--", label="unstable equilibrium"
        ),
    ]
    if marks:
        handles.append(
            Line2D(
                [],
                [],
                linestyle="none",
                marker="s",
                markerfacecolor="white",
                markeredgecolor="black",
                label="bifurcation (fold)",
            )
        )
    if today:
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
    if safe:
        handles.append(
            Patch(facecolor=LIGHT["green"], edgecolor=HATCH_COLOUR, hatch="++", label="safe range")
        )
    if gaps:
        handles.append(
            Patch(
                facecolor=LIGHT["grey"], edgecolor=HATCH_COLOUR, hatch="xx", label="no stable state"
            )
        )
    return handles


def bifurcation_figures(scenario: Scenario, assessment: Assessment) -> list[Figure] | None:
    """One diagram per ranged parameter with a branch, lever first (None if there is none)."""
    names = ordered_parameters(scenario, assessment.analysis)
    figures: list[Figure] = []
    for parameter, name in zip(names, figure_names(names), strict=True):
        figure, table, title, description = draw(scenario, assessment, parameter)
        figures.append(finish(figure, name, title, description, table))
    return figures or None
