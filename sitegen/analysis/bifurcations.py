"""Classifying the special points that continuation finds, and naming their closed forms.

At a point where f = f_x = 0 the standard non-degeneracy conditions decide the
kind (Strogatz 2015, ch. 3):

- saddle-node: f_p != 0 and f_xx != 0;
- transcritical: f_p = 0, f_xp != 0, f_xx != 0;
- pitchfork: f_p = 0, f_xx = 0, f_xxx != 0, f_xp != 0;
- anything else is reported as degenerate rather than forced into a class.

"Zero" is judged on dimensionless versions of the derivatives: each is
multiplied by the region width to the power of its x-order and by the range
width for a p-derivative, then divided by the typical size of f.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import sympy

from sitegen.analysis.records import Bifurcation
from sitegen.analysis.scan import count_equilibria, scan_grid
from sitegen.model.model import Model
from sitegen.scenario.formula import to_formula

ZERO = 1e-7
MATCH_RELATIVE = 1e-7
SADDLE_NODE, TRANSCRITICAL, PITCHFORK, DEGENERATE = (
    "saddle-node",
    "transcritical",
    "pitchfork",
    "degenerate",
)


def rate_scale(model: Model, values: dict[str, float]) -> float:
    """Typical |f| over the region at these values (never zero)."""
    low, high = model.region
    grid = scan_grid(low, high, 257)
    with np.errstate(all="ignore"):
        sizes = np.abs(
            np.asarray(model.numeric()(grid, *model.args(values)), dtype=float) + 0.0 * grid
        )
    finite = sizes[np.isfinite(sizes)]
    scale = float(np.max(finite)) if finite.size else 1.0
    return scale if scale > 0 else 1.0


def classify(
    model: Model, parameter: str, parameter_value: float, state_value: float
) -> tuple[str, dict[str, float]]:
    """The kind of the point and the derivatives that decided it."""
    values = dict(model.values, **{parameter: parameter_value})
    args = model.args(values)
    low, high = model.region
    width_x = high - low
    low_p, high_p = model.ranges[parameter]
    width_p = high_p - low_p
    scale = rate_scale(model, values)

    def value(x_order: int, wrt: tuple[str, ...]) -> float:
        with np.errstate(all="ignore"):
            return float(model.numeric(x_order, wrt)(state_value, *args))

    raw = {
        "f_p": value(0, (parameter,)),
        "f_xx": value(2, ()),
        "f_xp": value(1, (parameter,)),
        "f_xxx": value(3, ()),
    }
    size = {
        "f_p": abs(raw["f_p"]) * width_p / scale,
        "f_xx": abs(raw["f_xx"]) * width_x**2 / scale,
        "f_xp": abs(raw["f_xp"]) * width_x * width_p / scale,
        "f_xxx": abs(raw["f_xxx"]) * width_x**3 / scale,
    }
    nonzero = {k: bool(np.isfinite(v) and v > ZERO) for k, v in size.items()}
    if nonzero["f_p"] and nonzero["f_xx"]:
        kind = SADDLE_NODE
    elif not nonzero["f_p"] and nonzero["f_xp"] and nonzero["f_xx"]:
        kind = TRANSCRITICAL
    elif not nonzero["f_p"] and not nonzero["f_xx"] and nonzero["f_xxx"] and nonzero["f_xp"]:
        kind = PITCHFORK
    else:
        kind = DEGENERATE
    return kind, raw


def counts_beside(model: Model, parameter: str, parameter_value: float) -> tuple[int, int]:
    """Number of equilibria in the region just below and just above the point."""
    low_p, high_p = model.ranges[parameter]
    step = 1e-5 * (high_p - low_p) + 1e-9 * abs(parameter_value)
    below = count_equilibria(model, {parameter: parameter_value - step})
    above = count_equilibria(model, {parameter: parameter_value + step})
    return below, above


def _evaluate(expr: sympy.Expr, model: Model, parameter: str) -> float | None:
    substitutions = {
        model.symbols[n]: sympy.Float(v, 30) for n, v in model.values.items() if n != parameter
    }
    try:
        number = complex(sympy.N(expr.subs(substitutions), 30))
    except (TypeError, ValueError, ZeroDivisionError):
        return None
    if not np.isfinite(number.real) or abs(number.imag) > 1e-12 * max(1.0, abs(number.real)):
        return None
    return number.real


def build_bifurcations(
    model: Model,
    parameter: str,
    points: Sequence[tuple[float, float]],
    closed_pairs: Sequence[tuple[sympy.Expr, sympy.Expr]],
) -> tuple[list[Bifurcation], list[str]]:
    """Bifurcation records for numeric points, with closed forms matched from SymPy.

    ``points`` are (parameter value, state value); ``closed_pairs`` are
    (state, parameter) closed forms. A closed-form point inside the box that no
    numeric point matches becomes a warning.
    """
    low, high = model.region
    low_p, high_p = model.ranges[parameter]
    evaluated = []
    for state_form, parameter_form in closed_pairs:
        x_value = _evaluate(state_form, model, parameter)
        p_value = _evaluate(parameter_form, model, parameter)
        if x_value is not None and p_value is not None:
            evaluated.append((state_form, parameter_form, x_value, p_value))
    records: list[Bifurcation] = []
    used: set[int] = set()
    for p_value, x_value in points:
        kind, derivatives = classify(model, parameter, p_value, x_value)
        below, above = counts_beside(model, parameter, p_value)
        more = "below" if below > above else "above" if above > below else None
        closed = state_closed = None
        for index, (state_form, parameter_form, x_form, p_form) in enumerate(evaluated):
            close_p = abs(p_form - p_value) <= MATCH_RELATIVE * max(high_p - low_p, abs(p_value))
            close_x = abs(x_form - x_value) <= MATCH_RELATIVE * max(high - low, abs(x_value))
            if close_p and close_x:
                closed, state_closed = to_formula(parameter_form), to_formula(state_form)
                used.add(index)
                break
        with np.errstate(all="ignore"):
            residual = abs(float(model.numeric()(x_value, *model.args({parameter: p_value}))))
        records.append(
            Bifurcation(
                parameter,
                kind,
                p_value,
                x_value,
                closed,
                state_closed,
                more,
                (below, above),
                residual,
                derivatives,
            )
        )
    warnings = []
    for index, (_state_form, parameter_form, x_form, p_form) in enumerate(evaluated):
        inside = low_p < p_form < high_p and low < x_form < high
        if inside and index not in used:
            warnings.append(
                f"SymPy gives a fold in {parameter} at {parameter} = {to_formula(parameter_form)}"
                f" = {p_form:.10g} (state {x_form:.10g}) that the numeric continuation did not "
                "find; the numeric result is shown"
            )
    records.sort(key=lambda b: (b.parameter_value, b.state_value))
    return records, warnings
