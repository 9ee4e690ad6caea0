"""Every ``[[policies]]`` entry analysed with the same engine, side by side.

For each policy: ``build_model(scenario, policy)``, then the analysis stage
(without two-parameter maps), then the limits, collapse and recovery of this
stage. Rules written with min/max (a threshold or ramp) have kinks; there the
analysis may mistake the jump of f_x for a fold, so every bifurcation record
is checked: at a true fold f_x tends to zero from both sides, at a kink the
one-sided slopes differ. Kinks are relabelled ``kink`` (kept as a tipping
point only where the number of equilibria changes there) and equilibria are
kept only when their residual |f(x*)| is negligible against the typical |f|.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

import numpy as np
import sympy

from sitegen.analysis.analyse import analyse_model
from sitegen.analysis.bifurcations import SADDLE_NODE, counts_beside, rate_scale
from sitegen.analysis.continuation import continue_equilibria
from sitegen.analysis.equilibria import find_equilibria
from sitegen.analysis.records import Analysis, Bifurcation, Branch, Equilibrium
from sitegen.dynamics.collapse import collapse_past_fold
from sitegen.dynamics.limits import lever_limit, stable_run, sustainable_yield
from sitegen.dynamics.records import PolicyRow, PolicyTable
from sitegen.dynamics.recovery import current_stable_state, recovery_after_shock
from sitegen.model.model import Model, build_model
from sitegen.scenario.records import LOWER, Policy, Scenario

KINK = "kink"
RESIDUAL = 1e-9  # of the typical |f|: larger residuals are not roots
SIDE_STEP = 1e-7  # of the region's width, for one-sided slopes
FLAT = 1e-4  # a one-sided slope below this (times width / typical |f|) counts as zero
BUDGET_S = 2.0


def true_roots(
    model: Model, equilibria: Sequence[Equilibrium]
) -> tuple[list[Equilibrium], list[str]]:
    """Equilibria whose residual is negligible, and notes on those dropped."""
    scale = rate_scale(model, dict(model.values))
    kept, notes = [], []
    for equilibrium in equilibria:
        with np.errstate(all="ignore"):
            residual = abs(float(model.f(equilibrium.value)))
        if np.isfinite(residual) and residual > RESIDUAL * scale:
            notes.append(
                f"a root reported at {equilibrium.value:.6g} has residual "
                f"{residual:.3g}; it is not an equilibrium and was dropped"
            )
        else:
            kept.append(equilibrium)
    return kept, notes


def check_folds(
    model: Model, bifurcations: Sequence[Bifurcation]
) -> tuple[list[Bifurcation], list[str]]:
    """Bifurcation records with kinks relabelled (see the module docstring)."""
    low, high = model.region
    width = high - low
    step = SIDE_STEP * width
    checked, notes = [], []
    for record in bifurcations:
        values = {record.parameter: record.parameter_value}
        scale = rate_scale(model, values)
        sides = np.array([record.state_value - step, record.state_value + step])
        with np.errstate(all="ignore"):
            slopes = np.asarray(model.numeric(1)(sides, *model.args(values)), dtype=float)
        sizes = np.abs(slopes) * width / scale
        if np.all(np.isfinite(sizes)) and np.max(sizes) > FLAT:
            changes = record.counts[0] != record.counts[1]
            notes.append(
                f"the point at {record.parameter} = {record.parameter_value:.6g}, "
                f"state {record.state_value:.6g} is a kink of the rule, not a fold"
                + ("; equilibria appear or vanish there" if changes else "")
            )
            if changes:
                checked.append(replace(record, kind=KINK))
            continue
        checked.append(record)
    return checked, notes


def has_kinks(model: Model) -> bool:
    """True when the rate is built with min, max or abs (a piecewise-smooth rule)."""
    return bool(model.rate.atoms(sympy.Min, sympy.Max, sympy.Abs, sympy.Piecewise))


def _kinked_records(
    model: Model,
) -> tuple[list[Equilibrium], tuple[Branch, ...], list[Bifurcation]]:
    """Equilibria, branches and special points of a piecewise-smooth rule.

    The analysis stage's classifier needs f_xx, which for min/max contains a
    DiracDelta that NumPy cannot evaluate; here the continuation's points are
    classified by one-sided slopes instead (:func:`check_folds` then relabels kinks).
    """
    equilibria, _ = find_equilibria(model)
    branches: tuple[Branch, ...] = ()
    records: list[Bifurcation] = []
    if model.lever and model.lever in model.ranges:
        branches, points = continue_equilibria(model, model.lever)
        for point in points:
            below, above = counts_beside(model, model.lever, point.parameter_value)
            more = "below" if below > above else "above" if above > below else None
            records.append(
                Bifurcation(
                    model.lever,
                    SADDLE_NODE,
                    point.parameter_value,
                    point.state_value,
                    more_equilibria=more,
                    counts=(below, above),
                )
            )
    return equilibria, branches, records


def policy_row(
    scenario: Scenario,
    policy: Policy | None,
    budget_s: float = BUDGET_S,
    analysis: Analysis | None = None,
) -> PolicyRow:
    """One row: the policy's model analysed and summarised.

    ``analysis`` reuses an analysis of this very model already made (the base
    model's from stage 3) instead of running it again.
    """
    model = build_model(scenario, policy)
    if has_kinks(model):
        found, branches, raw = _kinked_records(model)
    else:
        if analysis is None:
            analysis = analyse_model(model, budget_s, with_maps=False)
        found, branches, raw = list(analysis.equilibria), analysis.branches, analysis.bifurcations
    equilibria, notes = true_roots(model, found)
    bifurcations, more = check_folds(model, raw)
    notes.extend(more)
    # A policy with its own rule may not use the base lever at all (a fixed effort
    # instead of a quota); its row then has no lever setting rather than a dead one.
    uses_lever = model.lever is not None and model.symbols[model.lever] in model.rate.free_symbols
    lever_value = float(model.values[model.lever]) if uses_lever and model.lever else None
    run = stable_run(model, branches, bifurcations, equilibria)
    limit = lever_limit(model, run)
    stable = current_stable_state(model, equilibria)
    yield_ = None
    if stable is not None and model.yield_ is not None:
        msy = sustainable_yield(model, run, equilibria)
        yield_ = msy.current_yield if msy is not None else None
    recovery = recovery_after_shock(
        model, scenario.model.shock, equilibria, scenario.state.collapse_level
    )
    collapse = collapse_past_fold(
        model, bifurcations, collapse_level=scenario.state.collapse_level, equilibria=equilibria
    )
    row = PolicyRow(
        name=policy.name if policy is not None else "base",
        lever_value=lever_value,
        stable_state=stable.value if stable is not None else None,
        yield_=yield_,
        limit=limit,
        return_time=stable.return_time if stable is not None else None,
        recovery_time=recovery.time_to_10 if recovery is not None else None,
        collapse_time=collapse.collapse_time if collapse is not None else None,
        notes=tuple(notes),
    )
    return row


def _best(rows: Sequence[PolicyRow], column: str, largest: bool) -> str | None:
    def value(row: PolicyRow) -> float | None:
        if column == "margin":
            return row.limit.margin if row.limit is not None else None
        return getattr(row, column)

    present = [(value(row), row.name) for row in rows if value(row) is not None]
    if not present:
        return None
    chosen = max(present) if largest else min(present)
    return chosen[1]


def compare_policies(
    scenario: Scenario, budget_s: float = BUDGET_S, base: Analysis | None = None
) -> PolicyTable:
    """Rows for every policy of the scenario (the base model first) and the best markers.

    ``base`` is the stage-3 analysis of the base model, reused for its row.
    """
    rows = [policy_row(scenario, None, budget_s, base)]
    rows.extend(policy_row(scenario, policy, budget_s) for policy in scenario.policies)
    best = {
        # A pollutant or pest (better = lower) is best at its lowest stable state.
        "stable_state": _best(rows, "stable_state", scenario.state.better != LOWER),
        "yield_": _best(rows, "yield_", True),
        "margin": _best(rows, "margin", True),
        "return_time": _best(rows, "return_time", False),
        "recovery_time": _best(rows, "recovery_time", False),
        # The longest collapse is "best" only when every row collapses: a row that
        # keeps its stable state is always better than one that collapses slowly.
        "collapse_time": (
            _best(rows, "collapse_time", True)
            if all(row.collapse_time is not None for row in rows)
            else None
        ),
    }
    return PolicyTable(tuple(rows), best)
