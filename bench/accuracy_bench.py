"""Accuracy beside speed: equilibria and fold points of the bundled scenarios against mpmath.

For every bundled scenario the values in its assessment summary (``<slug>.json``
of this run's cold build) are compared with references computed here at 50
digits with ``mpmath.findroot``, started from our values:

- each equilibrium: a root of f(x) = 0 at today's parameter values (a double
  root, multiplicity 2, as a root of f_x, which is simple there);
- each saddle-node point in a ranged parameter p: a root of (f, f_x) = 0 in
  (x, p), the other parameters at today's values.

The error is |ours - reference| / |reference| (for a reference at zero, the
error is taken against 1e-12 of the state's region or the parameter's range).
Target: at most 1e-10, the tolerance the tests hold equilibria and folds to.
A point where findroot does not converge (a kink of a rule written with
min/max) has no reference and is listed.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from typing import Any

import mpmath

from bench.bundled_site import bundled, source
from bench.registry import Result, benchmark

DIGITS = 50
TARGET = 1e-10
SADDLE_NODE = "saddle-node"


def _error(ours: float, reference: mpmath.mpf, scale: float) -> float:
    denominator = max(abs(float(reference)), 1e-12 * scale)
    return float(abs(mpmath.mpf(ours) - reference)) / denominator


def scenario_errors(
    path: Any, summary: dict[str, Any]
) -> tuple[list[tuple[str, float]], list[str]]:
    """([(what, relative error)], [points without a reference]) for one scenario."""
    from sitegen.model.model import build_model
    from sitegen.scenario.loader import load_scenario

    model = build_model(load_scenario(str(path)))
    f, fx = model.precise(), model.precise(1)
    names = list(model.parameters)
    today = [mpmath.mpf(v) for v in model.args()]
    low, high = model.region
    errors: list[tuple[str, float]] = []
    missing: list[str] = []
    for e in summary["equilibria"]:
        what = f"{model.slug} x* = {e['value']:.6g}"
        function: Callable[..., Any] = fx if e.get("multiplicity", 1) > 1 else f
        try:
            root = mpmath.findroot(lambda x, g=function: g(x, *today), mpmath.mpf(e["value"]))
        except (ValueError, ZeroDivisionError, TypeError):
            missing.append(what)
            continue
        errors.append((what, _error(e["value"], root, high - low)))
    for b in summary["bifurcations"]:
        if b["kind"] != SADDLE_NODE:
            continue
        index = names.index(b["parameter"])
        what = f"{model.slug} fold in {b['parameter']} = {b['parameter_value']:.6g}"

        def at(x: Any, p: Any, g: Callable[..., Any], i: int = index) -> Any:
            values = list(today)
            values[i] = p
            return g(x, *values)

        try:
            x_ref, p_ref = mpmath.findroot(
                [lambda x, p: at(x, p, f), lambda x, p: at(x, p, fx)],
                (mpmath.mpf(b["state_value"]), mpmath.mpf(b["parameter_value"])),
            )
        except (ValueError, ZeroDivisionError, TypeError):
            missing.append(what)
            continue
        p_low, p_high = model.ranges[b["parameter"]]
        errors.append(
            (
                what,
                max(
                    _error(b["state_value"], x_ref, high - low),
                    _error(b["parameter_value"], p_ref, p_high - p_low),
                ),
            )
        )
    return errors, missing


@benchmark("accuracy")
def run(quick: bool) -> list[Result]:
    build = bundled(quick, jobs=2)
    errors: list[tuple[str, float]] = []
    missing: list[str] = []
    folder = source(quick)
    where = (
        "--quick: the quick subset of the bundled scenarios" if quick else "every bundled scenario"
    )
    with mpmath.workdps(DIGITS):
        for summary_path in sorted(build.out.glob("*.json")):
            scenario = folder / f"{summary_path.stem}.toml"
            if not scenario.exists():
                continue
            summary = json.loads(summary_path.read_text("utf-8"))
            found, lost = scenario_errors(scenario, summary)
            errors.extend(found)
            missing.extend(lost)
    equilibria = [(w, e) for w, e in errors if " x* = " in w]
    folds = [(w, e) for w, e in errors if " fold in " in w]
    results = []
    for label, group in (("equilibria", equilibria), ("fold points", folds)):
        worst_what, worst = max(group, key=lambda item: item[1], default=("none", 0.0))
        lost = f"; no reference (findroot did not converge): {', '.join(missing)}"
        results.append(
            Result(
                f"accuracy: largest relative error of {len(group)} {label} vs mpmath",
                worst,
                "",
                None,
                "",
                None,
                f"<= {TARGET:g}",
                worst <= TARGET and bool(group),
                f"worst: {worst_what}; references: mpmath.findroot at {DIGITS} digits from our "
                f"values; {where}" + (lost if missing and label == "equilibria" else ""),
            )
        )
    return results
