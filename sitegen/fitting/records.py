"""Plain records of a fit: the estimates, derived figures, index fits and diagnostics.

Units: each record carries its unit string (parameters in their own units,
states in the state unit, lever values in the lever's unit, yields in state per
time unit). Intervals are 95% intervals: ``jacobian`` from the approximate
standard errors (normal on the log scale for a parameter whose range is above
zero, else on the natural scale), ``bootstrap`` the 2.5% and 97.5% percentiles
of the residual bootstrap (None without replicates).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from sitegen.scenario.records import FitEntry

Interval = tuple[float, float]


@dataclass(frozen=True)
class Estimate:
    """One fitted parameter (or the starting state, named "start")."""

    name: str
    label: str
    unit: str
    value: float
    search_range: Interval
    standard_error: float
    jacobian: Interval
    bootstrap: Interval | None
    at_bound: bool
    previous: float | None = None  # last assessment year's fit, from the companion


@dataclass(frozen=True)
class Derived:
    """A figure derived from the fitted model: lever limit, MSY, B_MSY, margin, state."""

    name: str
    label: str
    unit: str
    value: float
    bootstrap: Interval | None
    previous: float | None = None


@dataclass(frozen=True)
class IndexFit:
    """One index against the fitted model: ``predicted = q * state`` in the observed years.

    ``residuals`` are log(observed) - log(predicted) (dimensionless).
    """

    name: str
    q: float
    years: tuple[int, ...]
    observed: tuple[float, ...]
    predicted: tuple[float, ...]
    residuals: tuple[float, ...]


@dataclass(frozen=True)
class FitReport:
    """The whole fit of one scenario to its ``[data]`` (see the module docstring for units).

    ``states`` is the fitted state at the start of each data year. ``correlation``
    maps "a/b" to the correlation of the two estimates (from the Jacobian, on the
    scale of the intervals); ``bootstrap_correlation`` the same over the bootstrap
    replicates (natural scale). ``lacks_contrast`` is True for a one-way trip (no
    index recovers by ``CONTRAST_RISE`` from a low); ``poorly_determined`` names
    estimates whose relative standard error exceeds a half or that are tightly
    correlated with another. ``starts_agreeing`` counts the starting points whose
    optimum matched the best one.
    """

    slug: str
    assessment_year: int
    state: str
    state_unit: str
    lever: str
    lever_unit: str
    time_unit: str
    years: tuple[int, ...]
    removals: tuple[float, ...]
    data_source: str
    data_hash: str
    timing: str
    estimates: tuple[Estimate, ...]
    derived: tuple[Derived, ...]
    indices: tuple[IndexFit, ...]
    states: tuple[float, ...]
    residual_sd: float
    observations: int
    free_parameters: int
    converged: bool
    message: str
    starts: int
    starts_agreeing: int
    correlation: dict[str, float]
    bootstrap_correlation: dict[str, float]
    lacks_contrast: bool
    poorly_determined: tuple[str, ...]
    collapsed: bool
    replicates: int
    replicates_failed: int
    seed: int
    notes: tuple[str, ...] = ()
    previous: FitEntry | None = None
    seconds: dict[str, float] = field(default_factory=dict, compare=False)

    def estimate(self, name: str) -> Estimate:
        """The estimate called ``name``."""
        for estimate in self.estimates:
            if estimate.name == name:
                return estimate
        raise KeyError(name)

    def figure(self, name: str) -> Derived:
        """The derived figure called ``name``."""
        for derived in self.derived:
            if derived.name == name:
                return derived
        raise KeyError(name)
