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
    plural: bool = False  # the state's name takes a plural verb ("hydrocarbons ... reach")

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
        lever_words, _ = _running_name(label, units["lever"])
        state = plain_name(scenario.state.name) or get(summary, "state", "symbol") or "state"
        state_words, plural = _running_name(state, units["state"])
        return cls(
            summary=summary,
            scenario=scenario,
            lower=better == LOWER,
            lever=lever,
            lever_label=lever_words,
            state=state_words,
            units=units,
            plural=plural,
        )

    def verb(self, singular: str) -> str:
        """A verb agreeing with the state's name: "settles" or, for a plural name, "settle"."""
        return plural_verb(singular) if self.plural else singular

    @property
    def its(self) -> str:
        """The possessive for the state: "its" or "their"."""
        return "their" if self.plural else "its"

    @property
    def stable_state(self) -> str:
        """ "a stable stock" or, for a plural name, "the young fish stable"."""
        return f"the {self.state} stable" if self.plural else f"a stable {self.state}"

    @property
    def it(self) -> str:
        """The pronoun for the state: "it" or "they"."""
        return "they" if self.plural else "it"

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


_PREPOSITIONS = {"of", "in", "from", "to", "for", "at", "on", "per", "with", "by", "under", "over"}
_IRREGULAR = {"is": "are", "has": "have", "was": "were", "does": "do", "goes": "go"}


def is_plural(name: str) -> bool:
    """Whether a noun phrase is plural, from its head noun (common English, no source):
    the last word before a preposition, after trailing participles ("hunting tags issued",
    "total petroleum hydrocarbons in topsoil" are plural; "mass of bundle and parachute",
    "phosphorus loading", "spawning biomass" are not)."""
    words = name.lower().split()
    for i, word in enumerate(words):
        if word in _PREPOSITIONS:
            words = words[:i]
            break
    while len(words) > 1 and words[-1].endswith("ed"):
        words = words[:-1]
    if " and " in f" {' '.join(words)} ":
        return True
    head = words[-1] if words else ""
    return head.endswith("s") and not head.endswith(("ss", "us", "is", "ics", "ous"))


def plural_verb(singular: str) -> str:
    """The plural of a third-person verb: "is" -> "are", "reaches" -> "reach", "lies" -> "lie"."""
    if singular in _IRREGULAR:
        return _IRREGULAR[singular]
    if singular.endswith(("ches", "shes", "sses", "xes", "zes")):
        return singular[:-2]
    if singular.endswith("ies") and len(singular) > 4:
        return singular[:-3] + "y"
    return singular[:-1] if singular.endswith("s") else singular


def _running_name(name: str, unit: str) -> tuple[str, bool]:
    """A name for running text and whether it takes a plural verb: a plural name counted in
    a count unit becomes "number of ..." ("hunting tags issued" in animals/yr reads "number
    of hunting tags issued", a singular phrase)."""
    if not is_plural(name):
        return name, False
    head = wording.unit_text(unit).partition("/")[0]
    if head in wording.COUNT_NOUNS or head in wording.COUNT_NOUNS.values():
        return f"number of {name}", False
    return name, True


def plain_name(name: str) -> str:
    """A name for running text: a bracketed aside is dropped ("herd size (all ages)" ->
    "herd size"), since the sentence adds brackets of its own."""
    return re.sub(r"\s*\([^)]*\)", "", name or "").strip()


def can_tip(c: Context) -> bool:
    """Whether the model can lose its state at all: a threshold, more than one stable
    state, a fold in the lever, hysteresis or a fall under way. A model with one stable
    state and nothing of these (a linear tank, a falling body) cannot collapse or flip, so
    a risk of 0% there is 0 by construction and says nothing."""
    s = c.summary
    stable = [e for e in s.get("equilibria") or [] if e.get("stability") == "stable"]
    folds = [b for b in s.get("bifurcations") or [] if b.get("kind") == "saddle-node"]
    return bool(
        [t for t in s.get("thresholds") or [] if finite(t)]
        or len(stable) > 1
        or folds
        or get(s, "limits", "lever_limit")
        or get(s, "dynamics", "hysteresis")
        or get(s, "dynamics", "collapse")
    )


def risk_applies(c: Context, outcome: dict[str, Any] | None) -> bool:
    """Whether a collapse (flip) risk means anything here: some sample collapses, or the
    model can tip (:func:`can_tip`) and some sample has a positive lever limit or the
    scenario declares a collapse level for a lever it sets."""
    if outcome is None or not finite(outcome.get("collapse_risk")):
        return False
    if outcome.get("collapsed"):
        return True
    if not can_tip(c):
        return False
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
