"""Records produced by the analysis stage.

State values are in the model's state unit, parameter values in their own
units, derivatives f'(x*) in 1/time_unit and return times in time_unit.
Stability convention: f'(x*) < 0 stable, > 0 unstable; where f'(x*) = 0 the
first non-vanishing higher derivative decides (semi-stable for even order).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

STABLE, UNSTABLE, SEMI_STABLE = "stable", "unstable", "semi-stable"


@dataclass(frozen=True)
class Equilibrium:
    """A state where the rate vanishes, with its stability.

    ``precise`` is the value to 30 significant digits (mpmath), ``residual``
    is |f(x*)| evaluated at 30 digits; ``multiplicity`` is the order of the
    root; ``on_boundary`` marks an equilibrium at an end of the region.
    """

    value: float
    stability: str
    derivative: float
    return_time: float | None
    multiplicity: int = 1
    closed_form: str | None = None
    residual: float = 0.0
    precise: str = ""
    on_boundary: bool = False


@dataclass(frozen=True)
class Basin:
    """An interval of the region whose states all tend to one stable state.

    ``attractor`` is None when states there leave the region (collapse to its
    lower end, or growth past its upper end); ``exit`` then says which end.
    """

    low: float
    high: float
    attractor: float | None
    exit: str | None = None


@dataclass(frozen=True)
class Bifurcation:
    """A point (parameter value, state value) where equilibria appear, vanish or meet.

    ``kind`` is saddle-node, transcritical, pitchfork or degenerate.
    ``more_equilibria`` says on which side of ``parameter_value`` more
    equilibria exist ("below" or "above", None if equal); ``counts`` gives the
    number of equilibria in the region just below and just above.
    """

    parameter: str
    kind: str
    parameter_value: float
    state_value: float
    closed_form: str | None = None
    state_closed_form: str | None = None
    more_equilibria: str | None = None
    counts: tuple[int, int] = (0, 0)
    residual: float = 0.0
    derivatives: dict[str, float] = field(default_factory=dict)


@dataclass(frozen=True)
class Branch:
    """A continued curve of equilibria against one parameter.

    ``parameter_values`` and ``state_values`` are the points along the curve in
    arclength order; ``stable`` is True where f'(x) < 0 at that point.
    """

    parameter: str
    parameter_values: np.ndarray = field(compare=False)
    state_values: np.ndarray = field(compare=False)
    stable: np.ndarray = field(compare=False)


@dataclass(frozen=True)
class FoldCurve:
    """A curve of folds (f = f_x = 0) in the plane of two parameters.

    Arrays are aligned: the point k is (x_values[k], y_values[k]) with the
    double equilibrium at state_values[k].
    """

    x: str
    y: str
    x_values: np.ndarray = field(compare=False)
    y_values: np.ndarray = field(compare=False)
    state_values: np.ndarray = field(compare=False)
    closed_form: dict[str, str] | None = None


@dataclass(frozen=True)
class Cusp:
    """A point where f = f_x = f_xx = 0: two folds meet and a fold curve has a cusp."""

    parameters: dict[str, float]
    state_value: float


@dataclass(frozen=True)
class ParameterMap:
    """Two-parameter map: fold curves, cusps and the number of stable states on a grid.

    ``stable_counts[j, i]`` is the number of stable equilibria in the region at
    (x_grid[i], y_grid[j]).
    """

    x: str
    y: str
    fold_curves: tuple[FoldCurve, ...]
    cusps: tuple[Cusp, ...]
    x_grid: np.ndarray = field(compare=False)
    y_grid: np.ndarray = field(compare=False)
    stable_counts: np.ndarray = field(compare=False)
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class Analysis:
    """Everything the analysis stage found for one model."""

    slug: str
    state_symbol: str
    state_unit: str
    region: tuple[float, float]
    parameters: dict[str, float]
    equilibria: tuple[Equilibrium, ...]
    basins: tuple[Basin, ...]
    thresholds: tuple[float, ...]
    bifurcations: tuple[Bifurcation, ...]
    branches: tuple[Branch, ...]
    maps: tuple[ParameterMap, ...]
    method: str
    notes: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()
    timings_s: dict[str, float] = field(default_factory=dict)

    @property
    def cusps(self) -> tuple[Cusp, ...]:
        """All cusps of all maps, each once."""
        seen: list[Cusp] = []
        for parameter_map in self.maps:
            for cusp in parameter_map.cusps:
                if not any(_same_cusp(cusp, other) for other in seen):
                    seen.append(cusp)
        return tuple(seen)


def _same_cusp(a: Cusp, b: Cusp) -> bool:
    if set(a.parameters) != set(b.parameters):
        return False
    scale = max(1.0, abs(a.state_value))
    return abs(a.state_value - b.state_value) <= 1e-6 * scale and all(
        abs(a.parameters[k] - b.parameters[k]) <= 1e-6 * max(1.0, abs(a.parameters[k]))
        for k in a.parameters
    )
