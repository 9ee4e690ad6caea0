"""The whole assessment of one scenario: the stage-3 analysis plus every stage-4 result.

:func:`assess` runs the analysis once and hands its equilibria, branches and
bifurcation records to the dynamics functions, so nothing is computed twice
where those functions accept earlier results. The parts, and when each is None:

- ``trajectory``: the run from today's state (None without ``[state] current``);
- ``milestones``: from today's state, for the base model and every policy, the
  crossings of the ``[reference]`` levels and the times to 50% and 95% of the
  way to the attractor (:mod:`sitegen.dynamics.milestones`; None without
  ``[state] current``);
- ``collapse``: the fall once today's lever lies past a fold (None otherwise);
- ``recovery``: the return after the scenario's ``[model] shock`` (None without a
  stable positive state, or when today's state is already farther from it than
  the shock would move it: see :func:`sitegen.dynamics.recovery.shock_note`);
- ``hysteresis``: where the lever must go back to once the state is lost at the
  fold that ends today's stable branch (None without such a fold);
- ``lever_limit``, ``sustainable_yield``, ``stock_status``, ``economics``: see
  :mod:`sitegen.dynamics.limits` (None without a lever with a range, a yield, a
  current state or an ``[economics]`` table respectively);
- ``policies``: the base model and every policy side by side;
- ``uncertainty``: the Monte Carlo (None without ``[uncertainty]``);
- ``sensitivity``: local sensitivities of the base model and every policy.

Every None carries a note saying why, under its section in ``notes``. A part
that fails numerically (a root finder that does not converge, a solver that
stops) leaves the others standing and is recorded under ``warnings``; any other
exception is a programming error and propagates. Units are in ``units``: state,
lever, time, yield (state per time) and money (currency per time).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TypeVar

import numpy as np

from sitegen.analysis import symbolic
from sitegen.analysis.analyse import analyse_model
from sitegen.analysis.bifurcations import SADDLE_NODE
from sitegen.analysis.records import Analysis, Bifurcation
from sitegen.dynamics.collapse import collapse_past_fold
from sitegen.dynamics.limits import (
    economic_yield,
    lever_limit,
    stable_run,
    stock_status,
    sustainable_yield,
)
from sitegen.dynamics.milestones import milestone_table, reference_levels
from sitegen.dynamics.policies import check_folds, compare_policies, has_kinks, true_roots
from sitegen.dynamics.records import (
    Collapse,
    EconomicYield,
    Hysteresis,
    LeverLimit,
    Milestones,
    PolicyTable,
    Recovery,
    StockStatus,
    SustainableYield,
    Trajectory,
)
from sitegen.dynamics.recovery import hysteresis, recovery_after_shock, shock_note
from sitegen.dynamics.sensitivity import SensitivityReport, run_sensitivity
from sitegen.dynamics.trajectories import integrate
from sitegen.dynamics.uncertainty import UncertaintyReport, run_uncertainty
from sitegen.model.model import Model, build_model
from sitegen.scenario.records import HIGHER, LOWER, Scenario

# Our own numeric failures: root finders and solvers that give up, bad brackets,
# singular systems. Anything else (TypeError, KeyError, ...) is a bug and propagates.
NUMERIC_FAILURES: tuple[type[BaseException], ...] = (
    ArithmeticError,
    ValueError,
    RuntimeError,
    np.linalg.LinAlgError,
)
SECTIONS = ("dynamics", "limits", "policies", "uncertainty", "sensitivity", "economics")
MATCH = 1e-6  # of the lever's range: a bifurcation record this close is the lever limit

T = TypeVar("T")


@dataclass(frozen=True)
class Assessment:
    """The stage-3 analysis of the base model and every stage-4 result (see module docstring).

    ``notes`` and ``warnings`` map each section name of :data:`SECTIONS` to its
    notes (why a part does not apply) and warnings (a part that failed).
    """

    slug: str
    title: str
    analysis: Analysis
    units: dict[str, str]
    lever: str | None
    lever_value: float | None
    current_state: float | None
    shock: float
    trajectory: Trajectory | None
    collapse: Collapse | None
    recovery: Recovery | None
    hysteresis: Hysteresis | None
    lever_limit: LeverLimit | None
    sustainable_yield: SustainableYield | None
    stock_status: StockStatus | None
    economics: EconomicYield | None
    policies: PolicyTable | None
    uncertainty: UncertaintyReport | None
    sensitivity: tuple[SensitivityReport, ...] | None
    notes: dict[str, tuple[str, ...]] = field(default_factory=dict)
    warnings: dict[str, tuple[str, ...]] = field(default_factory=dict)
    better: str = HIGHER
    milestones: tuple[Milestones, ...] | None = None
    shock_applies: bool = True  # False: today's state is farther out than the shock


class _Log:
    """Notes and warnings per section, and the guard that keeps one failure local."""

    def __init__(self) -> None:
        self.notes: dict[str, list[str]] = {name: [] for name in SECTIONS}
        self.warnings: dict[str, list[str]] = {name: [] for name in SECTIONS}

    def note(self, section: str, text: str) -> None:
        self.notes[section].append(text)

    def run(self, section: str, part: str, work: Callable[[], T]) -> T | None:
        """``work()``, or None with a warning when it fails numerically."""
        try:
            return work()
        except NUMERIC_FAILURES as error:
            self.warnings[section].append(
                f"{part} could not be computed ({type(error).__name__}: {error}); "
                "the other results stand"
            )
            return None

    def frozen(self, table: dict[str, list[str]]) -> dict[str, tuple[str, ...]]:
        return {name: tuple(dict.fromkeys(items)) for name, items in table.items()}


def units_of(model: Model, scenario: Scenario) -> dict[str, str]:
    """Unit strings: state, time, lever, yield (state per time) and money per time."""
    time_unit = model.time_unit
    currency = scenario.economics.currency if scenario.economics is not None else ""
    return {
        "state": model.state_unit,
        "time": time_unit,
        "lever": model.units.get(model.lever, "") if model.lever else "",
        "yield": f"{model.state_unit}/{time_unit}",
        "money": f"{currency}/{time_unit}" if currency else f"per {time_unit}",
    }


def _fold_at_limit(
    limit: LeverLimit | None, records: list[Bifurcation], model: Model
) -> Bifurcation | None:
    """The saddle-node record that ends today's stable branch (the lever limit)."""
    if limit is None or limit.kind != SADDLE_NODE or model.lever not in model.ranges:
        return None
    p_low, p_high = model.ranges[limit.lever]
    close = [
        b
        for b in records
        if b.parameter == limit.lever
        and b.kind == SADDLE_NODE
        and abs(b.parameter_value - limit.limit) <= MATCH * (p_high - p_low)
    ]
    return min(close, key=lambda b: abs(b.parameter_value - limit.limit), default=None)


def assess(
    scenario: Scenario,
    budget_s: float = symbolic.DEFAULT_BUDGET_S,
    analysis: Analysis | None = None,
) -> Assessment:
    """Analyse a scenario and run every stage-4 part on it.

    ``budget_s`` is the time budget of each SymPy step (seconds), as for
    :func:`sitegen.analysis.analyse.analyse`; ``analysis`` reuses a stage-3
    analysis of the scenario's base model already made.
    """
    log = _Log()
    model = build_model(scenario)
    if analysis is None:
        analysis = analyse_model(model, budget_s, [(m.x, m.y) for m in scenario.maps])
    equilibria = list(analysis.equilibria)
    bifurcations = list(analysis.bifurcations)
    if has_kinks(model):
        # A rule written with min/max: drop roots that are not roots, relabel kinks.
        equilibria, dropped = true_roots(model, equilibria)
        bifurcations, relabelled = check_folds(model, bifurcations)
        for text in (*dropped, *relabelled):
            log.note("dynamics", text)
    collapse_level = scenario.state.collapse_level
    lever = model.lever
    word, kept = ("flip", "low") if model.better == LOWER else ("collapse", "stable")
    ranged_lever = lever is not None and lever in model.ranges

    trajectory = None
    if model.current_state is None:
        log.note("dynamics", "no current state in [state]: no trajectory from today")
    else:
        start = float(model.current_state)
        trajectory = log.run(
            "dynamics",
            "the trajectory from today's state",
            lambda: integrate(model, start, equilibria, collapse_level),
        )
    milestones = None
    if model.current_state is None:
        log.note("dynamics", "no current state in [state]: no milestones")
    else:
        milestones = log.run(
            "dynamics",
            "the milestones from today's state",
            lambda: milestone_table(scenario, model, equilibria),
        )
        if not reference_levels(scenario):
            log.note("dynamics", "no [reference] levels: milestones are 50% and 95% of the way")
    collapse = None
    if lever is None:
        log.note("dynamics", f"no lever in [model]: no {word} past a fold and no hysteresis")
    else:
        collapse = log.run(
            "dynamics",
            f"the time to {word}",
            lambda: collapse_past_fold(
                model, bifurcations, collapse_level=collapse_level, equilibria=equilibria
            ),
        )
        if collapse is None and not log.warnings["dynamics"]:
            log.note(
                "dynamics",
                f"today's {lever} is not past a fold that removes the {kept} state: "
                f"no {word} to time",
            )
    recovery = None
    not_applicable = shock_note(model, scenario.model.shock, equilibria)
    if not_applicable is not None:
        log.note("dynamics", not_applicable)
    else:
        recovery = log.run(
            "dynamics",
            "the recovery after the shock",
            lambda: recovery_after_shock(model, scenario.model.shock, equilibria, collapse_level),
        )
        if recovery is None:
            log.note("dynamics", "no stable positive state today: no recovery after a shock")

    run = None
    if lever is None:
        log.note("limits", "no lever in [model]: no lever limit, margin or sustainable yield")
    elif not ranged_lever:
        log.note("limits", f"the lever {lever} has no range: no continued branch, no lever limit")
    else:
        run = log.run(
            "limits",
            "the stable branch in the lever",
            lambda: stable_run(model, analysis.branches, bifurcations, equilibria),
        )
        if run is None:
            log.note("limits", f"no stable positive branch in {lever} near today's setting")
    limit = lever_limit(model, run) if run is not None else None
    if run is not None and limit is None:
        log.note("limits", f"the stable state persists over the whole range of {lever}")

    trip = None
    if ranged_lever:
        # Past a fold today: the fold passed; else the fold at the limit, for "what if".
        trip = log.run(
            "dynamics",
            "the hysteresis",
            lambda: hysteresis(
                model,
                bifurcations,
                None if collapse is not None else _fold_at_limit(limit, bifurcations, model),
                collapse_level,
            ),
        )
    if trip is None and lever is not None:
        log.note("dynamics", f"no fold in {lever} ends today's stable state: no hysteresis")

    msy = None
    if model.yield_ is None:
        log.note("limits", "no yield in [model]: no sustainable yield or stock status")
    elif run is not None:
        msy = log.run(
            "limits", "the sustainable yield", lambda: sustainable_yield(model, run, equilibria)
        )
    if msy is not None and not msy.at_fold and lever in model.ranges:
        p_low, p_high = model.ranges[lever]
        if min(abs(msy.lever_at_msy - p_low), abs(msy.lever_at_msy - p_high)) <= MATCH * (
            p_high - p_low
        ):
            log.note(
                "limits",
                f"the yield still grows at the end of {lever}'s range [{p_low:g}, {p_high:g}]: "
                "the MSY shown is the yield there, not a maximum",
            )
    status = None
    if model.better == LOWER:
        log.note(
            "limits",
            "better = lower: stock status against B_MSY does not apply to a pollutant or pest",
        )
    elif msy is not None and model.current_state is not None:
        current = float(model.current_state)
        status = log.run(
            "limits", "the stock status", lambda: stock_status(current, msy, scenario.reference)
        )
    elif msy is not None:
        log.note("limits", "no current state in [state]: no stock status")

    economics = None
    if scenario.economics is None:
        log.note("economics", "no [economics] table: no open access or maximum economic yield")
    elif msy is None:
        log.note("economics", "no sustainable yield along a stable branch: no economic yields")
    else:
        economics = log.run(
            "economics",
            "the economic yields",
            lambda: economic_yield(model, run, scenario.economics, msy),
        )
        if economics is not None and economics.open_access_lever is None:
            log.note(
                "economics",
                "rent stays positive along the whole stable branch: no open-access equilibrium",
            )

    policies = log.run(
        "policies",
        "the policy table",
        lambda: compare_policies(scenario, budget_s, None if has_kinks(model) else analysis),
    )
    if not scenario.policies:
        log.note("policies", "no [[policies]]: the table has the base model only")
    uncertainty = None
    if scenario.uncertainty is None:
        log.note("uncertainty", f"no [uncertainty] table: no {word} risk or safe lever setting")
    else:
        uncertainty = log.run("uncertainty", "the Monte Carlo", lambda: run_uncertainty(scenario))
    sensitivity = log.run(
        "sensitivity", "the sensitivities", lambda: run_sensitivity(scenario, budget_s)
    )
    return Assessment(
        slug=scenario.slug,
        title=scenario.title,
        analysis=analysis,
        units=units_of(model, scenario),
        lever=lever,
        lever_value=float(model.values[lever]) if lever else None,
        current_state=model.current_state,
        shock=scenario.model.shock,
        trajectory=trajectory,
        collapse=collapse,
        recovery=recovery,
        hysteresis=trip,
        lever_limit=limit,
        sustainable_yield=msy,
        stock_status=status,
        economics=economics,
        policies=policies,
        uncertainty=uncertainty,
        sensitivity=sensitivity,
        notes=log.frozen(log.notes),
        warnings=log.frozen(log.warnings),
        better=model.better,
        milestones=milestones,
        shock_applies=not_applicable is None,
    )
