"""Records produced by the dynamics stage.

Units: states in the model's state unit, lever values in the lever's own unit,
times in the model's ``time_unit``, yields in state per time unit, money in the
scenario's currency per time unit. ``None`` means "does not happen" (for a
time) or "does not exist" (for a level), never zero.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

# Event kinds of a trajectory.
COLLAPSE, UPPER_END, THRESHOLD, WITHIN_10, WITHIN_1 = (
    "collapse",
    "upper end",
    "threshold",
    "within 10%",
    "within 1%",
)
# Fates of a trajectory.
SETTLES, COLLAPSES, LEAVES, STILL_MOVING = "settles", "collapses", "leaves above", "still moving"


@dataclass(frozen=True)
class Event:
    """The first time ``time`` at which the state reached ``level`` (``kind`` says why)."""

    kind: str
    level: float
    time: float


@dataclass(frozen=True)
class Trajectory:
    """One integrated solution x(t) from ``start``, with its events.

    ``attractor`` is the stable state the start tends to (None when it leaves the
    region); ``fate`` is one of settles, collapses, leaves above, still moving.
    ``times`` and ``states`` are the solver's output points (for figures).
    """

    start: float
    times: np.ndarray = field(compare=False)
    states: np.ndarray = field(compare=False)
    events: tuple[Event, ...]
    attractor: float | None
    fate: str
    collapse_level: float
    note: str = ""

    def time_of(self, kind: str) -> float | None:
        """First time of an event of this kind, or None if it did not happen."""
        times = [e.time for e in self.events if e.kind == kind]
        return min(times) if times else None


@dataclass(frozen=True)
class Collapse:
    """Time to collapse with the lever past a fold, beside the bottleneck estimate.

    The local normal form at the fold (x_f, p_f) is dx/dt ~ -(a + b (x - x_f)^2)
    with a = |f_p| |p - p_f| and b = |f_xx| / 2; its passage time over the whole
    line is ``ghost_time`` = pi / sqrt(a b) (Strogatz 2015, sec. 4.3).
    ``collapse_time`` is integrated from ``start`` to ``collapse_level``.
    """

    lever: str
    lever_value: float
    fold_value: float
    fold_state: float
    distance: float
    a: float
    b: float
    ghost_time: float
    collapse_time: float | None
    start: float
    collapse_level: float
    note: str = ""


@dataclass(frozen=True)
class Recovery:
    """Return to the stable state after a shock removing ``shock`` of it.

    ``start`` = (1 - shock) * ``stable_state``, or (1 + shock) * ``stable_state``
    (a rise) when better = "lower"; ``time_to_10`` and ``time_to_1``
    are the times to come within 10% and 1% of it (None if it collapses instead);
    ``return_time`` is 1/|f'(x*)| (None where f'(x*) = 0).
    """

    shock: float
    stable_state: float
    start: float
    time_to_10: float | None
    time_to_1: float | None
    return_time: float | None
    fate: str
    note: str = ""


@dataclass(frozen=True)
class Hysteresis:
    """Where the lever must go back to for the lost state to return.

    ``fold_value`` is where the stable state was lost; ``return_value`` where it
    comes back (None: not inside the lever's range, i.e. irreversible there);
    ``distance`` = |return_value - fold_value|; ``collapsed_state`` is where the
    state goes after the loss.
    """

    lever: str
    fold_value: float
    fold_state: float
    collapsed_state: float
    return_value: float | None
    distance: float | None
    irreversible: bool
    note: str = ""


@dataclass(frozen=True)
class LeverLimit:
    """The furthest lever setting that keeps a stable positive state.

    ``direction`` is "largest" when raising the lever is what endangers the
    state, "smallest" when lowering it does. ``kind`` is the bifurcation that
    ends the stable branch there (saddle-node or transcritical). ``margin`` is
    in lever units, positive while the current setting is on the safe side;
    ``margin_percent`` is the margin as a percentage of the limit.
    """

    lever: str
    direction: str
    limit: float
    kind: str
    state_at_limit: float
    current: float
    margin: float
    margin_percent: float | None
    safe_interval: tuple[float, float]


@dataclass(frozen=True)
class SustainableYield:
    """Maximum sustainable yield along the continued stable branch.

    ``msy`` at lever ``lever_at_msy`` (E_MSY, or the quota) with state
    ``state_at_msy`` (B_MSY); ``current_yield`` is today's sustainable yield at
    today's lever setting (None without a stable positive state).
    ``at_fold`` is True when the maximum sits on the end of the stable branch
    (a quota: MSY is then exactly the tipping point).
    """

    lever: str
    msy: float
    lever_at_msy: float
    state_at_msy: float
    current_yield: float | None
    at_fold: bool


@dataclass(frozen=True)
class StockStatus:
    """Today's state against B_MSY and a limit level.

    ``limit_source`` says where the limit came from: "[reference] limit" or
    "half of B_MSY (common practice, no single source)".
    """

    current: float
    b_msy: float
    ratio_to_b_msy: float
    limit: float
    limit_source: str
    ratio_to_limit: float
    below_limit: bool


@dataclass(frozen=True)
class EconomicYield:
    """Open access (rent zero) and maximum economic yield beside MSY.

    Rent = price * yield - cost * lever, per time unit, in ``currency``.
    Open access is None where fishing never pays (rent < 0 for every lever > 0).
    """

    price: float
    cost: float
    currency: str
    open_access_lever: float | None
    open_access_state: float | None
    open_access_yield: float | None
    mey_lever: float
    mey_state: float
    mey_yield: float
    mey_rent: float
    msy: float
    msy_lever: float


@dataclass(frozen=True)
class PolicyRow:
    """One policy analysed with the same engine as the base model.

    ``stable_state`` is the stable positive state today's state tends to (None:
    the policy collapses the state); ``margin`` / ``margin_percent`` are to the
    tipping point in the lever (None where there is none inside the range);
    ``recovery_time`` is the time back within 10% after the scenario's shock;
    ``collapse_time`` is set only where the policy collapses the state.
    """

    name: str
    lever_value: float | None
    stable_state: float | None
    yield_: float | None
    limit: LeverLimit | None
    return_time: float | None
    recovery_time: float | None
    collapse_time: float | None
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class PolicyTable:
    """All policy rows and, per column, the name of the best row (None if no row has it).

    Best means: largest stable state, yield and margin; shortest return,
    recovery and (where every row collapses) the longest collapse time.
    """

    rows: tuple[PolicyRow, ...]
    best: dict[str, str | None]


# Kinds of milestone besides the declared [reference] levels (limit, target, trigger).
HALF_WAY, MOST_OF_THE_WAY = "50% of the way", "95% of the way"
# Directions of the run from today's state.
RISING, FALLING, AT_REST = "rising", "falling", "at rest"


@dataclass(frozen=True)
class Milestone:
    """The first time ``time`` (time units from today) the state crosses ``level``.

    ``kind`` is a declared reference level ("limit", "target", "trigger") or a
    share of the way from today's state to its attractor (``HALF_WAY``,
    ``MOST_OF_THE_WAY``; for a linear model the 50% time is the half-life
    ln 2 / k). ``time`` is None when the run does not cross the level: it lies
    behind today's state, or beyond the state the run settles at (``note`` says
    which). ``settles`` says where the run ends relative to the level: "above",
    "below" or "at" (None when the run leaves the region or collapses).
    """

    kind: str
    level: float
    time: float | None
    settles: str | None
    note: str = ""


@dataclass(frozen=True)
class LeverAtLevel:
    """The lever setting at which a reference ``level`` is itself an equilibrium.

    ``lever_value`` (lever units) solves f(level; lever) = 0 inside the lever's
    range, the setting nearest today's when there are several (None: no setting
    in the range holds the state there); ``stable`` is True when the
    equilibrium there is stable (f_x < 0). For an aquifer's limit level this is
    the sustainable pumping rate; for a pollutant's limit, the largest load
    that keeps it below the limit.
    """

    kind: str
    level: float
    lever: str
    lever_value: float | None
    stable: bool | None
    note: str = ""


@dataclass(frozen=True)
class Milestones:
    """Milestones of one model (the base model or one policy) from today's state.

    ``start`` and ``attractor`` are in state units (``attractor`` None when the
    run leaves the region or collapses); ``direction`` is rising, falling or at
    rest; ``end_time`` is where the integration stopped (time units);
    ``lever_settings`` hold each reference level (empty without a ranged lever).
    """

    name: str
    start: float
    attractor: float | None
    direction: str
    milestones: tuple[Milestone, ...]
    end_time: float
    note: str = ""
    lever_settings: tuple[LeverAtLevel, ...] = ()

    def time_of(self, kind: str) -> float | None:
        """Time of the milestone of this kind, or None (absent or not crossed)."""
        return next((m.time for m in self.milestones if m.kind == kind), None)

    @property
    def half_time(self) -> float | None:
        """Time to cover half the way to the attractor (the half-life of a linear model)."""
        return self.time_of(HALF_WAY)

    @property
    def time_95(self) -> float | None:
        """Time to cover 95% of the way to the attractor."""
        return self.time_of(MOST_OF_THE_WAY)
