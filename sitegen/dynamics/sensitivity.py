"""Local sensitivities of the stable states and of the lever limit to every parameter.

Stable states (implicit function theorem): along f(x*(p), p) = 0,

    dx*/dp = -f_p / f_x   at x*,

in state units per parameter unit; the elasticity (p / x*) dx*/dp is dimensionless
(the % change of x* per % change of p).

Lever limit: where the stable state disappears as the lever L grows. At a fold
(saddle-node, f = f_x = 0 with f_L != 0) the fold moves with p as

    dL_c/dp = -f_p / f_L   at (x_c, L_c),

(differentiate f = 0 along the fold curve and use f_x = 0). At a transcritical
limit (the stable state reaches an equilibrium that exists for every L, e.g.
x = 0, so f = f_p = f_L = 0 there) the same argument applied to f_x = 0 gives
dL_c/dp = -f_xp / f_xL. Its elasticity is (p / L_c) dL_c/dp.

Two routes, compared: *numeric* evaluates the formulas above with the model's
lambdified derivatives at the numeric equilibrium (or fold); *symbolic* asks SymPy
(in a killable worker under a time budget, :func:`sitegen.analysis.symbolic.run_steps`)
for closed forms x*(p) and L_c(p) and differentiates them. Where both exist their
relative difference is recorded, and one above ``AGREE_RELATIVE`` becomes a warning;
where SymPy fails or runs out of time the numeric value stands, with the reason.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import sympy

from sitegen.analysis import symbolic
from sitegen.analysis.equilibria import find_equilibria
from sitegen.analysis.records import STABLE
from sitegen.dynamics.uncertainty import lever_limits, state_grid
from sitegen.model.model import Model, build_model
from sitegen.scenario.records import Scenario

AGREE_RELATIVE = 1e-6  # symbolic and numeric derivatives agree within this
MATCH_RELATIVE = 1e-7  # a closed form belongs to a numeric point when this close
DIGITS = 30
FOLD, TRANSCRITICAL = "fold", "transcritical"
NUMERIC, SYMBOLIC = "numeric", "symbolic"


@dataclass(frozen=True)
class Sensitivity:
    """d(quantity)/d(parameter) at the parameter's value, with its elasticity.

    ``derivative`` is the numeric value (quantity unit per parameter unit);
    ``symbolic`` the value of SymPy's closed form (None where there is none);
    ``relative_difference`` = |symbolic - numeric| / max(|symbolic|, |numeric|)
    (0 when both are 0). ``method`` says which value is reported as ``value``.
    ``elasticity`` is (p / quantity) * value, None when the quantity is zero.
    """

    parameter: str
    parameter_value: float
    derivative: float
    elasticity: float | None
    symbolic: float | None = None
    closed_form: str | None = None
    relative_difference: float | None = None
    method: str = NUMERIC

    @property
    def value(self) -> float:
        """The reported derivative: the symbolic one when there is one, else the numeric."""
        return self.symbolic if self.symbolic is not None else self.derivative


@dataclass(frozen=True)
class StateSensitivity:
    """Sensitivities of one stable equilibrium ``state`` (state unit)."""

    state: float
    closed_form: str | None
    sensitivities: tuple[Sensitivity, ...]


@dataclass(frozen=True)
class LeverLimitSensitivity:
    """Sensitivities of the lever limit L_c (lever unit) at the point (x_c, L_c).

    ``kind`` is fold (f = f_x = 0, f_L != 0) or transcritical (f_L = 0 there).
    """

    lever: str
    lever_limit: float
    state: float
    kind: str
    closed_form: str | None
    sensitivities: tuple[Sensitivity, ...]


@dataclass(frozen=True)
class SensitivityReport:
    """Sensitivities for one model (base or a policy)."""

    name: str
    states: tuple[StateSensitivity, ...]
    lever_limit: LeverLimitSensitivity | None
    notes: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()


# -- symbolic steps (module level: they run in the worker) --------------------------------


def _evaluate(expr: sympy.Expr, substitutions: Mapping[sympy.Symbol, sympy.Float]) -> float | None:
    """A real float value of ``expr`` at 30 digits, or None (complex, infinite, error)."""
    try:
        number = complex(sympy.N(expr.subs(substitutions), DIGITS))
    except (TypeError, ValueError, ZeroDivisionError):
        return None
    if not np.isfinite(number.real) or abs(number.imag) > 1e-12 * max(1.0, abs(number.real)):
        return None
    return number.real


def state_derivatives(
    rate: sympy.Expr,
    state: sympy.Symbol,
    parameters: Sequence[sympy.Symbol],
    values: Sequence[float],
) -> list[tuple[float, str, dict[str, tuple[float | None, str]]]]:
    """Closed-form roots x*(p) of f = 0 and d x*/dp for every parameter, evaluated.

    Returns (root value, root formula, {parameter: (derivative value, formula)}).
    """
    substitutions = {s: sympy.Float(v, DIGITS) for s, v in zip(parameters, values, strict=True)}
    result = []
    for root in symbolic.solve_for(rate, state):
        value = _evaluate(root, substitutions)
        if value is None:
            continue
        derivatives = {}
        for parameter in parameters:
            derivative = sympy.diff(root, parameter)
            derivatives[parameter.name] = (
                _evaluate(derivative, substitutions),
                sympy.sstr(derivative),
            )
        result.append((value, sympy.sstr(root), derivatives))
    return result


def limit_derivatives(
    rate: sympy.Expr,
    state: sympy.Symbol,
    lever: sympy.Symbol,
    parameters: Sequence[sympy.Symbol],
    values: Sequence[float],
    boundary: float,
) -> list[tuple[float, float, str, dict[str, tuple[float | None, str]]]]:
    """Closed-form lever limits L_c(p) (folds, and the branch meeting the lower end).

    Returns (state value, lever value, L_c formula, {parameter: (dL_c/dp value,
    formula)}) for each candidate; the caller keeps the one matching the numeric limit.
    """
    substitutions = {s: sympy.Float(v, DIGITS) for s, v in zip(parameters, values, strict=True)}
    pairs = symbolic.fold_candidates(rate, state, lever)
    low = sympy.nsimplify(boundary, rational=True)
    pairs += symbolic.parameter_at_states(rate, state, lever, [low])
    result = []
    for state_form, lever_form in pairs:
        x_value = _evaluate(state_form, substitutions)
        lever_value = _evaluate(lever_form, substitutions)
        if x_value is None or lever_value is None:
            continue
        derivatives = {}
        for parameter in parameters:
            if parameter == lever:
                continue
            derivative = sympy.diff(lever_form, parameter)
            derivatives[parameter.name] = (
                _evaluate(derivative, substitutions),
                sympy.sstr(derivative),
            )
        result.append((x_value, lever_value, sympy.sstr(lever_form), derivatives))
    return result


# -- numeric ------------------------------------------------------------------------------


def _at(
    model: Model,
    x_order: int,
    wrt: tuple[str, ...],
    x: float,
    values: Mapping[str, float] | None = None,
) -> float:
    with np.errstate(all="ignore"):
        return float(np.asarray(model.numeric(x_order, wrt)(x, *model.args(values))))


def _compare(
    parameter: str,
    p_value: float,
    numeric: float,
    quantity: float,
    symbolic_entry: tuple[float | None, str] | None,
    what: str,
) -> tuple[Sensitivity, str | None]:
    """One :class:`Sensitivity` and a warning when the two routes disagree."""
    sym_value, form = symbolic_entry if symbolic_entry else (None, None)
    difference = None
    warning = None
    if sym_value is not None:
        scale = max(abs(sym_value), abs(numeric))
        difference = abs(sym_value - numeric) / scale if scale > 0 else 0.0
        # A derivative that is zero in closed form comes out as rounding noise
        # (1e-20) numerically; they agree when the elasticities agree.
        noise = quantity != 0 and abs(p_value / quantity * (sym_value - numeric)) <= AGREE_RELATIVE
        if difference > AGREE_RELATIVE and not noise:
            warning = (
                f"d({what})/d{parameter}: SymPy gives {sym_value:.10g}, the implicit "
                f"function theorem {numeric:.10g} (relative difference "
                f"{difference:.2e}); the symbolic value is shown"
            )
    reported = sym_value if sym_value is not None else numeric
    elasticity = p_value / quantity * reported if quantity != 0 else None
    return Sensitivity(
        parameter,
        p_value,
        numeric,
        elasticity,
        sym_value,
        form,
        difference,
        SYMBOLIC if sym_value is not None else NUMERIC,
    ), warning


def fold_point(
    model: Model, values: Mapping[str, float] | None = None
) -> tuple[float, float, str] | None:
    """(x_c, L_c, kind) where the stable positive state ends as the lever grows.

    The limit comes from the vectorised lever bisection (with one sample); x_c is
    the peak of f at L_c, Newton-polished on f = f_x = 0 in (x, L).
    """
    lever = model.lever
    if lever is None or model.symbols[lever] not in model.rate.free_symbols:
        return None
    chosen = model.with_values(values) if values else model
    arguments = [np.array([v]) for v in chosen.args()]
    limits, _, _ = lever_limits(chosen, arguments)
    limit = float(limits[0])
    if not np.isfinite(limit):
        return None
    grid = state_grid(chosen)
    at_limit = dict(chosen.values, **{lever: limit})
    with np.errstate(all="ignore"):
        rates = np.asarray(chosen.numeric()(grid, *chosen.args(at_limit)), dtype=float)
    x = float(grid[np.argmax(np.where(np.isfinite(rates), rates, -np.inf))])
    level = limit
    for _ in range(20):
        point = dict(chosen.values, **{lever: level})
        a, b = _at(chosen, 1, (), x, point), _at(chosen, 0, (lever,), x, point)
        c, d = _at(chosen, 2, (), x, point), _at(chosen, 1, (lever,), x, point)
        r0 = _at(chosen, 0, (), x, point)
        det = a * d - b * c
        if not np.isfinite(det) or det == 0:
            break
        x_new, level_new = x - (d * r0 - b * a) / det, level - (a * a - c * r0) / det
        if not (np.isfinite(x_new) and np.isfinite(level_new)):
            break
        x, level = x_new, level_new
    low, high = chosen.region
    width = high - low
    if not low - 1e-9 * width <= x <= high or abs(level - limit) > 1e-3 * max(abs(limit), 1.0):
        x, level = x if low <= x <= high else low, limit
    point = dict(chosen.values, **{lever: level})
    f_scale = max(float(np.nanmax(np.abs(rates))), 1e-300)
    span = max(abs(level), 1.0)
    kind = (
        FOLD if abs(_at(chosen, 0, (lever,), x, point)) * span > 1e-9 * f_scale else (TRANSCRITICAL)
    )
    return max(x, low), level, kind


def model_sensitivity(
    model: Model, budget_s: float = symbolic.DEFAULT_BUDGET_S
) -> SensitivityReport:
    """Sensitivities of every stable equilibrium and of the lever limit of one model."""
    notes: list[str] = []
    warnings: list[str] = []
    equilibria, _ = find_equilibria(model)
    stable = [
        e
        for e in equilibria
        if e.stability == STABLE and np.isfinite(e.derivative) and e.derivative != 0
    ]
    fold = fold_point(model)
    parameter_symbols = [model.symbols[n] for n in model.parameters]
    steps = [
        symbolic.Step(
            "states",
            state_derivatives,
            (model.rate, model.state, parameter_symbols, list(model.args())),
        )
    ]
    if fold is not None:
        assert model.lever is not None
        steps.append(
            symbolic.Step(
                "limit",
                limit_derivatives,
                (
                    model.rate,
                    model.state,
                    model.symbols[model.lever],
                    parameter_symbols,
                    list(model.args()),
                    float(model.region[0]),
                ),
            )
        )
    outcomes = symbolic.run_steps(steps, budget_s)
    for name, outcome in outcomes.items():
        if outcome.status != symbolic.OK:
            notes.append(
                f"SymPy step '{name}' {outcome.status} ({outcome.message}); the "
                "numeric values stand"
            )
    closed_states = outcomes["states"].value if outcomes["states"].status == symbolic.OK else []
    width = model.region[1] - model.region[0]
    state_results = []
    for equilibrium in stable:
        x = equilibrium.value
        match = next(
            (c for c in closed_states if abs(c[0] - x) <= MATCH_RELATIVE * max(abs(x), width)), None
        )
        f_x = _at(model, 1, (), x)
        entries = []
        for parameter in model.parameters:
            numeric = -_at(model, 0, (parameter,), x) / f_x
            entry = match[2].get(parameter) if match else None
            sensitivity, warning = _compare(
                parameter, float(model.values[parameter]), numeric, x, entry, f"{model.state.name}*"
            )
            entries.append(sensitivity)
            if warning:
                warnings.append(warning)
        if match is None and outcomes["states"].status == symbolic.OK:
            notes.append(f"no SymPy closed form matches the stable state {x:.10g}; numeric only")
        state_results.append(StateSensitivity(x, match[1] if match else None, tuple(entries)))
    limit_result = None
    if fold is not None:
        assert model.lever is not None
        lever = model.lever
        x_c, level, kind = fold
        point = dict(model.values, **{lever: level})
        closed = outcomes.get("limit")
        candidates = closed.value if closed is not None and closed.status == symbolic.OK else []
        match = next(
            (c for c in candidates if abs(c[1] - level) <= MATCH_RELATIVE * max(abs(level), 1.0)),
            None,
        )
        entries = []
        for parameter in model.parameters:
            if parameter == lever:
                continue
            if kind == FOLD:
                numeric = -_at(model, 0, (parameter,), x_c, point) / _at(
                    model, 0, (lever,), x_c, point
                )
            else:
                numeric = -_at(model, 1, (parameter,), x_c, point) / _at(
                    model, 1, (lever,), x_c, point
                )
            entry = match[3].get(parameter) if match else None
            sensitivity, warning = _compare(
                parameter, float(model.values[parameter]), numeric, level, entry, f"{lever}_c"
            )
            entries.append(sensitivity)
            if warning:
                warnings.append(warning)
        limit_result = LeverLimitSensitivity(
            lever, level, x_c, kind, match[2] if match else None, tuple(entries)
        )
    elif model.lever is not None:
        notes.append(f"no finite lever limit in {model.lever} at these values")
    return SensitivityReport(
        model.name, tuple(state_results), limit_result, tuple(notes), tuple(warnings)
    )


def run_sensitivity(
    scenario: Scenario, budget_s: float = symbolic.DEFAULT_BUDGET_S
) -> tuple[SensitivityReport, ...]:
    """Sensitivity reports for the base model and every policy of a scenario."""
    models = [build_model(scenario)] + [build_model(scenario, p) for p in scenario.policies]
    return tuple(model_sensitivity(model, budget_s) for model in models)
