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
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import sympy

from sitegen.model.model import Model, build_model
from sitegen.scenario.records import Scenario, UncertainParameter, UncertaintySpec

QUANTILE_LEVELS = (0.05, 0.50, 0.95)
GRID_POINTS = 513  # uniform grid points on the region, for the sign-change scan
NEAR_LOW_POINTS = 24  # extra geometric points just above the lower end (stocks near zero)
BLOCK_SAMPLES = 1024  # samples per block: keeps a block's grid arrays in cache
STATE_BISECTIONS = 60  # halvings of one grid cell: below double precision
COARSE_GRID_POINTS = 97  # state grid of the cheap first lever bisection
LEVER_BISECTIONS = 34  # halvings of the lever search interval: about 6e-11 of it
LEVER_EXPANSIONS = 6  # doublings of the lever search's upper end for samples stable there
FOLD_NEWTON_STEPS = 8
FOLD_ACCEPT_RELATIVE = 0.05  # a polished fold is kept when this close above the bisection
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


# -- vectorised root finding ---------------------------------------------------------------


def state_grid(model: Model, points: int = GRID_POINTS) -> np.ndarray:
    """Uniform grid on the region plus a few geometric points just above its lower end."""
    low, high = model.region
    span = high - low
    near_low = low + span * np.geomspace(1e-10, 1e-2, NEAR_LOW_POINTS)
    return np.unique(np.concatenate([np.linspace(low, high, points), near_low]))


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


def _block(
    arguments: Sequence[np.ndarray | float], rows: slice, column: bool
) -> list[np.ndarray | float]:
    """Arguments restricted to a block of samples, as columns (n, 1) when ``column``."""
    out: list[np.ndarray | float] = []
    for value in arguments:
        if isinstance(value, np.ndarray) and value.ndim == 1:
            part = value[rows]
            out.append(part[:, None] if column else part)
        else:
            out.append(value)
    return out


def _count(arguments: Sequence[np.ndarray | float]) -> int:
    sizes = {a.size for a in arguments if isinstance(a, np.ndarray) and a.ndim == 1}
    if len(sizes) > 1:
        raise ValueError("all per-sample arguments must have the same length")
    return sizes.pop() if sizes else 1


def _values(
    function: Callable[..., object], x: np.ndarray, arguments: Sequence[np.ndarray | float]
) -> np.ndarray:
    """``function(x, *arguments)`` as a float array of the broadcast shape.

    Lambdified constants come back as plain numbers; they are broadcast to the shape.
    """
    shape = np.broadcast_shapes(np.shape(x), *[np.shape(a) for a in arguments])
    with np.errstate(all="ignore"):
        values = np.asarray(function(x, *arguments), dtype=float)
    # Broadcasting (a read-only view) only when needed: a full-grid copy costs a pass.
    return values if values.shape == shape else np.broadcast_to(values, shape)


@dataclass(frozen=True)
class _Scan:
    """Per-sample results of one grid scan."""

    stable: np.ndarray  # bool: a + to - sign change exists
    escapes: np.ndarray  # bool: f > 0 at the upper end (the state leaves upward)
    cell: np.ndarray  # int: grid cell of the highest + to - change (0 where none)
    peak: np.ndarray  # int: grid index of the largest f (a fold's x seed)


def _scan(
    model: Model,
    grid: np.ndarray,
    arguments: Sequence[np.ndarray | float],
    count: int,
    light: bool = False,
) -> _Scan:
    """Sign-change scan of f on the sample-by-state grid, block by block.

    ``light`` skips the cell and peak indices (the lever test needs only existence).
    """
    rate = model.numeric()
    stable = np.zeros(count, dtype=bool)
    escapes = np.zeros(count, dtype=bool)
    cell = np.zeros(count, dtype=np.intp)
    peak = np.zeros(count, dtype=np.intp)
    cells = grid.size - 1
    for start in range(0, count, BLOCK_SAMPLES):
        rows = slice(start, min(start + BLOCK_SAMPLES, count))
        values = _values(rate, grid[None, :], _block(arguments, rows, column=True))
        if values.shape[0] != rows.stop - rows.start:  # no per-sample argument at all
            values = np.broadcast_to(values, (rows.stop - rows.start, grid.size))
        # + below and <= 0 above: a downward crossing, i.e. a stable root (NaN is neither).
        down = (values[:, :-1] > 0) & (values[:, 1:] <= 0)
        stable[rows] = down.any(axis=1)
        escapes[rows] = values[:, -1] > 0
        if light:
            continue
        cell[rows] = cells - 1 - np.argmax(down[:, ::-1], axis=1)
        peak[rows] = np.argmax(np.where(np.isfinite(values), values, -np.inf), axis=1)
    return _Scan(stable, escapes, cell, peak)


def upper_stable_states(
    model: Model, arguments: Sequence[np.ndarray | float], grid: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Per sample: the upper stable state (NaN if none) and whether the state escapes upward.

    ``arguments`` are the model's parameter arguments (arrays of one length n, or
    scalars). The bracket from the scan is narrowed by bisection for all samples
    at once.
    """
    grid = state_grid(model) if grid is None else grid
    count = _count(arguments)
    scan = _scan(model, grid, arguments, count)
    states = np.full(count, np.nan)
    chosen = np.nonzero(scan.stable)[0]
    if chosen.size:
        low = grid[scan.cell[chosen]]
        high = grid[scan.cell[chosen] + 1]
        picked = [a[chosen] if isinstance(a, np.ndarray) and a.ndim == 1 else a for a in arguments]
        rate = model.numeric()
        for _ in range(STATE_BISECTIONS):
            middle = 0.5 * (low + high)
            above = _values(rate, middle, picked) > 0
            low = np.where(above, middle, low)
            high = np.where(above, high, middle)
        states[chosen] = 0.5 * (low + high)
    return states, scan.escapes & ~scan.stable


def persists(model: Model, arguments: Sequence[np.ndarray | float], grid: np.ndarray) -> np.ndarray:
    """Per sample: True when a stable positive state exists or the state escapes upward."""
    scan = _scan(model, grid, arguments, _count(arguments), light=True)
    return scan.stable | scan.escapes


# -- the lever limit -----------------------------------------------------------------------


def lever_search_interval(model: Model) -> tuple[float, float]:
    """Where the lever bisection starts: the lever's range, else [min(0, v), 2|v| or 1]."""
    assert model.lever is not None
    if model.lever in model.ranges:
        low, high = model.ranges[model.lever]
        return float(low), float(high)
    value = float(model.values[model.lever])
    return min(0.0, value), (2.0 * abs(value) if value else 1.0)


def lever_limits(
    model: Model, arguments: Sequence[np.ndarray | float], grid: np.ndarray | None = None
) -> tuple[np.ndarray, tuple[float, float], int]:
    """Per sample: the largest lever value that keeps a stable positive state.

    Returns the limits (``-inf`` below the search, ``+inf`` above it), the initial
    search interval, and how many limits were Newton-polished at a fold
    (f = f_x = 0). Three passes, all vectorised over the samples:

    1. the search interval is checked (and expanded upward) on the full grid;
    2. bisection on a coarse state grid, which is cheap and exact except that two
       roots inside one coarse cell are missed (a limit biased low by about 5e-4
       relative for the logistic with a quota);
    3. Newton on (x, lever) for f = f_x = 0 from there, kept where it converges
       (double precision at a fold; a transcritical point also solves f = f_x = 0).
       Samples where Newton does not settle keep the bisection value.
    """
    assert model.lever is not None
    fine = state_grid(model) if grid is None else grid
    coarse = state_grid(model, COARSE_GRID_POINTS)
    index = model.parameters.index(model.lever)
    count = _count(arguments)
    low_0, high_0 = lever_search_interval(model)

    def test(
        levers: np.ndarray, rows: np.ndarray | None = None, on: np.ndarray = coarse
    ) -> np.ndarray:
        trial = [
            a[rows] if rows is not None and isinstance(a, np.ndarray) and a.ndim == 1 else a
            for a in arguments
        ]
        trial[index] = levers
        return persists(model, trial, on)

    low = np.full(count, low_0)
    high = np.full(count, high_0)
    below = ~test(low, on=fine)
    still = test(high, on=fine) & ~below
    for _ in range(LEVER_EXPANSIONS):
        if not still.any():
            break
        # Samples still stable at the top: move the bottom to the old top, the top up.
        low = np.where(still, high, low)
        high = np.where(still, low_0 + 2.0 * (high - low_0), high)
        still = still & test(high, on=fine)
    active = ~below & ~still
    for _ in range(LEVER_BISECTIONS):
        middle = 0.5 * (low + high)
        ok = test(middle)
        low = np.where(ok & active, middle, low)
        high = np.where(~ok & active, middle, high)
    polished_values, polished = _polish_folds(model, arguments, coarse, index, low, active)
    limits = np.where(polished, polished_values, low)
    limits[below] = -np.inf
    limits[still] = np.inf
    return limits, (low_0, high_0), int(np.count_nonzero(polished))


def _polish_folds(
    model: Model,
    arguments: Sequence[np.ndarray | float],
    grid: np.ndarray,
    index: int,
    low: np.ndarray,
    active: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Newton on (x, lever) for f = f_x = 0, seeded at the peak of f at the lever ``low``.

    Kept only where finite, inside the region, at a maximum of f (f_xx < 0, so the
    stable branch ends there), not below ``low`` (where a stable state was seen) and
    within ``FOLD_ACCEPT_RELATIVE`` of it.
    """
    lever = model.lever
    assert lever is not None
    trial = list(arguments)
    trial[index] = low
    scan = _scan(model, grid, trial, low.size)
    x = grid[scan.peak]
    levers = low.copy()
    f, f_x = model.numeric(), model.numeric(1)
    f_l, f_xx, f_xl = model.numeric(0, (lever,)), model.numeric(2), model.numeric(1, (lever,))
    with np.errstate(all="ignore"):
        for _ in range(FOLD_NEWTON_STEPS):
            trial[index] = levers
            a, b = _values(f_x, x, trial), _values(f_l, x, trial)
            c, d = _values(f_xx, x, trial), _values(f_xl, x, trial)
            r0 = _values(f, x, trial)
            det = a * d - b * c
            # Solve [[f_x, f_l], [f_xx, f_xl]] (dx, dlever) = (f, f_x).
            x = x - (d * r0 - b * a) / det
            levers = levers - (a * a - c * r0) / det
        trial[index] = levers
        curvature = _values(f_xx, x, trial)
        residual = np.abs(_values(f, x, trial)) + np.abs(_values(f_x, x, trial)) * (
            grid[-1] - grid[0]
        )
        scale = np.abs(_values(f_l, x, trial)) * np.maximum(np.abs(levers), 1e-300)
    size = np.maximum(np.abs(low), 1e-300)
    good = (
        active
        & np.isfinite(levers)
        & np.isfinite(x)
        & (curvature < 0)
        & (x > grid[0])
        & (x < grid[-1])
        & (levers >= low * (1 - 1e-12) - 1e-300)
        & (levers - low <= FOLD_ACCEPT_RELATIVE * size)
        & (residual <= 1e-9 * scale)
    )
    return levers, good


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
    count = _count(arguments)
    grid = state_grid(model)
    states, escaped = upper_stable_states(model, arguments, grid)
    collapsed_mask = np.isnan(states) & ~escaped
    collapsed = int(np.count_nonzero(collapsed_mask))
    risk = collapsed / count
    notes: list[str] = [
        "stable state: the upper stable state when there are several; quantiles over the "
        "samples that keep one",
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
        yields = _values(yield_function, states, arguments)
        yields = np.where(np.isnan(states), np.nan, yields)
        yield_quantiles = Quantiles.of(yields)
    lever_value = None
    limit_values = np.full(count, np.nan)
    limit_quantiles = safe = None
    bound = ""
    search = None
    polished = 0
    lever = model.lever
    if lever is not None and model.symbols[lever] in model.rate.free_symbols:
        lever_value = float(model.values[lever])
        limit_values, search, polished = limits or lever_limits(model, arguments, grid)
        clamped = np.clip(limit_values, search[0], np.inf)
        finite = clamped[np.isfinite(clamped)]
        limit_quantiles = Quantiles.of(clamped) if finite.size else None
        safe = safe_lever_setting(limit_values, tolerance)
        if safe == np.inf:
            bound = "above the lever search; at least its upper end"
        elif safe == -np.inf:
            bound = "below the lever search: no setting in it keeps the risk under the tolerance"
        notes.append(
            f"lever limits: bisection on {lever} from [{search[0]:g}, {search[1]:g}], "
            f"{polished} of {count} Newton-polished on f = f_x = 0"
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
