"""Monte Carlo over uncertain parameters: collapse risk, stable-state and lever-limit quantiles.

For a scenario with an ``[uncertainty]`` table, ``samples`` parameter sets are drawn
with ``numpy.random.default_rng(seed)`` (identical seeds give identical output) and
the base model and every policy are evaluated on the *same* draws (common random
numbers, so differences between policies are not sampling noise).

Everything is vectorised over the samples; the only Python loops run over blocks
of samples (to keep the sample-by-state arrays inside the CPU cache) and over
bisection steps, never over single samples:

1. f is evaluated on a sample-by-state grid (samples x grid points);
2. a *stable* root is a sign change of f from + (below) to - (above) between two
   neighbouring grid points; the **upper stable state** is the highest such root
   (convention when there are several: the state a stock near carrying capacity
   settles to); tangent (semi-stable) roots are ignored, they have probability zero;
3. that bracket is narrowed by a vectorised bisection for all samples at once
   (to double precision);
4. the **lever limit** of a sample is the largest lever value at which a stable
   positive state still exists, found by a vectorised bisection over the lever
   with "has a stable positive state" as the test (assumed monotone in the lever:
   stable below the limit, none above). The search starts on the lever's declared
   range and doubles its upper end (at most ``LEVER_EXPANSIONS`` times) for samples
   still stable there; samples stable even then are censored (``+inf``).

Conventions and units: states in the model's state unit, yields in the yield's unit
(state per time), lever values in the lever's unit. "Positive" means strictly above
the lower end of the region. A sample whose rate is still positive at the upper end
of the region (the state grows past it) counts as *persisting*, not collapsed, and
is reported in the warnings. Quantiles of the stable state and of the yield are over
the samples that have a stable state (conditional on no collapse); collapse risk is
the fraction of samples with no stable positive state, with its binomial standard
error sqrt(p(1 - p)/n). Grid resolution: two roots closer together than one grid
cell (a lever within about 1e-5 of the fold, relatively) are not resolved, which
biases lever limits low by about that much; the fold itself is then Newton-polished.

Where a policy sets a parameter that also has a distribution, the policy's value
wins (the policy fixes it).
"""

from __future__ import annotations

import time
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import sympy

from sitegen.dynamics.direction import (
    lever_side,
    low_lever_limits,
    low_stable_states,
    safe_side_setting,
)
from sitegen.dynamics.uncertainty_roots import (
    BLOCK_SAMPLES,
    COARSE_GRID_POINTS,
    FOLD_ACCEPT_RELATIVE,
    FOLD_NEWTON_STEPS,
    GRID_POINTS,
    LEVER_BISECTIONS,
    LEVER_EXPANSIONS,
    NEAR_LOW_POINTS,
    STATE_BISECTIONS,
    lever_limits,
    lever_search_interval,
    persists,
    rate_values,
    sample_count,
    state_grid,
    upper_stable_states,
)
from sitegen.model.model import Model, build_model
from sitegen.scenario.records import (
    HIGHER,
    LOWER,
    Scenario,
    UncertainParameter,
    UncertaintySpec,
)

# The vectorised root bracketing and lever-limit search live in
# sitegen.dynamics.uncertainty_roots; their public names are re-exported here, so
# ``from sitegen.dynamics.uncertainty import lever_limits`` keeps working.
__all__ = [
    "BLOCK_SAMPLES",
    "COARSE_GRID_POINTS",
    "FOLD_ACCEPT_RELATIVE",
    "FOLD_NEWTON_STEPS",
    "GRID_POINTS",
    "LEVER_BISECTIONS",
    "LEVER_EXPANSIONS",
    "NEAR_LOW_POINTS",
    "QUANTILE_LEVELS",
    "STATE_BISECTIONS",
    "TOLERANCE_NOTE",
    "Quantiles",
    "UncertaintyOutcome",
    "UncertaintyReport",
    "draw_samples",
    "lever_limits",
    "lever_search_interval",
    "model_outcome",
    "persists",
    "rate_values",
    "run_uncertainty",
    "safe_lever_setting",
    "sample_arguments",
    "sample_count",
    "state_grid",
    "upper_stable_states",
]

QUANTILE_LEVELS = (0.05, 0.50, 0.95)
TOLERANCE_NOTE = (
    "a collapse-risk tolerance of 5% is a common choice in precautionary harvest advice; "
    "there is no single source for it"
)


@dataclass(frozen=True)
class Quantiles:
    """The 5%, 50% and 95% quantiles of a per-sample quantity (linear interpolation)."""

    p05: float
    p50: float
    p95: float

    @staticmethod
    def of(values: np.ndarray) -> Quantiles | None:
        """Quantiles of the finite entries of ``values`` (None when there are none)."""
        finite = values[np.isfinite(values)]
        if finite.size == 0:
            return None
        low, middle, high = np.quantile(finite, QUANTILE_LEVELS)
        return Quantiles(float(low), float(middle), float(high))


@dataclass(frozen=True)
class UncertaintyOutcome:
    """Monte Carlo results for one model (the base model or one policy).

    ``states``, ``yields`` and ``lever_limits`` are per sample (aligned with the
    draws); ``states``/``yields`` are NaN where the sample has no stable positive
    state; ``lever_limits`` is ``-inf`` where no stable positive state exists even at
    the lower end of the lever search and ``+inf`` where one exists at its (expanded)
    upper end. ``safe_lever`` is the largest lever setting whose collapse risk stays
    at or under the tolerance: the order statistic k + 1 (k = floor(tolerance * n))
    of the sorted lever limits, i.e. the empirical tolerance quantile.

    With ``better = "lower"`` (see :mod:`sitegen.dynamics.direction`) ``states`` are
    the low stable states, ``collapse_risk`` is the flip risk (no low state left),
    the lever limits are where the low state vanishes and ``limit_side`` says
    whether the lever must stay below them ("largest") or above ("smallest").
    """

    name: str
    samples: int
    collapse_risk: float
    collapse_risk_se: float
    collapsed: int
    stable_state: Quantiles | None
    yield_: Quantiles | None
    lever: str | None
    lever_value: float | None
    lever_limit: Quantiles | None
    safe_lever: float | None
    safe_lever_bound: str = ""
    lever_search: tuple[float, float] | None = None
    lever_polished: int = 0
    notes: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()
    better: str = HIGHER
    limit_side: str = "largest"
    states: np.ndarray = field(default_factory=lambda: np.empty(0), compare=False, repr=False)
    yields: np.ndarray = field(default_factory=lambda: np.empty(0), compare=False, repr=False)
    lever_limits: np.ndarray = field(default_factory=lambda: np.empty(0), compare=False, repr=False)


@dataclass(frozen=True)
class UncertaintyReport:
    """The Monte Carlo of one scenario: settings, draws and one outcome per model."""

    slug: str
    samples: int
    seed: int
    tolerance: float
    tolerance_note: str
    parameters: tuple[UncertainParameter, ...]
    outcomes: tuple[UncertaintyOutcome, ...]
    conventions: str
    draws: dict[str, np.ndarray] = field(default_factory=dict, compare=False, repr=False)
    timings_s: dict[str, float] = field(default_factory=dict, compare=False)

    def outcome(self, name: str) -> UncertaintyOutcome:
        """The outcome of the model called ``name`` ("base" or a policy name)."""
        for outcome in self.outcomes:
            if outcome.name == name:
                return outcome
        raise KeyError(name)


# -- sampling ------------------------------------------------------------------------------


def draw_samples(
    spec: UncertaintySpec, samples: int | None = None, seed: int | None = None
) -> dict[str, np.ndarray]:
    """Parameter name -> ``samples`` draws, in the order the distributions are declared.

    One generator ``default_rng(seed)`` serves all parameters in declaration order,
    so the draws depend only on the spec, ``samples`` and ``seed``.
    Lognormal: exp(N(log(median), sdlog^2)); triangular: numpy's (low, mode, high).
    """
    count = spec.samples if samples is None else samples
    rng = np.random.default_rng(spec.seed if seed is None else seed)
    draws: dict[str, np.ndarray] = {}
    for parameter in spec.parameters:
        numbers = parameter.numbers
        kind = parameter.distribution
        if kind == "normal":
            values = rng.normal(numbers["mean"], numbers["sd"], count)
        elif kind == "lognormal":
            values = rng.lognormal(np.log(numbers["median"]), numbers["sdlog"], count)
        elif kind == "uniform":
            values = rng.uniform(numbers["low"], numbers["high"], count)
        elif kind == "triangular":
            values = rng.triangular(numbers["low"], numbers["mode"], numbers["high"], count)
        else:  # the loader admits only the four above
            raise ValueError(f"unknown distribution {kind!r} for {parameter.name}")
        draws[parameter.name] = values
    return draws


def sample_arguments(
    model: Model, draws: Mapping[str, np.ndarray], fixed: Mapping[str, float] | None = None
) -> list[np.ndarray | float]:
    """The model's parameter arguments: draws where given, else the model's values.

    ``fixed`` (e.g. a policy's settings) overrides draws. Scalars stay scalars so
    that NumPy broadcasts them for free.
    """
    fixed = fixed or {}
    arguments: list[np.ndarray | float] = []
    for name, value in zip(model.parameters, model.args(), strict=True):
        if name in draws and name not in fixed:
            arguments.append(np.asarray(draws[name], dtype=float))
        else:
            arguments.append(float(fixed.get(name, value)))
    return arguments


def safe_lever_setting(limits: np.ndarray, tolerance: float) -> float:
    """The largest lever value L with (fraction of limits below L) <= tolerance.

    With the limits sorted ascending and k = floor(tolerance * n), that is the
    (k + 1)-th smallest limit: at most k samples have a limit below it.
    """
    ordered = np.sort(limits)
    k = int(np.floor(tolerance * ordered.size + 1e-9))
    return float(ordered[min(k, ordered.size - 1)])


# -- per model and per scenario ------------------------------------------------------------


def model_outcome(
    model: Model,
    draws: Mapping[str, np.ndarray],
    tolerance: float,
    fixed: Mapping[str, float] | None = None,
    limits: tuple[np.ndarray, tuple[float, float], int] | None = None,
) -> UncertaintyOutcome:
    """Collapse risk, quantiles and lever limit of one model on the given draws.

    ``fixed`` holds parameter values that override the draws (a policy's settings);
    ``limits`` reuses lever limits already computed for a model that differs only
    in the lever's value.
    """
    arguments = sample_arguments(model, draws, fixed)
    count = sample_count(arguments)
    grid = state_grid(model)
    lower = model.better == LOWER
    if lower:
        # A pollutant or pest: the low state is the one kept; running away upward is a flip.
        states = low_stable_states(model, arguments, grid)
        escaped = np.zeros(count, dtype=bool)
    else:
        states, escaped = upper_stable_states(model, arguments, grid)
    collapsed_mask = np.isnan(states) & ~escaped
    collapsed = int(np.count_nonzero(collapsed_mask))
    risk = collapsed / count
    notes: list[str] = [
        "stable state: the lowest stable state (better = lower); flip risk: the share of "
        "samples with no low state left; quantiles over the samples that keep one"
        if lower
        else "stable state: the upper stable state when there are several; quantiles over "
        "the samples that keep one",
    ]
    warnings: list[str] = []
    if np.any(escaped):
        warnings.append(
            f"{int(np.count_nonzero(escaped))} samples grow past the upper end of the region "
            f"({model.region[1]:g} {model.state_unit}); counted as persisting, not collapsed"
        )
    yields = np.full(count, np.nan)
    yield_quantiles = None
    if model.yield_ is not None:
        yield_function = sympy.lambdify(model.argument_symbols, model.yield_, modules="numpy")
        yields = rate_values(yield_function, states, arguments)
        yields = np.where(np.isnan(states), np.nan, yields)
        yield_quantiles = Quantiles.of(yields)
    lever_value = None
    limit_values = np.full(count, np.nan)
    limit_quantiles = safe = None
    bound = ""
    search = None
    polished = 0
    side = "largest"
    lever = model.lever
    if lever is not None and model.symbols[lever] in model.rate.free_symbols:
        lever_value = float(model.values[lever])
        if lower:
            limit_values, search, side = (
                (limits[0], limits[1], lever_side(model))
                if limits
                else low_lever_limits(model, arguments, grid)
            )
        else:
            limit_values, search, polished = limits or lever_limits(model, arguments, grid)
        clamped = np.clip(limit_values, search[0], np.inf)
        finite = clamped[np.isfinite(clamped)]
        limit_quantiles = Quantiles.of(clamped) if finite.size else None
        safe = safe_side_setting(limit_values, tolerance, side)
        if safe == np.inf:
            bound = (
                "above the lever search; at least its upper end"
                if side == "largest"
                else "above the lever search: no setting in it keeps the risk under the tolerance"
            )
        elif safe == -np.inf:
            bound = (
                "below the lever search: no setting in it keeps the risk under the tolerance"
                if side == "largest"
                else "below the lever search; any setting in it keeps the risk under the tolerance"
            )
        notes.append(
            f"lever limits: bisection on {lever} from [{search[0]:g}, {search[1]:g}], "
            + (
                f"where the low state vanishes ({lever} must stay "
                + ("below" if side == "largest" else "above")
                + " it)"
                if lower
                else f"{polished} of {count} Newton-polished on f = f_x = 0"
            )
        )
        censored = int(np.count_nonzero(np.isinf(limit_values)))
        if censored:
            notes.append(
                f"{censored} lever limits lie outside the searched interval "
                "(-inf: no stable state at its lower end; +inf: still stable above)"
            )
        notes.append(TOLERANCE_NOTE)
    elif lever is not None:
        notes.append(f"the lever {lever} does not enter this model's rate; no lever limit")
    return UncertaintyOutcome(
        name=model.name,
        samples=count,
        collapse_risk=risk,
        collapse_risk_se=float(np.sqrt(risk * (1.0 - risk) / count)),
        collapsed=collapsed,
        stable_state=Quantiles.of(states),
        yield_=yield_quantiles,
        lever=lever,
        lever_value=lever_value,
        lever_limit=limit_quantiles,
        safe_lever=safe,
        safe_lever_bound=bound,
        lever_search=search,
        lever_polished=polished,
        notes=tuple(notes),
        warnings=tuple(warnings),
        better=model.better,
        limit_side=side,
        states=states,
        yields=yields,
        lever_limits=limit_values,
    )


def _limits_key(model: Model, fixed: Mapping[str, float]) -> tuple[object, ...]:
    """Models with the same rate and the same values apart from the lever share limits."""
    values = dict(model.values)
    values.update(fixed)
    values.pop(model.lever or "", None)
    return (model.rate, model.parameters, model.region, tuple(sorted(values.items())))


def run_uncertainty(
    scenario: Scenario, samples: int | None = None, seed: int | None = None
) -> UncertaintyReport | None:
    """The Monte Carlo of the base model and every policy (None without ``[uncertainty]``).

    ``samples`` and ``seed`` override the scenario's settings (for tests and benchmarks).
    """
    spec = scenario.uncertainty
    if spec is None:
        return None
    timings: dict[str, float] = {}
    started = time.perf_counter()
    draws = draw_samples(spec, samples, seed)
    timings["draw"] = time.perf_counter() - started
    models = [(build_model(scenario), {})]
    models += [(build_model(scenario, p), dict(p.values)) for p in scenario.policies]
    cache: dict[tuple[object, ...], tuple[np.ndarray, tuple[float, float], int]] = {}
    outcomes = []
    for model, fixed in models:
        started = time.perf_counter()
        key = _limits_key(model, fixed)
        outcome = model_outcome(model, draws, spec.tolerance, fixed, cache.get(key))
        if outcome.lever_search is not None:
            cache[key] = (outcome.lever_limits, outcome.lever_search, outcome.lever_polished)
        outcomes.append(outcome)
        timings[model.name] = time.perf_counter() - started
    count = next(iter(draws.values())).size if draws else spec.samples
    return UncertaintyReport(
        slug=scenario.slug,
        samples=count,
        seed=spec.seed if seed is None else seed,
        tolerance=spec.tolerance,
        tolerance_note=TOLERANCE_NOTE,
        parameters=spec.parameters,
        outcomes=tuple(outcomes),
        conventions=__doc__ or "",
        draws=draws,
        timings_s=timings,
    )
