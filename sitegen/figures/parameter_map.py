"""Two-parameter maps: regions by number of stable states, fold curves, cusps, today.

One figure per :class:`ParameterMap`, named ``map-<x>-<y>`` (lowercase, other
characters as ``-``). Conventions: each region of equal stable-state count is a
filled contour with its own light fill *and* hatch, and a text label in its
widest part ("2 stable states"); fold curves are solid black lines (gid
``fold-curve-<k>``), cusps black stars (gid ``cusp-<k>``), today's point a
diamond (gid ``today``). When the scenario declares uncertainty the parameter
samples are drawn as small grey dots (gid ``samples``), at most
:data:`MAX_SAMPLES` of them, the first ones in draw order; an axis without a
distribution is held at today's value. Units: each axis in its parameter's
unit. The table lists the fold-curve points exactly as drawn.
"""

from __future__ import annotations

import re

import numpy as np
from matplotlib.figure import Figure as MplFigure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch
from scipy.ndimage import distance_transform_edt

from sitegen.analysis.records import ParameterMap
from sitegen.dynamics.assess import Assessment
from sitegen.dynamics.uncertainty import draw_samples
from sitegen.figures.analysis_parts import (
    HATCH_COLOUR,
    LIGHT,
    amount,
    legend_below,
    listing,
    parameter_label,
    parameter_unit,
)
from sitegen.figures.common import STYLES, Figure, Table, finish, new_figure, table_of, tag
from sitegen.scenario.records import Scenario

MAX_SAMPLES = 1_000  # dots drawn: more would push the SVG past its size limit
REGION_LOOKS = (
    ("grey", "xx"),
    ("sky", ""),
    ("orange", "//"),
    ("purple", "\\\\"),
    ("yellow", "++"),
)


def figure_name(parameter_map: ParameterMap) -> str:
    """``map-<x>-<y>`` with names lowercased and other characters as ``-``."""
    words = [
        re.sub(r"[^a-z0-9]+", "-", n.lower()).strip("-") or "p"
        for n in (parameter_map.x, parameter_map.y)
    ]
    return f"map-{words[0]}-{words[1]}"


def figure_names(maps: tuple[ParameterMap, ...]) -> list[str]:
    """Unique names, in map order; a repeat (names differing only in case) gets ``-2``."""
    used: list[str] = []
    for parameter_map in maps:
        name = figure_name(parameter_map)
        while name in used:
            name += "-2"
        used.append(name)
    return used


def sample_cloud(
    scenario: Scenario, assessment: Assessment, x: str, y: str
) -> tuple[np.ndarray, np.ndarray, int] | None:
    """The first :data:`MAX_SAMPLES` sample points (x, y) and the total number of samples.

    Taken from the assessment's Monte Carlo when it has one, else drawn again with
    the scenario's seed (the same draws). None when neither axis is uncertain.
    """
    spec = scenario.uncertainty
    if spec is None:
        return None
    report = assessment.uncertainty
    draws = report.draws if report is not None and report.draws else draw_samples(spec)
    if x not in draws and y not in draws:
        return None
    total = len(next(iter(draws.values())))
    count = min(total, MAX_SAMPLES)
    today = assessment.analysis.parameters
    xs = draws[x][:count] if x in draws else np.full(count, float(today[x]))
    ys = draws[y][:count] if y in draws else np.full(count, float(today[y]))
    return np.asarray(xs, dtype=float), np.asarray(ys, dtype=float), total


def region_label_points(parameter_map: ParameterMap) -> list[tuple[int, float, float]]:
    """For each stable count present: the grid point deepest inside its region."""
    counts = parameter_map.stable_counts
    points = []
    for count in np.unique(counts):
        # Distance to the nearest cell of another count: the label sits farthest from edges.
        depth = distance_transform_edt(np.pad(counts == count, 1))[1:-1, 1:-1]
        j, i = np.unravel_index(int(np.argmax(depth)), counts.shape)
        points.append((int(count), float(parameter_map.x_grid[i]), float(parameter_map.y_grid[j])))
    return points


def _words(count: int) -> str:
    return {0: "no stable state", 1: "1 stable state"}.get(count, f"{count} stable states")


def draw(
    scenario: Scenario, assessment: Assessment, parameter_map: ParameterMap
) -> tuple[MplFigure, Table, str, str]:
    """One map, its table, title and description."""
    x, y = parameter_map.x, parameter_map.y
    x_unit, y_unit = parameter_unit(scenario, x), parameter_unit(scenario, y)
    counts = parameter_map.stable_counts
    figure, (axes,) = new_figure(height_in=4.4)
    top = int(counts.max()) if counts.size else 0
    levels = np.arange(-0.5, top + 1.0)
    looks = [REGION_LOOKS[min(c, len(REGION_LOOKS) - 1)] for c in range(top + 1)]
    filled = axes.contourf(
        parameter_map.x_grid,
        parameter_map.y_grid,
        counts,
        levels=levels,
        colors=[LIGHT[c] for c, _ in looks],
        hatches=[h for _, h in looks],
        zorder=0,
    )
    filled.set_edgecolor(HATCH_COLOUR)
    filled.set_linewidth(0)
    tag(filled, "regions")
    for count, px, py in region_label_points(parameter_map):
        axes.text(
            px,
            py,
            _words(count),
            ha="center",
            va="center",
            fontsize=8,
            fontweight="bold",
            bbox={"facecolor": "white", "edgecolor": "#999999", "pad": 2},
            zorder=5,
        )

    cloud = sample_cloud(scenario, assessment, x, y)
    if cloud is not None:
        # One path of tiny round-capped dashes (x, x + nudge, gap): about 30 bytes a sample in
        # SVG, against 150 for one marker element each, so 1,000 samples fit the size limit.
        nudge = 1e-4 * (parameter_map.x_grid[-1] - parameter_map.x_grid[0])
        xs = np.column_stack((cloud[0], cloud[0] + nudge, np.full(cloud[0].size, np.nan)))
        ys = np.column_stack((cloud[1], cloud[1], np.full(cloud[1].size, np.nan)))
        (dots,) = axes.plot(
            xs.ravel(),
            ys.ravel(),
            color="#555555",
            linewidth=2.4,
            alpha=0.5,
            solid_capstyle="round",
            zorder=2,
        )
        tag(dots, "samples")

    rows_x, rows_y, rows_state, rows_curve = [], [], [], []
    for k, curve in enumerate(parameter_map.fold_curves):
        (line,) = axes.plot(curve.x_values, curve.y_values, color="black", linewidth=1.6, zorder=3)
        tag(line, f"fold-curve-{k}")
        rows_curve.append(np.full(curve.x_values.size, k))
        rows_x.append(curve.x_values)
        rows_y.append(curve.y_values)
        rows_state.append(curve.state_values)
    cusp_words = []
    for k, cusp in enumerate(parameter_map.cusps):
        cx, cy = cusp.parameters[x], cusp.parameters[y]
        (star,) = axes.plot(
            [cx],
            [cy],
            linestyle="none",
            marker="*",
            markersize=13,
            color="black",
            markeredgecolor="white",
            zorder=6,
        )
        tag(star, f"cusp-{k}")
        axes.annotate(
            "cusp",
            (cx, cy),
            xytext=(7, -3),
            textcoords="offset points",
            fontsize=8,
            fontweight="bold",
        )
        cusp_words.append(f"{x} = {amount(cx, x_unit)}, {y} = {amount(cy, y_unit)}")

    today = assessment.analysis.parameters
    tx, ty = float(today[x]), float(today[y])
    look = STYLES["today"]
    (diamond,) = axes.plot(
        [tx],
        [ty],
        linestyle="none",
        marker=look.marker,
        markersize=9,
        color=look.colour,
        markeredgecolor="black",
        zorder=7,
        clip_on=False,
    )
    tag(diamond, "today")
    axes.annotate(
        "today",
        (tx, ty),
        xytext=(7, 5),
        textcoords="offset points",
        fontsize=8,
        fontweight="bold",
        color="#1b5e45",
        bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.85, "pad": 1},
    )
    axes.set_xlim(parameter_map.x_grid[0], parameter_map.x_grid[-1])
    axes.set_ylim(parameter_map.y_grid[0], parameter_map.y_grid[-1])
    axes.set_xlabel(parameter_label(scenario, x))
    axes.set_ylabel(parameter_label(scenario, y))
    axes.grid(False)  # the hatches already structure the plane

    present = [int(c) for c in np.unique(counts)]
    handles: list = [
        Patch(
            facecolor=LIGHT[looks[c][0]], edgecolor=HATCH_COLOUR, hatch=looks[c][1], label=_words(c)
        )
        for c in present
    ]
    if parameter_map.fold_curves:
        handles.append(Line2D([], [], color="black", label="fold curve"))
    if parameter_map.cusps:
        handles.append(Line2D([], [], linestyle="none", marker="*", color="black", label="cusp"))
    handles.append(
        Line2D(
            [],
            [],
            linestyle="none",
            marker="D",
            color=look.colour,
            markeredgecolor="black",
            label="today",
        )
    )
    if cloud is not None:
        handles.append(
            Line2D(
                [], [], linestyle="none", marker=".", color="#555555", label="uncertainty samples"
            )
        )
    legend_below(axes, handles, columns=4)

    j = int(np.argmin(np.abs(parameter_map.y_grid - ty)))
    i = int(np.argmin(np.abs(parameter_map.x_grid - tx)))
    words = [
        f"Number of stable states of {scenario.state.name} over {parameter_label(scenario, x)} "
        f"from {amount(parameter_map.x_grid[0], x_unit)} to "
        f"{amount(parameter_map.x_grid[-1], x_unit)} "
        f"and {parameter_label(scenario, y)} from {amount(parameter_map.y_grid[0], y_unit)} to "
        f"{amount(parameter_map.y_grid[-1], y_unit)}: regions with "
        f"{listing([str(c) for c in present])} stable states.",
        f"Fold curves ({len(parameter_map.fold_curves)}) bound the regions."
        if parameter_map.fold_curves
        else "No fold inside the map.",
    ]
    if cusp_words:
        words.append(f"Cusp at {listing(cusp_words)}.")
    words.append(
        f"Today ({x} = {amount(tx, x_unit)}, {y} = {amount(ty, y_unit)}) lies where "
        f"there {'is' if counts[j, i] == 1 else 'are'} {_words(int(counts[j, i]))}."
    )
    if cloud is not None:
        words.append(f"{len(cloud[0]):,} of {cloud[2]:,} uncertainty samples shown as dots.")
    table = table_of(
        ("fold curve", parameter_label(scenario, x), parameter_label(scenario, y), "state"),
        (
            np.concatenate(rows_curve).tolist() if rows_curve else [],
            np.concatenate(rows_x).tolist() if rows_x else [],
            np.concatenate(rows_y).tolist() if rows_y else [],
            np.concatenate(rows_state).tolist() if rows_state else [],
        ),
    )
    title = f"Stable states over {x} and {y}: {scenario.title}"
    return figure, table, title, " ".join(words)


def draw_all(scenario: Scenario, assessment: Assessment) -> list[tuple[MplFigure, Table, str, str]]:
    """:func:`draw` for every map of the analysis."""
    return [draw(scenario, assessment, m) for m in assessment.analysis.maps]


def map_figures(scenario: Scenario, assessment: Assessment) -> list[Figure] | None:
    """One figure per parameter map of the analysis (None when it has none)."""
    maps = assessment.analysis.maps
    figures = []
    for parameter_map, name in zip(maps, figure_names(maps), strict=True):
        figure, table, title, description = draw(scenario, assessment, parameter_map)
        figures.append(finish(figure, name, title, description, table))
    return figures or None
