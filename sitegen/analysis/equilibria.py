"""Equilibria of dx/dt = f(x) on the region, polished to 30 digits, with stability.

Numeric always: :func:`sitegen.analysis.scan.scan_roots` finds the roots in
double precision; each is then polished with mpmath at 30 significant digits,
its multiplicity found from the first non-vanishing derivative, and its
residual |f(x*)| recorded. Stability follows the sign of that derivative:
odd order and negative is stable, odd and positive unstable, even order
semi-stable. Closed forms from SymPy are attached by matching values, never
trusted alone.
"""

from __future__ import annotations

import itertools
from collections.abc import Mapping, Sequence

import mpmath
import numpy as np
import sympy

from sitegen.analysis.records import SEMI_STABLE, STABLE, UNSTABLE, Basin, Equilibrium
from sitegen.analysis.scan import scan_grid, scan_roots
from sitegen.model.model import Model
from sitegen.scenario.formula import to_formula

DIGITS = 30
MAX_ORDER = 5
VANISHING = 1e-12  # relative size below which a derivative counts as zero
MATCH_RELATIVE = 1e-8


def _scales(model: Model, args: tuple[float, ...]) -> tuple[float, float]:
    """Typical |f| over the region and the region's width, for relative tests."""
    low, high = model.region
    grid = scan_grid(low, high, 513)
    with np.errstate(all="ignore"):
        values = np.abs(np.asarray(model.numeric()(grid, *args), dtype=float) + 0.0 * grid)
    finite = values[np.isfinite(values)]
    size = float(np.max(finite)) if finite.size else 1.0
    return (size if size > 0 else 1.0), max(high - low, 1e-300)


def _mp(function: object, x: mpmath.mpf, args: Sequence[float]) -> mpmath.mpf:
    value = function(x, *[mpmath.mpf(a) for a in args])  # type: ignore[operator]
    return mpmath.mpf(value) if not isinstance(value, mpmath.mpc) else value.real


def _polish(model: Model, x0: float, order: int, args: tuple[float, ...]) -> mpmath.mpf:
    """Root of the ``order``-th derivative near x0 at 30 digits (x0 if it fails)."""
    function = model.precise(order)
    slope = model.precise(order + 1)
    low, high = model.region
    try:
        root = mpmath.findroot(
            lambda x: _mp(function, x, args),
            mpmath.mpf(x0),
            solver="newton",
            df=lambda x: _mp(slope, x, args),
            tol=mpmath.mpf(10) ** (-2 * DIGITS + 4),
            maxsteps=60,
        )
    except (ValueError, ZeroDivisionError, TypeError):
        return mpmath.mpf(x0)
    if isinstance(root, mpmath.mpc):
        root = root.real
    span = high - low
    if not (low - 1e-9 * span <= root <= high + 1e-9 * span) or abs(root - x0) > 1e-6 * span:
        return mpmath.mpf(x0)
    return root


def classify_root(
    model: Model, x0: float, args: tuple[float, ...], f_scale: float, width: float
) -> Equilibrium:
    """Polish, find multiplicity and stability of one root near ``x0``."""
    with mpmath.workdps(DIGITS + 10):
        value = _polish(model, x0, 0, args)
        order = 1
        derivative = _mp(model.precise(1), value, args)
        # A derivative counts as zero when |f^(k)| * width^k is negligible against |f|.
        while abs(derivative) * width**order <= VANISHING * f_scale and order < MAX_ORDER:
            value = _polish(model, float(value), order, args)
            order += 1
            derivative = _mp(model.precise(order), value, args)
        residual = abs(_mp(model.precise(0), value, args))
        slope = float(_mp(model.precise(1), value, args))
    stability = SEMI_STABLE if order % 2 == 0 else STABLE if derivative < 0 else UNSTABLE
    hyperbolic = order == 1 and derivative != 0
    return_time = 1.0 / abs(float(derivative)) if hyperbolic and stability == STABLE else None
    low, high = model.region
    x = float(value)
    boundary = abs(x - low) <= 1e-12 * width or abs(x - high) <= 1e-12 * width
    return Equilibrium(
        value=x,
        stability=stability,
        derivative=slope,
        return_time=return_time,
        multiplicity=order,
        residual=float(residual),
        precise=mpmath.nstr(value, DIGITS),
        on_boundary=boundary,
    )


def boundary_limit_root(model: Model, args: tuple[float, ...], f_scale: float) -> float | None:
    """The lower end as an equilibrium where f is undefined there but tends to 0.

    For r x log(K/x) the rate is 0*inf at x = 0; its limit from inside is 0, so
    the lower end is an equilibrium (with an infinite slope).
    """
    low, high = model.region
    with np.errstate(all="ignore"):
        at_end = float(np.asarray(model.numeric()(np.float64(low), *args)))
    if np.isfinite(at_end):
        return None
    offsets = low + (high - low) * np.array([1e-14, 1e-12, 1e-10])
    with np.errstate(all="ignore"):
        near = np.abs(np.asarray(model.numeric()(offsets, *args), dtype=float))
    if np.all(np.isfinite(near)) and near[0] < near[1] < near[2] and near[0] < 1e-9 * f_scale:
        return low
    return None


def find_equilibria(
    model: Model, values: Mapping[str, float] | None = None
) -> tuple[list[Equilibrium], list[str]]:
    """All equilibria in the region at these parameter values, sorted, with notes."""
    args = model.args(values)
    f_scale, width = _scales(model, args)
    notes: list[str] = []
    found = [
        classify_root(model, float(x), args, f_scale, width) for x in scan_roots(model, values)
    ]
    limit_root = boundary_limit_root(model, args, f_scale)
    if limit_root is not None and not any(e.on_boundary and e.value == limit_root for e in found):
        with np.errstate(all="ignore"):
            slope_near = float(model.numeric(1)(limit_root + 1e-12 * width, *args))
        stability = STABLE if slope_near < 0 else UNSTABLE
        found.insert(
            0,
            Equilibrium(
                limit_root,
                stability,
                float("inf") * np.sign(slope_near),
                None,
                1,
                None,
                0.0,
                mpmath.nstr(mpmath.mpf(limit_root), 30),
                True,
            ),
        )
        notes.append(
            f"the rate is undefined at {limit_root:g} but tends to zero there, so "
            "that end is an equilibrium; its slope is infinite, so it has no return "
            "time"
        )
    found.sort(key=lambda e: e.value)
    merged: list[Equilibrium] = []
    for equilibrium in found:
        if merged and abs(equilibrium.value - merged[-1].value) <= 1e-10 * width:
            if equilibrium.multiplicity > merged[-1].multiplicity:
                merged[-1] = equilibrium
            continue
        merged.append(equilibrium)
    return merged, notes


def attach_closed_forms(
    model: Model,
    equilibria: list[Equilibrium],
    closed_forms: Sequence[sympy.Expr],
    values: Mapping[str, float] | None,
) -> tuple[list[Equilibrium], list[str]]:
    """Match SymPy's closed-form roots to the numeric ones; report any disagreement.

    A closed form that is real at these values and lies in the region but matches
    no numeric root is a disagreement and becomes a warning.
    """
    substitutions = {
        model.symbols[n]: sympy.Float(v, DIGITS)
        for n, v in zip(model.parameters, model.args(values), strict=True)
    }
    low, high = model.region
    width = max(high - low, 1e-300)
    warnings: list[str] = []
    result = list(equilibria)
    for form in closed_forms:
        try:
            number = complex(sympy.N(form.subs(substitutions), DIGITS))
        except (TypeError, ValueError, ZeroDivisionError):
            continue
        if not np.isfinite(number.real) or abs(number.imag) > 1e-12 * max(1.0, abs(number.real)):
            continue
        value = number.real
        if not low - 1e-9 * width <= value <= high + 1e-9 * width:
            continue
        matches = [
            i
            for i, e in enumerate(result)
            if abs(e.value - value) <= MATCH_RELATIVE * max(width, abs(value))
        ]
        if not matches:
            warnings.append(
                f"SymPy gives an equilibrium {to_formula(form)} = {value:.10g} that the "
                "numeric search did not find; the numeric result is shown"
            )
            continue
        index = matches[0]
        if result[index].closed_form is None:
            from dataclasses import replace

            result[index] = replace(result[index], closed_form=to_formula(form))
    return result, warnings


def basins_of(
    model: Model, equilibria: Sequence[Equilibrium], values: Mapping[str, float] | None = None
) -> tuple[list[Basin], list[float]]:
    """Intervals of the region flowing to each stable state, and the thresholds between.

    The flow between two neighbouring equilibria has the sign of f at the midpoint;
    intervals flowing to the same attractor are merged. A threshold is an
    equilibrium (unstable or semi-stable) that separates two different fates.
    """
    low, high = model.region
    points = [low, *[e.value for e in equilibria if low < e.value < high], high]
    by_value = {e.value: e for e in equilibria}
    middles = np.array([(a + b) / 2 for a, b in itertools.pairwise(points)])
    with np.errstate(all="ignore"):
        signs = np.sign(
            np.asarray(model.numeric()(middles, *model.args(values)), dtype=float) + 0.0 * middles
        )
    pieces: list[Basin] = []
    for (a, b), sign in zip(itertools.pairwise(points), signs, strict=True):
        end = a if sign < 0 else b
        attractor = end if end in by_value else None
        exit_ = None
        if attractor is None:
            exit_ = "lower end" if sign < 0 else "upper end"
        if sign == 0:
            attractor, exit_ = None, "rests"
        if pieces and pieces[-1].attractor == attractor and pieces[-1].exit == exit_:
            pieces[-1] = Basin(pieces[-1].low, b, attractor, exit_)
        else:
            pieces.append(Basin(a, b, attractor, exit_))
    thresholds = [p.high for p in pieces[:-1]]
    return pieces, [t for t in thresholds if t in by_value and by_value[t].stability != STABLE]
