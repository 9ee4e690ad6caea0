"""Plain records for a loaded scenario: what every later stage reads.

Values are in the units the scenario declares (each record carries its unit
string); time is in the model's ``time_unit``. Names are the scenario's own.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import sympy

from sitegen.scenario.formula import ParsedFormula

HIGHER = "higher"  # [state] better: a larger state is better (stocks, herds, water levels)
LOWER = "lower"  # [state] better: a smaller state is better (pollutants, nutrients, pests)
DIRECTIONS = (HIGHER, LOWER)


@dataclass(frozen=True)
class StateSpec:
    """The single state variable and the region of it that is analysed.

    ``better`` is "higher" (a stock: the upper stable state is protected and
    collapse is a fall) or "lower" (a pollutant or pest: the lowest stable state
    is protected and the danger is a flip up to the high state).
    """

    symbol: str
    name: str
    unit: str
    min: float
    max: float | None
    current: float | None = None
    collapse_level: float | None = None
    better: str = HIGHER


@dataclass(frozen=True)
class Parameter:
    """A named constant of the model, in its own unit; ``range`` is explored."""

    name: str
    value: float
    unit: str
    label: str
    range: tuple[float, float] | None = None
    note: str = ""
    source: str = (
        ""  # provenance when not the scenario's own value, e.g. "fitted to 2002-2026 data"
    )


@dataclass(frozen=True)
class ModelSpec:
    """dstate/dt = rate; ``lever`` is the parameter the manager sets."""

    rate: ParsedFormula
    lever: str | None = None
    yield_: ParsedFormula | None = None
    time_unit: str = "yr"
    shock: float = 0.5


@dataclass(frozen=True)
class Policy:
    """An alternative setting or harvest rule, analysed beside the base model.

    Either ``values`` overrides parameter values of the base model, or ``rate``
    (and optionally ``yield_``) replaces the model, with extra ``parameters``.
    ``symbols`` are the names its formulas may use (base names and its own).
    """

    name: str
    values: dict[str, float] = field(default_factory=dict)
    rate: ParsedFormula | None = None
    yield_: ParsedFormula | None = None
    parameters: tuple[Parameter, ...] = ()
    symbols: dict[str, sympy.Symbol] = field(default_factory=dict, compare=False, repr=False)


@dataclass(frozen=True)
class UncertainParameter:
    """A probability distribution for one parameter.

    ``numbers`` holds the distribution's own numbers: ``mean``/``sd`` (normal),
    ``median``/``sdlog`` (lognormal; sdlog is the standard deviation of the
    natural log), ``low``/``high`` (uniform), ``low``/``mode``/``high``
    (triangular).
    """

    name: str
    distribution: str
    numbers: dict[str, float]


@dataclass(frozen=True)
class UncertaintySpec:
    """How many samples to draw, with which seed, and the risk tolerance."""

    samples: int = 10_000
    seed: int = 0
    tolerance: float = 0.05
    parameters: tuple[UncertainParameter, ...] = ()


@dataclass(frozen=True)
class HistoryEntry:
    """An earlier year's estimates and settings."""

    year: int
    values: dict[str, float]


@dataclass(frozen=True)
class ReferencePoints:
    """Declared reference levels of the state (in the state's unit)."""

    limit: float | None = None
    target: float | None = None
    trigger: float | None = None


@dataclass(frozen=True)
class Economics:
    """Price per unit of yield and cost per unit of lever per unit time."""

    price: float
    cost: float
    currency: str = ""


@dataclass(frozen=True)
class MapSpec:
    """A pair of parameters for a two-parameter map."""

    x: str
    y: str


START_ESTIMATE = "estimate"  # [data] start: the starting state is fitted too
TIMINGS = ("start", "mid")  # [data] timing: the index is read at the start or the middle of a year


@dataclass(frozen=True)
class IndexSeries:
    """One abundance index column: ``values[i]`` belongs to ``DataSpec.years[i]``.

    NaN marks a year without an observation (an empty cell); every other value
    is above zero (the fit takes logs).
    """

    name: str
    values: tuple[float, ...]


@dataclass(frozen=True)
class DataSpec:
    """Monitoring data from ``[data]``: yearly removals and one or more abundance indices.

    ``years`` run one by one with no gap. ``removals[i]`` is the lever's value
    (in the lever's unit) held constant through year ``years[i]``. ``start`` is
    the state at the start of the first year: a parameter name, a number in the
    state's unit, or "estimate". ``estimate`` names the parameters fitted (each
    has a range, the search bounds). ``timing`` says when in the year the index is
    read ("start" or "mid"). ``source`` is the CSV path as written (relative to
    the scenario) or "inline"; ``data_hash`` the SHA-256 of the CSV bytes (or of
    the inline columns as text), the provenance of a fit.
    """

    source: str
    years: tuple[int, ...]
    removal: str
    removals: tuple[float, ...]
    indices: tuple[IndexSeries, ...]
    estimate: tuple[str, ...]
    start: str | float
    timing: str = "start"
    replicates: int = 500
    data_hash: str = ""


@dataclass(frozen=True)
class FitEntry:
    """One assessment year's fit, as stored in the companion ``<stem>.fitted.toml``.

    ``estimates`` in the parameters' own units (and "start" in the state's unit when
    the starting state was fitted); ``derived`` holds the lever limit, MSY, B_MSY and
    today's margin at the fitted values (units as in the fit summary).
    """

    assessment_year: int
    data_hash: str
    first_year: int
    last_year: int
    estimates: dict[str, float]
    derived: dict[str, float] = field(default_factory=dict)


@dataclass(frozen=True)
class Scenario:
    """A validated scenario: the contract between loading and everything after.

    ``symbols`` maps every name (state and parameters, including policy
    parameters) to the SymPy symbol the formulas were built with.
    """

    slug: str
    path: str
    title: str
    summary: str
    assessment_year: int
    state: StateSpec
    parameters: tuple[Parameter, ...]
    model: ModelSpec
    symbols: dict[str, sympy.Symbol] = field(compare=False, repr=False)
    tags: tuple[str, ...] = ()
    notes: str = ""
    sources: tuple[str, ...] = ()
    policies: tuple[Policy, ...] = ()
    uncertainty: UncertaintySpec | None = None
    history: tuple[HistoryEntry, ...] = ()
    reference: ReferencePoints = ReferencePoints()
    economics: Economics | None = None
    maps: tuple[MapSpec, ...] = ()
    data: DataSpec | None = None
    fits: tuple[FitEntry, ...] = ()  # from the companion file, oldest first
    source_hash: str = ""
    warnings: tuple[str, ...] = ()

    def parameter(self, name: str) -> Parameter:
        """The base-model parameter called ``name``."""
        for parameter in self.parameters:
            if parameter.name == name:
                return parameter
        raise KeyError(name)

    @property
    def values(self) -> dict[str, float]:
        """Parameter name -> value for the base model."""
        return {p.name: p.value for p in self.parameters}
