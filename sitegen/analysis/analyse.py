"""The analysis of one model, in six steps.

1. Symbolic steps, batched into one killable worker under a time budget: the
   equilibria in closed form, folds and branch points in each ranged
   parameter, and fold curves of each two-parameter map.
2. Numeric equilibria (scan, brentq, 30-digit polishing), always; closed forms
   attached by matching values, disagreements recorded as warnings.
3. Stability, return times, basins of attraction and thresholds.
4. One-parameter continuation in each ranged parameter, special points
   refined and classified.
5. Two-parameter maps: the lever against each other ranged parameter, plus
   the pairs the scenario names under [[maps]].
6. Notes: how the region was chosen, what SymPy did and did not manage.
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from dataclasses import replace

import sympy

from sitegen.analysis import symbolic
from sitegen.analysis.bifurcations import build_bifurcations
from sitegen.analysis.continuation import continue_equilibria
from sitegen.analysis.equilibria import attach_closed_forms, basins_of, find_equilibria
from sitegen.analysis.maps import parameter_map
from sitegen.analysis.records import Analysis, Bifurcation, Branch, ParameterMap
from sitegen.model.model import Model, build_model
from sitegen.scenario.formula import to_formula
from sitegen.scenario.records import Scenario

AT_VALUES = "equilibria at today's values"
TOTAL_BUDGET_STEPS = 3  # the whole symbolic batch may take three steps' budgets
LONGEST_CLOSED_FORM = 250  # characters; longer ones (cubic formulas) do not help a reader


def map_pairs(model: Model, extra: Sequence[tuple[str, str]] = ()) -> list[tuple[str, str]]:
    """Parameter pairs for two-parameter maps: lever against each ranged parameter, + extra."""
    pairs: list[tuple[str, str]] = []
    if model.lever and model.lever in model.ranges:
        pairs.extend((model.lever, other) for other in model.ranged if other != model.lever)
    for pair in extra:
        if pair not in pairs and pair[::-1] not in pairs:
            pairs.append(pair)
    return pairs


def _symbolic_steps(model: Model, pairs: list[tuple[str, str]]) -> list[symbolic.Step]:
    """The SymPy batch, most useful first, since a spent budget skips the tail."""
    steps = [
        symbolic.Step("equilibria", symbolic.solve_for, (model.rate, model.state)),
        symbolic.Step(AT_VALUES, symbolic.solve_for, (model.substituted(model.rate), model.state)),
    ]
    low = sympy.nsimplify(model.region[0], rational=True)
    lever_first = sorted(model.ranged, key=lambda name: name != model.lever)
    for name in lever_first:
        parameter = model.symbol(name)
        steps.append(
            symbolic.Step(
                f"folds:{name}", symbolic.fold_candidates, (model.rate, model.state, parameter)
            )
        )
        steps.append(
            symbolic.Step(
                f"branch:{name}",
                symbolic.parameter_at_states,
                (model.rate, model.state, parameter, [low]),
            )
        )
    for first, second in pairs:
        steps.append(
            symbolic.Step(
                f"map:{first}:{second}",
                symbolic.two_parameter_folds,
                (model.rate, model.state, model.symbol(first), model.symbol(second)),
            )
        )
    return steps


def _short(forms: Sequence[sympy.Expr]) -> list[sympy.Expr]:
    """Closed forms worth showing a reader.

    Left out: over-long ones, implicit polynomial roots (CRootOf), and real roots
    written through complex numbers (the three-real-root case of the cubic
    formula), which are exact but tell a reader nothing the number does not.
    """
    return [
        f
        for f in forms
        if len(to_formula(f)) <= LONGEST_CLOSED_FORM
        and not f.has(sympy.CRootOf)
        and not f.has(sympy.I)
    ]


def _short_pairs(
    pairs: Sequence[tuple[sympy.Expr, sympy.Expr]],
) -> list[tuple[sympy.Expr, sympy.Expr]]:
    return [pair for pair in pairs if len(_short(pair)) == 2]


def analyse_model(
    model: Model,
    budget_s: float = symbolic.DEFAULT_BUDGET_S,
    extra_maps: Sequence[tuple[str, str]] = (),
    with_maps: bool = True,
) -> Analysis:
    """Analyse one model (see the module docstring for the steps)."""
    timings: dict[str, float] = {}
    notes: list[str] = []
    warnings: list[str] = []
    if model.region_note:
        notes.append(model.region_note)
    pairs = map_pairs(model, extra_maps) if with_maps else []

    # The SymPy batch runs in its worker while the numeric steps run here.
    pending = symbolic.PendingSteps(
        _symbolic_steps(model, pairs), budget_s, TOTAL_BUDGET_STEPS * budget_s
    )
    started = time.perf_counter()
    numeric_equilibria, equilibrium_notes = find_equilibria(model)
    continued = {name: continue_equilibria(model, name) for name in model.ranged}
    computed_maps = {pair: parameter_map(model, *pair) for pair in pairs}
    timings["numeric"] = time.perf_counter() - started

    started = time.perf_counter()
    outcomes = pending.collect()
    for outcome in outcomes.values():
        if outcome.status != symbolic.OK:
            notes.append(
                f"symbolic step '{outcome.name}' {outcome.status} "
                f"({outcome.message}); the numeric result stands"
            )
    timings["symbolic (waiting)"] = time.perf_counter() - started

    started = time.perf_counter()
    equilibria = numeric_equilibria
    notes.extend(equilibrium_notes)
    general = outcomes["equilibria"]
    forms = _short(general.value) if general.status == symbolic.OK else []
    equilibria, disagreements = attach_closed_forms(model, equilibria, forms, None)
    at_values = outcomes[AT_VALUES]
    if any(e.closed_form is None for e in equilibria) and at_values.status == symbolic.OK:
        before = sum(e.closed_form is None for e in equilibria)
        equilibria, more = attach_closed_forms(model, equilibria, _short(at_values.value), None)
        disagreements.extend(more)
        if sum(e.closed_form is None for e in equilibria) < before:
            notes.append(
                "some closed forms are given at today's parameter values, because the "
                "general solution was too long or not found"
            )
    warnings.extend(dict.fromkeys(disagreements))
    missing = [e for e in equilibria if e.closed_form is None]
    method = "symbolic" if equilibria and not missing else "numeric"
    if missing and forms:
        notes.append(
            f"SymPy found no closed form for {len(missing)} of {len(equilibria)} "
            "equilibria; those are numeric (30 digits)"
        )
    basins, thresholds = basins_of(model, equilibria)
    timings["equilibria"] = time.perf_counter() - started

    started = time.perf_counter()
    bifurcations: list[Bifurcation] = []
    branches: list[Branch] = []
    for name in model.ranged:
        found_branches, points = continued[name]
        branches.extend(found_branches)
        pairs_closed: list[tuple[sympy.Expr, sympy.Expr]] = []
        for key in (f"folds:{name}", f"branch:{name}"):
            if outcomes[key].status == symbolic.OK:
                pairs_closed.extend(_short_pairs(outcomes[key].value))
        records, more = build_bifurcations(
            model, name, [(p.parameter_value, p.state_value) for p in points], pairs_closed
        )
        bifurcations.extend(records)
        warnings.extend(more)
    timings["bifurcations"] = time.perf_counter() - started

    started = time.perf_counter()
    maps: list[ParameterMap] = []
    for first, second in pairs:
        computed = computed_maps[(first, second)]
        outcome = outcomes[f"map:{first}:{second}"]
        if (
            outcome.status == symbolic.OK
            and outcome.value
            and len(_short(list(outcome.value[0].values()))) == len(outcome.value[0])
        ):
            closed = {k: to_formula(v) for k, v in outcome.value[0].items()}
            curves = tuple(replace(curve, closed_form=closed) for curve in computed.fold_curves)
            computed = replace(computed, fold_curves=curves)
        maps.append(computed)
    timings["maps (closed forms)"] = time.perf_counter() - started

    return Analysis(
        slug=model.slug,
        state_symbol=model.state.name,
        state_unit=model.state_unit,
        region=model.region,
        parameters=dict(model.values),
        equilibria=tuple(equilibria),
        basins=tuple(basins),
        thresholds=tuple(thresholds),
        bifurcations=tuple(sorted(bifurcations, key=lambda b: (b.parameter, b.parameter_value))),
        branches=tuple(branches),
        maps=tuple(maps),
        method=method,
        notes=tuple(dict.fromkeys(notes)),
        warnings=tuple(warnings),
        timings_s=timings,
    )


def analyse(scenario: Scenario, budget_s: float = symbolic.DEFAULT_BUDGET_S) -> Analysis:
    """Build the base model of a scenario and analyse it."""
    model = build_model(scenario)
    extra = [(m.x, m.y) for m in scenario.maps]
    return analyse_model(model, budget_s, extra)
