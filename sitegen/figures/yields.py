"""Yield figures: sustainable yield against the lever, and surplus production against the state.

``yield_curve_figure`` follows the continued stable branch in the lever (the
run that holds today's stable state, as :func:`sitegen.dynamics.limits.stable_run`
picks it) for the base model and for every policy that has the same lever,
resampled on a fixed lever grid and Newton-polished there, so each tabulated
point is a plotted one; MSY is the assessment's.

``surplus_figure`` draws the surplus production g(x) = f(x) + yield(x), the
rate without removal, derived from the base model itself (for a quota model
this is the rate plus the quota), with each model's removal yield(x) drawn
over it: a horizontal line for a fixed catch, a ray through the origin for a
fixed effort, a ramp for a threshold rule. Where a removal meets g is an
equilibrium of that model.

Units: lever in its unit, state in the state unit, yields in state per time.
"""

from __future__ import annotations

import numpy as np
import sympy

from sitegen.analysis.bifurcations import build_bifurcations
from sitegen.analysis.continuation import continue_equilibria
from sitegen.analysis.equilibria import find_equilibria
from sitegen.dynamics.assess import Assessment
from sitegen.dynamics.limits import StableRun, stable_run
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
from sitegen.figures.sampling import GRID_POINTS
from sitegen.model.model import Model, build_model
from sitegen.scenario.records import Scenario

NEWTON_STEPS = 12


def _n(value: float) -> str:
    return f"{value:,.0f}" if abs(value) >= 100 else f"{value:.3g}"


def _yield_function(model: Model):
    assert model.yield_ is not None
    return sympy.lambdify(model.argument_symbols, model.yield_, modules="numpy")


def _arguments(model: Model, lever_values: np.ndarray) -> list[np.ndarray | float]:
    return [lever_values if n == model.lever else float(model.values[n]) for n in model.parameters]


def curve_on_run(model: Model, run: StableRun) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(lever values, stable states, yields) on a fixed grid across the run.

    The branch is interpolated onto :data:`GRID_POINTS` lever values and each
    state polished by a vectorised Newton on f = 0 (all grid points at once).
    """
    # The run's ends are the refined special points (a fold: MSY of a quota), not the last
    # traced branch points, so the curve reaches exactly to the tipping point.
    (_, p_first, x_first), (_, p_last, x_last) = run.low_end, run.high_end
    levers = np.linspace(p_first, p_last, GRID_POINTS)
    states = np.interp(
        levers,
        np.concatenate([[p_first], run.lever_values, [p_last]]),
        np.concatenate([[x_first], run.states, [x_last]]),
    )
    arguments = _arguments(model, levers)
    rate, slope = model.numeric(), model.numeric(1)
    for _ in range(NEWTON_STEPS):
        with np.errstate(all="ignore"):
            step = np.asarray(rate(states, *arguments)) / np.asarray(slope(states, *arguments))
        # Near a fold f_x -> 0: keep the interpolated state rather than jump off the branch.
        states = states - np.where(
            np.isfinite(step) & (np.abs(step) < 0.05 * np.ptp(model.region)), step, 0.0
        )
    with np.errstate(all="ignore"):
        yields = np.asarray(_yield_function(model)(states, *arguments), dtype=float) + 0 * states
    return levers, states, yields


def _policy_run(model: Model) -> StableRun | None:
    """The stable run of a policy with its own rate (continued in the shared lever)."""
    assert model.lever is not None
    branches, points = continue_equilibria(model, model.lever)
    records, _ = build_bifurcations(
        model, model.lever, [(p.parameter_value, p.state_value) for p in points], []
    )
    equilibria, _ = find_equilibria(model)
    return stable_run(model, branches, records, equilibria)


def yield_curve_figure(scenario: Scenario, assessment: Assessment) -> Figure | None:
    """Sustainable yield against the lever for the base model and the policies sharing it."""
    msy = assessment.sustainable_yield
    base = build_model(scenario)
    if msy is None or base.yield_ is None or base.lever is None or base.lever not in base.ranges:
        return None
    lever = base.lever
    run = stable_run(
        base,
        assessment.analysis.branches,
        list(assessment.analysis.bifurcations),
        list(assessment.analysis.equilibria),
    )
    if run is None:
        return None
    curves = [("base model", base, *curve_on_run(base, run))]
    settings = []  # policies that only set the lever: a point on the base curve
    for policy in scenario.policies:
        model = build_model(scenario, policy)
        if model.yield_ is None or model.symbols[lever] not in model.rate.free_symbols:
            continue
        if policy.rate is None:
            settings.append((policy.name, float(model.values[lever])))
            continue
        policy_run = _policy_run(model)
        if policy_run is not None:
            curves.append((policy.name, model, *curve_on_run(model, policy_run)))
    units = assessment.units
    figure, (axes,) = new_figure()
    rows: list[list[object]] = [[], [], [], []]
    for k, (name, _model, levers, states, yields) in enumerate(curves):
        (line,) = axes.plot(
            levers,
            yields,
            color=POLICY_COLOURS[k],
            linestyle=POLICY_DASHES[k],
            label=f"{name} (stable branch)",
        )
        tag(line, f"yield-{k}")
        rows[0].extend([name] * levers.size)
        rows[1].extend(rounded(float(v)) for v in levers)
        rows[2].extend(rounded(float(v)) for v in states)
        rows[3].extend(rounded(float(v)) for v in yields)
    today = float(base.values[lever])
    base_levers, base_yields = curves[0][2], curves[0][4]
    marks = [("today", today)] + [(n, v) for n, v in settings if v != today]
    shared = [n for n, v in settings if v == today]
    if shared:  # a policy at today's setting: one marker, both names
        marks[0] = ("today = " + " = ".join(shared), today)
    for k, (name, value) in enumerate(marks):
        style = STYLES["today"] if k == 0 else STYLES["policy"]
        point = axes.plot(
            [value],
            [float(np.interp(value, base_levers, base_yields))],
            linestyle="none",
            marker=POLICY_MARKERS[k % len(POLICY_MARKERS)] if k else style.marker,
            color=style.colour,
            markersize=7,
            label=f"{name}: {lever} = {_n(value)} {units['lever']}",
        )[0]
        tag(point, f"setting-{k}")
    star = axes.plot(
        [msy.lever_at_msy],
        [msy.msy],
        linestyle="none",
        marker="*",
        markersize=13,
        color=STYLES["limit"].colour,
        markeredgecolor="black",
        label=f"MSY {_n(msy.msy)} {units['yield']}",
    )[0]
    tag(star, "msy")
    axes.annotate(
        f"MSY {_n(msy.msy)}",
        (msy.lever_at_msy, msy.msy),
        xytext=(-8, 6),
        textcoords="offset points",
        ha="right",
        fontsize=7.5,
    )
    axes.set_xlabel(with_unit(scenario.parameter(lever).label or lever, units["lever"]))
    axes.set_ylabel(with_unit("sustainable yield", units["yield"]))
    axes.set_ylim(bottom=0)
    axes.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize=7.5)
    end = "ends at the tipping point" if msy.at_fold else "then falls"
    today_yield = msy.current_yield
    description = (
        f"Sustainable yield against {lever} along the stable branch: it rises to the MSY of "
        f"{_n(msy.msy)} {units['yield']} at {lever} = {_n(msy.lever_at_msy)} {units['lever']} "
        f"(state {_n(msy.state_at_msy)} {units['state']}) and {end}. Today's {lever} = "
        f"{_n(today)} {units['lever']}"
        + (f" yields {_n(today_yield)} {units['yield']}." if today_yield is not None else ".")
        + (
            " Other policies with the same lever: " + ", ".join(n for n, *_ in curves[1:]) + "."
            if len(curves) > 1
            else ""
        )
    )
    table = table_of(
        (
            "model",
            with_unit(lever, units["lever"]),
            with_unit("stable state", units["state"]),
            with_unit("sustainable yield", units["yield"]),
        ),
        rows,
    )
    return finish(
        figure, "yield-curve", f"Sustainable yield against {lever}, MSY marked", description, table
    )


def surplus_figure(scenario: Scenario, assessment: Assessment) -> Figure | None:
    """Surplus production g(x) = f(x) + yield(x) with each model's removal drawn over it."""
    msy = assessment.sustainable_yield
    base = build_model(scenario)
    if base.yield_ is None:
        return None
    units = assessment.units
    low, high = base.region
    x = np.linspace(low, high, GRID_POINTS)
    removal = _yield_function(base)
    with np.errstate(all="ignore"):
        taken = np.asarray(removal(x, *base.args()), dtype=float) + 0.0 * x
    g = base.f(x) + taken
    figure, (axes,) = new_figure()
    style = STYLES["rate"]
    (line,) = axes.plot(
        x, g, color=style.colour, linestyle=style.dash, label="surplus production g = rate + yield"
    )
    tag(line, "surplus")
    rows: list[list[object]] = [["surplus production"] * x.size, list(x), list(g)]
    models = [("base model", base)] + [
        (p.name, build_model(scenario, p)) for p in scenario.policies
    ]
    drawn: list[str] = []
    seen: list[tuple[np.ndarray, int]] = []  # removals already drawn, and their line index
    lines = []
    for name, model in models:
        if model.yield_ is None:
            continue
        with np.errstate(all="ignore"):
            y = np.asarray(_yield_function(model)(x, *model.args()), dtype=float) + 0.0 * x
        same = next((i for old, i in seen if np.allclose(old, y, equal_nan=True)), None)
        if same is not None:  # the same removal as an earlier model: one line, both names
            lines[same].set_label(f"{lines[same].get_label()} = {name}")
            drawn.append(name)
            continue
        k = len(lines)
        # Markers at staggered points, so lines that coincide in part stay distinguishable.
        (line,) = axes.plot(
            x,
            y,
            color=POLICY_COLOURS[(k + 1) % len(POLICY_COLOURS)],
            linestyle=POLICY_DASHES[(k + 1) % len(POLICY_DASHES)],
            marker=POLICY_MARKERS[k % len(POLICY_MARKERS)],
            markevery=slice(3 + 6 * k, None, 24),
            label=f"removal: {name}",
        )
        tag(line, f"removal-{k}")
        seen.append((y, k))
        lines.append(line)
        drawn.append(name)
        rows[0].extend([f"removal: {name}"] * x.size)
        rows[1].extend(x)
        rows[2].extend(y)
    if msy is not None:
        star = axes.plot(
            [msy.state_at_msy],
            [msy.msy],
            linestyle="none",
            marker="*",
            markersize=13,
            color=STYLES["limit"].colour,
            markeredgecolor="black",
            label=f"MSY {_n(msy.msy)} {units['yield']} at {_n(msy.state_at_msy)} {units['state']}",
        )[0]
        tag(star, "msy")
    top = float(np.nanmax(g[np.isfinite(g)])) if np.isfinite(g).any() else 1.0
    # Below zero only a little: the fall of g past the carrying capacity is not the story.
    axes.set_ylim(-0.15 * abs(top), 1.6 * top if top > 0 else 1.0)
    axes.set_xlabel(with_unit(scenario.state.name, units["state"]))
    axes.set_ylabel(with_unit("production or removal", units["yield"]))
    axes.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize=7.5)
    peak = int(np.nanargmax(np.where(np.isfinite(g), g, -np.inf)))
    description = (
        f"Surplus production g of the {scenario.state.name} (the rate with the removal added "
        f"back) peaks near {_n(float(g[peak]))} {units['yield']} at {_n(float(x[peak]))} "
        f"{units['state']}"
        + (
            f"; MSY {_n(msy.msy)} {units['yield']} at {_n(msy.state_at_msy)} {units['state']}"
            if msy is not None
            else ""
        )
        + ". Removal of each model drawn over it: "
        + ", ".join(drawn)
        + "; where a removal crosses g the state is in equilibrium, and where removal lies "
        "above g the state falls."
    )
    table = table_of(
        (
            "curve",
            with_unit(scenario.state.name, units["state"]),
            with_unit("rate", units["yield"]),
        ),
        [rows[0], [rounded(float(v)) for v in rows[1]], [rounded(float(v)) for v in rows[2]]],
    )
    return finish(
        figure,
        "surplus-production",
        f"Surplus production of the {scenario.state.name} and each policy's removal",
        description,
        table,
    )


def yield_curves(scenario: Scenario, assessment: Assessment) -> list[Figure] | None:
    """The yield-against-lever and surplus-production figures (None without a yield)."""
    made = [
        f
        for f in (yield_curve_figure(scenario, assessment), surplus_figure(scenario, assessment))
        if f is not None
    ]
    return made or None
