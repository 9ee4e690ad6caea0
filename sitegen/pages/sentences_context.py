"""What every sentence builder needs from one summary: names, units, direction and figures.

The summary is :func:`sitegen.dynamics.report.assessment_summary` (plain data);
the scenario gives the words (state name, parameter labels, reference levels,
tags). Figure names follow the figure stage's own rules, so a sentence names a
figure only when that figure is drawn for this summary (see
:meth:`Context.figure`).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Any

from sitegen.figures.bifurcation import figure_names as bifurcation_names
from sitegen.pages import wording
from sitegen.scenario.records import LOWER, Scenario

EDGE_TOL = 1e-6  # relative: a lever value this close to its range end is "at the end"


@dataclass(frozen=True)
class Sentence:
    """One plain-language sentence and the numbers it states.

    ``text`` is plain text (the page escapes it) and carries at least one number
    with its unit; ``figure`` names the figure (``Figure.name``) that shows the
    number, or None when a table does; ``values`` are the unrounded numbers the
    text states, in the order they appear, for traceability.
    """

    topic: str
    text: str
    figure: str | None
    values: tuple[float, ...]


def get(data: Any, *keys: str | int) -> Any:
    """``data[k1][k2]...`` or None as soon as a level is missing or None."""
    for key in keys:
        if data is None:
            return None
        try:
            data = data[key]
        except (KeyError, IndexError, TypeError):
            return None
    return data


def finite(value: Any) -> bool:
    """True for a real, finite number (bools excluded)."""
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


@dataclass(frozen=True)
class Context:
    """Names, units and direction of one scenario's summary, with the number formatters."""

    summary: dict[str, Any]
    scenario: Scenario
    lower: bool
    lever: str | None
    lever_label: str
    state: str
    units: dict[str, str] = field(default_factory=dict)

    @classmethod
    def of(cls, summary: dict[str, Any], scenario: Scenario) -> Context:
        """The context for ``summary`` (missing sections are read as None)."""
        units = dict(summary.get("units") or {})
        units.setdefault("state", get(summary, "state", "unit") or scenario.state.unit)
        units.setdefault("time", scenario.model.time_unit)
        lever = get(summary, "limits", "lever") or scenario.model.lever
        units.setdefault("lever", _parameter_unit(scenario, lever))
        units.setdefault("yield", f"{units['state']}/{units['time']}")
        better = get(summary, "state", "better") or scenario.state.better
        label = plain_name(_parameter_label(scenario, lever)) or lever or ""
        return cls(
            summary=summary,
            scenario=scenario,
            lower=better == LOWER,
            lever=lever,
            lever_label=label,
            state=plain_name(scenario.state.name) or get(summary, "state", "symbol") or "state",
            units=units,
        )

    # Formatters with this scenario's units.
    def s(self, value: float | None) -> str:
        """A state value with the state unit."""
        return wording.quantity(value, self.units["state"])

    def lv(self, value: float | None) -> str:
        """A lever value with the lever unit."""
        return wording.quantity(value, self.units["lever"])

    def y(self, value: float | None) -> str:
        """A yield (state per time) with its unit."""
        return wording.quantity(value, self.units["yield"])

    def t(self, value: float | None) -> str:
        """A length of time in the model's time unit, as words."""
        return wording.duration(value, self.units["time"])

    @property
    def fishery(self) -> bool:
        """Tagged as a fishery: the trade words overfished / overfishing apply."""
        return any("fish" in tag.lower() for tag in self.scenario.tags)

    @property
    def collapse_word(self) -> str:
        """'collapse' for a stock, 'flip' for a pollutant or pest (better = lower)."""
        return "flip to the high state" if self.lower else "collapse"

    def lever_range(self) -> tuple[float, float] | None:
        """The explored range of the lever, if it has one."""
        if self.lever is None:
            return None
        try:
            return self.scenario.parameter(self.lever).range
        except KeyError:
            return None

    def at_range_end(self, value: float | None) -> bool:
        """True when ``value`` sits at an end of the lever's range (not an interior optimum)."""
        span = self.lever_range()
        if span is None or not finite(value):
            return False
        width = max(abs(span[1] - span[0]), 1e-300)
        return any(abs(float(value) - end) <= EDGE_TOL * width for end in span)  # type: ignore[arg-type]

    def figure(self, kind: str) -> str | None:
        """The name of the figure of ``kind`` drawn for this summary, or None when none is.

        Kinds: "phase-line", "bifurcation" (the lever's), "trajectories", "collapse"
        (only today's fall past a fold), "yield-curve", "risk", "trend".
        """
        summary = self.summary
        if kind == "phase-line":
            return "phase-line" if summary.get("equilibria") is not None else None
        if kind == "bifurcation":
            return self._bifurcation_name()
        if kind == "trajectories":
            return "trajectories" if get(summary, "dynamics", "trajectory") else None
        if kind == "collapse":
            done = get(summary, "dynamics", "collapse", "collapse_time")
            return "collapse" if finite(done) else None
        if kind == "yield-curve":
            ok = get(summary, "limits", "sustainable_yield") and self.lever_range()
            return "yield-curve" if ok else None
        if kind == "risk":
            base = base_outcome(summary)
            ok = (
                base is not None and base.get("lever_value") is not None and base.get("lever_limit")
            )
            return "risk" if ok else None
        if kind == "trend":
            earlier = [h for h in self.scenario.history if h.year != self.scenario.assessment_year]
            ok = earlier and get(summary, "limits", "lever_limit") and self.lever_range()
            return "trend" if ok else None
        raise ValueError(f"unknown figure kind {kind!r}")

    def _bifurcation_name(self) -> str | None:
        lever = self.lever
        continued = [b.get("parameter") for b in self.summary.get("branches") or []]
        if lever is None or lever not in continued or self.lever_range() is None:
            return None
        # The figure stage names the lever's diagram first, the other ranged parameters after.
        ranged = [p.name for p in self.scenario.parameters if p.range is not None]
        order = [lever] + [p for p in ranged if p != lever and p in continued]
        return bifurcation_names(order)[0]


def plain_name(name: str) -> str:
    """A name for running text: a bracketed aside is dropped ("herd size (all ages)" ->
    "herd size"), since the sentence adds brackets of its own."""
    return re.sub(r"\s*\([^)]*\)", "", name or "").strip()


def risk_applies(c: Context, outcome: dict[str, Any] | None) -> bool:
    """Whether a collapse (flip) risk means anything here: some sample collapses or has a
    positive lever limit, or the scenario declares a collapse level for a lever it sets."""
    if outcome is None or not finite(outcome.get("collapse_risk")):
        return False
    if outcome.get("collapsed"):
        return True
    q = outcome.get("lever_limit") or {}
    if finite(q.get("p95")) and q["p95"] > 0:
        return True
    declared = c.scenario.state.collapse_level is not None
    return not c.lower and declared and outcome.get("lever_value") is not None


def parameter_words(c: Context, name: str) -> str:
    """A parameter as words for running text: its label, else its symbol."""
    return plain_name(_parameter_label(c.scenario, name)) or name


def base_outcome(summary: dict[str, Any]) -> dict[str, Any] | None:
    """The uncertainty outcome of the base model, or None without uncertainty."""
    for outcome in get(summary, "uncertainty", "outcomes") or []:
        if outcome.get("name") == "base":
            return outcome
    return None


def _parameter_label(scenario: Scenario, name: str | None) -> str:
    if name is None:
        return ""
    try:
        return scenario.parameter(name).label
    except KeyError:
        return ""


def _parameter_unit(scenario: Scenario, name: str | None) -> str:
    if name is None:
        return ""
    try:
        return scenario.parameter(name).unit
    except KeyError:
        return ""


def sentence(topic: str, text: str, figure: str | None, *values: float | None) -> Sentence:
    """A Sentence whose ``values`` are the given numbers (None dropped)."""
    kept = tuple(float(v) for v in values if finite(v))
    return Sentence(topic, text, figure, kept)
