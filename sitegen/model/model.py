"""Stage 2: the model as SymPy expressions plus fast numeric versions of them.

A :class:`Model` is one right-hand side f(x; p) with its parameter values,
ranges and the region [low, high] of the state that is analysed. Derivatives
are taken symbolically once and turned into NumPy functions on demand; every
numeric function takes the state first, then the parameters in the model's
order (``Model.parameters``), and broadcasts over arrays.

Units: the state in ``state_unit``, time in ``time_unit``, each parameter in
``units[name]``; rates are state per time.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from functools import cached_property

import mpmath
import numpy as np
import sympy

from sitegen.scenario.records import HIGHER, Policy, Scenario

NumericFunction = Callable[..., np.ndarray]


@dataclass(frozen=True)
class Model:
    """dx/dt = rate(x; parameters) over the region [low, high] of x.

    ``parameters`` lists every parameter name in a fixed order (declaration
    order); ``values`` holds their current values, ``ranges`` the explored
    intervals of those that have one. ``region_note`` says how the upper end
    was chosen when the scenario gave none. ``better`` is the scenario's
    ``[state] better``: "higher" (protect the upper stable state) or "lower"
    (protect the lowest one; the danger is a flip up).
    """

    slug: str
    state: sympy.Symbol
    rate: sympy.Expr
    parameters: tuple[str, ...]
    symbols: Mapping[str, sympy.Symbol]
    values: Mapping[str, float]
    ranges: Mapping[str, tuple[float, float]]
    units: Mapping[str, str]
    state_unit: str
    time_unit: str
    region: tuple[float, float]
    region_note: str = ""
    lever: str | None = None
    yield_: sympy.Expr | None = None
    current_state: float | None = None
    name: str = "base"
    better: str = HIGHER
    _cache: dict[str, object] = field(default_factory=dict, compare=False, repr=False)

    # -- symbolic ---------------------------------------------------------------------------

    def symbol(self, name: str) -> sympy.Symbol:
        """The SymPy symbol of a parameter (or of the state)."""
        if name == self.state.name:
            return self.state
        return self.symbols[name]

    def derivative(self, x_order: int = 0, wrt: tuple[str, ...] = ()) -> sympy.Expr:
        """d^x_order/dx^x_order of the rate, then differentiated by each name in ``wrt``.

        At a kink of min/max/abs the derivative does not exist; the one-sided pieces
        are returned (DiracDelta terms dropped), so callers must test kinks separately.
        """
        key = f"d{x_order}:{','.join(wrt)}"
        if key not in self._cache:
            expr = self.rate
            if x_order:
                expr = sympy.diff(expr, self.state, x_order)
            for name in wrt:
                expr = sympy.diff(expr, self.symbol(name))
            if expr.has(sympy.DiracDelta):
                # Derivatives of min/max/abs carry DiracDelta terms, zero everywhere but at the
                # kink itself, where the derivative does not exist; analysis treats kinks apart.
                expr = expr.replace(sympy.DiracDelta, lambda *_: sympy.S.Zero)
            self._cache[key] = expr
        return self._cache[key]  # type: ignore[return-value]

    def substituted(
        self, expr: sympy.Expr, values: Mapping[str, float] | None = None
    ) -> sympy.Expr:
        """``expr`` with every parameter replaced by its value (exact rationals)."""
        chosen = dict(self.values if values is None else values)
        return expr.subs(
            {self.symbols[n]: sympy.nsimplify(v, rational=True) for n, v in chosen.items()}
        )

    # -- numeric ----------------------------------------------------------------------------

    @cached_property
    def argument_symbols(self) -> tuple[sympy.Symbol, ...]:
        """(state, *parameters) in the order every numeric function takes them."""
        return (self.state, *(self.symbols[n] for n in self.parameters))

    def numeric(self, x_order: int = 0, wrt: tuple[str, ...] = ()) -> NumericFunction:
        """NumPy version of :meth:`derivative`: ``fn(x, *parameter_values)``."""
        key = f"np{x_order}:{','.join(wrt)}"
        if key not in self._cache:
            expr = self.derivative(x_order, wrt)
            self._cache[key] = sympy.lambdify(self.argument_symbols, expr, modules="numpy")
        return self._cache[key]  # type: ignore[return-value]

    def precise(self, x_order: int = 0, wrt: tuple[str, ...] = ()) -> Callable[..., mpmath.mpf]:
        """mpmath version of :meth:`derivative`, for 30-digit polishing and residuals."""
        key = f"mp{x_order}:{','.join(wrt)}"
        if key not in self._cache:
            expr = self.derivative(x_order, wrt)
            self._cache[key] = sympy.lambdify(self.argument_symbols, expr, modules="mpmath")
        return self._cache[key]  # type: ignore[return-value]

    def args(self, values: Mapping[str, float] | None = None) -> tuple[float, ...]:
        """Parameter values in model order, ``values`` overriding the current ones."""
        merged = dict(self.values)
        if values:
            merged.update(values)
        return tuple(float(merged[n]) for n in self.parameters)

    def f(self, x: np.ndarray | float, values: Mapping[str, float] | None = None) -> np.ndarray:
        """The rate at state(s) ``x`` (state units per time unit)."""
        with np.errstate(all="ignore"):
            return np.asarray(self.numeric()(x, *self.args(values)), dtype=float) + 0.0 * x

    def with_values(self, values: Mapping[str, float]) -> Model:
        """The same model at other parameter values (region unchanged)."""
        merged = dict(self.values)
        merged.update(values)
        return Model(
            self.slug,
            self.state,
            self.rate,
            self.parameters,
            self.symbols,
            merged,
            self.ranges,
            self.units,
            self.state_unit,
            self.time_unit,
            self.region,
            self.region_note,
            self.lever,
            self.yield_,
            self.current_state,
            self.name,
            self.better,
            self._cache,
        )

    @property
    def ranged(self) -> tuple[str, ...]:
        """Names of the parameters that have a range, in model order."""
        return tuple(n for n in self.parameters if n in self.ranges)


def build_model(scenario: Scenario, policy: Policy | None = None) -> Model:
    """The :class:`Model` of a scenario, or of one of its policies.

    A policy with ``values`` only changes parameter values; one with its own
    ``rate`` replaces the rate and adds its own parameters.
    """
    symbols = dict(scenario.symbols)
    parameters = list(scenario.parameters)
    rate = scenario.model.rate.expr
    yield_ = scenario.model.yield_.expr if scenario.model.yield_ else None
    values = {p.name: p.value for p in parameters}
    name = "base"
    if policy is not None:
        name = policy.name
        values.update(policy.values)
        symbols.update(policy.symbols)
        parameters.extend(policy.parameters)
        values.update({p.name: p.value for p in policy.parameters})
        if policy.rate is not None:
            rate = policy.rate.expr
        if policy.yield_ is not None:
            yield_ = policy.yield_.expr
    state_symbol = symbols[scenario.state.symbol]
    names = tuple(p.name for p in parameters)
    parameter_symbols = {n: symbols[n] for n in names}
    ranges = {p.name: p.range for p in parameters if p.range is not None}
    units = {p.name: p.unit for p in parameters}
    model = Model(
        slug=scenario.slug,
        state=state_symbol,
        rate=rate,
        parameters=names,
        symbols=parameter_symbols,
        values=values,
        ranges=ranges,  # type: ignore[arg-type]
        units=units,
        state_unit=scenario.state.unit,
        time_unit=scenario.model.time_unit,
        region=(scenario.state.min, scenario.state.max or scenario.state.min + 1.0),
        lever=scenario.model.lever,
        yield_=yield_,
        current_state=scenario.state.current,
        name=name,
        better=scenario.state.better,
    )
    if scenario.state.max is not None:
        return model
    high, note = derive_upper_end(model, scenario)
    return Model(
        model.slug,
        model.state,
        model.rate,
        model.parameters,
        model.symbols,
        model.values,
        model.ranges,
        model.units,
        model.state_unit,
        model.time_unit,
        (scenario.state.min, high),
        note,
        model.lever,
        model.yield_,
        model.current_state,
        model.name,
        model.better,
    )


def derive_upper_end(model: Model, scenario: Scenario) -> tuple[float, str]:
    """An upper end for the region when the scenario gives none, and how it was chosen.

    Start from the largest of: twice today's state, 1.5 times the largest parameter
    sharing the state's unit, and min + 1; then double it (at most 40 times) until
    the rate is negative there at every corner of the parameter ranges, so that
    everything above the region flows back into it.
    """
    low = scenario.state.min
    candidates = [low + 1.0]
    if scenario.state.current is not None:
        candidates.append(2.0 * abs(scenario.state.current))
    same_unit = [abs(p.value) for p in scenario.parameters if p.unit == scenario.state.unit]
    same_unit += [
        abs(b)
        for p in scenario.parameters
        if p.unit == scenario.state.unit and p.range
        for b in p.range
    ]
    if same_unit:
        candidates.append(1.5 * max(same_unit))
    high = max(candidates)
    corners = _range_corners(model)
    for _ in range(40):
        with np.errstate(all="ignore"):
            rates = [float(model.f(high, corner)) for corner in corners]
        if all(np.isfinite(r) and r < 0 for r in rates):
            return high, (
                f"upper end {high:.6g} {scenario.state.unit} chosen by sitegen: the "
                "rate is negative there across the parameter ranges, so every state "
                "above it falls back into the region"
            )
        high = low + 2.0 * (high - low)
    return high, (
        f"upper end {high:.6g} {scenario.state.unit} chosen by sitegen; the rate does "
        "not turn negative above it (the state may grow without bound)"
    )


def _range_corners(model: Model) -> list[dict[str, float]]:
    """The current values and the two ends of each range, one parameter at a time."""
    corners: list[dict[str, float]] = [{}]
    for name, (low, high) in model.ranges.items():
        corners.extend([{name: low}, {name: high}])
    return corners
