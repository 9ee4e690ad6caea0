"""Plain-language sentences and status, from real summaries and from constructed ones.

Real summaries: the bundled coastal sprat (logistic growth with a fixed catch), the
cold room (no lever), the depot soil (better = lower, decay) and a logistic stock
fished past its limit. Each is assessed once per module. Edge cases are copies
of the sprat summary with parts changed or removed by hand.
"""

from __future__ import annotations

import copy
import math
import re
from decimal import Decimal
from pathlib import Path
from typing import Any

import pytest

from sitegen.dynamics.assess import assess
from sitegen.dynamics.report import assessment_summary
from sitegen.figures.registry import figures_for
from sitegen.pages import sentences, wording
from sitegen.pages.sentences import STATUS_RULES, Sentence, Status
from sitegen.scenario.loader import load_scenario, load_text
from sitegen.scenario.records import Scenario

ROOT = Path(__file__).resolve().parent.parent
BUDGET_S = 2.0
# A number as wording writes it: digits with thousands commas and decimals, or a power of ten.
NUMBER = re.compile(r"(−?\d[\d,]*(?:\.\d+)?)(?: × 10([⁻⁰¹²³⁴⁵⁶⁷⁸⁹]+))?")
SUPERSCRIPTS = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻", "0123456789-")

LOGISTIC = """
[scenario]
title = "Logistic stock fished past its limit"
summary = "test"
assessment_year = 2024
[state]
symbol = "B"
name = "stock"
unit = "kt"
min = 0
max = 1400
current = 640
collapse_level = 100
[parameters.r]
value = 0.5
unit = "1/yr"
name = "growth rate"
range = [0.1, 1.0]
[parameters.K]
value = 1000
unit = "kt"
name = "carrying capacity"
[parameters.H]
value = 140
unit = "kt/yr"
name = "catch limit"
range = [0, 160]
[model]
rate = "r*B*(1 - B/K) - H"
lever = "H"
yield = "H"
time_unit = "yr"
"""

Case = tuple[Scenario, dict[str, Any], set[str]]


def _case(scenario: Scenario) -> Case:
    a = assess(scenario, BUDGET_S)
    return scenario, assessment_summary(a), {f.name for f in figures_for(scenario, a)}


@pytest.fixture(scope="module")
def sprat() -> Case:
    return _case(load_scenario(ROOT / "scenarios" / "coastal-sprat.toml"))


@pytest.fixture(scope="module")
def cold_room() -> Case:
    return _case(load_scenario(ROOT / "scenarios" / "tamsin-cold-room.toml"))


@pytest.fixture(scope="module")
def soil() -> Case:
    return _case(load_scenario(ROOT / "scenarios" / "wexley-depot-soil.toml"))


@pytest.fixture(scope="module")
def past() -> Case:
    return _case(load_text(LOGISTIC, "past.toml", "past"))


def _numbers(text: str) -> list[Decimal]:
    found = []
    for whole, power in NUMBER.findall(text):
        value = Decimal(whole.replace(",", "").replace("−", "-"))
        if power:
            value = value.scaleb(int(power.translate(SUPERSCRIPTS)))
        found.append(value)
    return found


def _all(scenario: Scenario, summary: dict[str, Any]) -> list[Sentence]:
    made = sentences.headline(summary, scenario) + sentences.limit_sentences(summary, scenario)
    for lead in sentences.section_sentences(summary, scenario).values():
        made.extend(lead)
    return made


def _traceable(s: Sentence) -> None:
    """At least one number in the text equals one of ``values`` rounded as wording does."""
    assert s.values, s
    assert all(math.isfinite(v) for v in s.values), s
    stated = set(_numbers(s.text))
    rounded = {wording.rounded(v) for v in s.values}
    assert stated & rounded, (s.text, s.values)
    for bad in ("99999", "00000000", "nan", "None", "not available"):
        assert bad not in s.text, s.text


@pytest.mark.parametrize("name", ["sprat", "cold_room", "soil", "past"])
def test_every_sentence_is_traceable_and_names_a_real_figure(
    name: str, request: pytest.FixtureRequest
) -> None:
    scenario, summary, figures = request.getfixturevalue(name)
    made = _all(scenario, summary)
    assert made
    for s in made:
        _traceable(s)
        assert s.figure is None or s.figure in figures, (s.figure, sorted(figures))
    headline = sentences.headline(summary, scenario)
    assert 1 <= len(headline) <= 3
    assert set(sentences.section_sentences(summary, scenario)) == {
        "equilibria",
        "dynamics",
        "policies",
        "uncertainty",
        "sensitivity",
        "economics",
    }


def _topic(made: list[Sentence], topic: str) -> Sentence:
    found = [s for s in made if s.topic == topic]
    assert found, [s.topic for s in made]
    return found[0]


def test_sprat_limit_is_schaefer_msy(sprat: Case) -> None:
    # Schaefer (1954): logistic growth with a constant catch H loses its stable state at
    # H = rK/4 = 0.5 * 1000 / 4 = 125 kt/yr, with the stock at K/2 = 500 kt.
    scenario, summary, _ = sprat
    made = sentences.limit_sentences(summary, scenario)
    limit = _topic(made, "largest-setting")
    assert "125 kt/yr" in limit.text
    # Today's catch 100 kt/yr leaves 25 kt/yr, 20% of the limit.
    assert "25 kt/yr (20% of the limit)" in limit.text
    assert any(abs(v - 125.0) < 1e-9 for v in limit.values)
    msy = _topic(made, "msy")
    assert "125 kt/yr" in msy.text and "500 kt" in msy.text
    caution = _topic(made, "msy-caution")
    assert "limit, not a target" in caution.text


def test_sprat_stable_state_is_the_logistic_root(sprat: Case) -> None:
    # Upper root of r B (1 - B/K) = H: B = K/2 (1 + sqrt(1 - 4H/(rK))) = 723.6 kt.
    scenario, summary, _ = sprat
    expected = 500.0 * (1.0 + math.sqrt(1.0 - 4.0 * 100.0 / 500.0))
    current = _topic(sentences.limit_sentences(summary, scenario), "current-setting")
    assert wording.quantity(expected, "kt") in current.text  # "724 kt"


def test_sprat_overfished_and_overfishing_are_both_said(sprat: Case) -> None:
    scenario, summary, _ = sprat
    text = _topic(sentences.limit_sentences(summary, scenario), "overfished").text
    assert "not overfished" in text and "no overfishing" in text


def test_past_the_limit_states_the_collapse_time(past: Case) -> None:
    scenario, summary, figures = past
    st = sentences.status(summary, scenario)
    assert (st.word, st.level) == ("past the limit", 2)
    fall = _topic(sentences.limit_sentences(summary, scenario), "past-the-limit")
    # 140 - 125 = 15 kt/yr past the fold at rK/4 (Schaefer 1954).
    assert "15 kt/yr past" in fall.text and "125 kt/yr" in fall.text
    time = summary["dynamics"]["collapse"]["collapse_time"]
    assert wording.duration(time, "yr") in fall.text
    assert fall.figure in figures | {None}
    assert fall in sentences.headline(summary, scenario)


def test_no_lever_cold_room(cold_room: Case) -> None:
    scenario, summary, _ = cold_room
    st = sentences.status(summary, scenario)
    # Below its limit today but warming towards the outside air: near the limit, with the
    # time to pass it. Newton's law of cooling gives t = ln((A - T0)/(A - Ts))/k (Boyce and
    # DiPrima, Elementary Differential Equations, sec. 2.3).
    assert (st.word, st.level) == ("near the limit", 1)
    values = {p.name: p.value for p in scenario.parameters}
    crossing = (
        math.log((values["A"] - scenario.state.current) / (values["A"] - scenario.reference.limit))
        / values["k"]
    )
    assert wording.duration(crossing, "h") in st.reason
    text = " ".join(s.text for s in sentences.headline(summary, scenario))
    assert wording.duration(crossing, "h") in text
    assert "collapse" not in text and "lever" not in text
    assert "hours" in text  # the time unit is h, written as a word
    assert "collapse" not in text and "lever" not in text


def test_soil_headline_states_the_time_to_its_limit(soil: Case) -> None:
    # First-order decay C(t) = C0 exp(-(k + a) t) reaches Ct after ln(C0/Ct)/(k + a)
    # (first-order kinetics, any physical chemistry text, from memory). The story is that
    # time, not that the soil "comes to rest at 0 mg/kg". The guideline for re-use is the
    # soil's limit: above it today, the status is past the limit until the time stated.
    scenario, summary, _ = soil
    values = {p.name: p.value for p in scenario.parameters}
    c0, target = scenario.state.current, scenario.reference.limit
    untreated = math.log(c0 / target) / (values["k"] + values["a"])  # 10.5 years
    head = sentences.headline(summary, scenario)
    assert wording.duration(untreated, "yr") in head[0].text and "500 mg/kg" in head[0].text
    st = sentences.status(summary, scenario)
    assert st.word == "past the limit"
    assert wording.duration(untreated, "yr") in st.reason and "2,400 mg/kg" in st.reason
    made = _all(scenario, summary)
    assert all("collapse" not in s.text and "rest at 0" not in s.text for s in made)
    assert "rest at 0" not in st.reason and "flip" not in st.reason
    # Each treatment's time to the target, from the same law with its extra rate a.
    times = _topic(sentences.section_sentences(summary, scenario)["policies"], "policies-time")
    for policy in scenario.policies:
        rate = values["k"] + policy.values.get("a", values["a"])
        expected = wording.duration(math.log(c0 / target) / rate, "yr")
        assert f"{expected} with {policy.name}" in times.text
    # The options keep their resting level at zero: none "flips the state up".
    assert not [s for s in made if s.topic == "policies-lost"]
    # The hydrocarbons are plural: "reach their limit", never "reaches its".
    assert "hydrocarbons in topsoil reach their limit" in head[0].text
    assert not [s for s in head if re.search(r"(?<![\d,.])0 mg/kg", s.text)]  # zero is no news
    assert not [s for s in made if "hydrocarbons in topsoil reaches" in s.text]


# Constructed summaries --------------------------------------------------------------


def _with(summary: dict[str, Any], **changes: Any) -> dict[str, Any]:
    """A deep copy with dotted keys changed: _with(s, **{"limits.lever_limit": None})."""
    out = copy.deepcopy(summary)
    for dotted, value in changes.items():
        *path, last = dotted.split(".")
        node = out
        for key in path:
            node = node[key]
        node[last] = value
    return out


def _limit(summary: dict[str, Any], current: float) -> dict[str, Any]:
    limit = dict(summary["limits"]["lever_limit"])
    limit["current"] = current
    limit["margin"] = limit["limit"] - current
    limit["margin_percent"] = 100.0 * limit["margin"] / limit["limit"]
    return _with(summary, **{"limits.lever_limit": limit, "limits.lever_value": current})


def _no_risk(summary: dict[str, Any]) -> dict[str, Any]:
    out = copy.deepcopy(summary)
    for o in out["uncertainty"]["outcomes"]:
        o["collapse_risk"], o["collapsed"] = 0.0, 0
    return out


def test_status_follows_its_rules(sprat: Case) -> None:
    scenario, summary, _ = sprat
    words = [w for w, _ in STATUS_RULES]
    assert words == ["past the limit", "near the limit", "clear", "not assessed"]
    for _, rule in STATUS_RULES:
        assert rule and "10%" in " ".join(r for _, r in STATUS_RULES)
    # 20% margin and no risk: clear.
    clear = sentences.status(_no_risk(summary), scenario)
    assert (clear.word, clear.level) == ("clear", 0)
    assert "25 kt/yr" in clear.reason
    # 20% margin but a 17.4% risk above the 5% tolerance: near.
    near = sentences.status(summary, scenario)
    assert (near.word, near.level) == ("near the limit", 1)
    assert "17.4%" in near.reason and "5%" in near.reason
    # 5% margin (under 10%), no risk: near.
    thin = sentences.status(_no_risk(_limit(summary, 118.75)), scenario)
    assert thin.level == 1 and "5%" in thin.reason
    # Past the limit: negative margin.
    over = sentences.status(_no_risk(_limit(summary, 130.0)), scenario)
    assert over.level == 2 and "130 kt/yr" in over.reason
    # Below the limit reference level: past, whatever the margin.
    status = dict(summary["limits"]["stock_status"], below_limit=True, current=200.0)
    low = sentences.status(_no_risk(_with(summary, **{"limits.stock_status": status})), scenario)
    assert low.level == 2 and "below" in low.reason
    assert isinstance(low, Status)


def test_not_assessed_without_anything_to_judge(sprat: Case) -> None:
    scenario, summary, _ = sprat
    bare = _with(
        summary,
        **{
            "limits.lever_limit": None,
            "limits.stock_status": None,
            "uncertainty.outcomes": None,
            "dynamics.collapse": None,
        },
    )
    bare_scenario = _scenario_without_reference(scenario)
    st = sentences.status(bare, bare_scenario)
    assert st.level == -1 and st.word == "not assessed"


def _scenario_without_reference(scenario: Scenario) -> Scenario:
    from dataclasses import replace

    from sitegen.scenario.records import ReferencePoints

    return replace(scenario, reference=ReferencePoints())


def test_irreversible_hysteresis(sprat: Case) -> None:
    scenario, summary, _ = sprat
    h = dict(summary["dynamics"]["hysteresis"], irreversible=True, return_value=None, distance=None)
    made = sentences.limit_sentences(_with(summary, **{"dynamics.hysteresis": h}), scenario)
    text = _topic(made, "recovery").text
    assert "cannot be recovered by the" in text and "alone" in text
    assert "125 kt/yr" in text


def test_reversible_hysteresis_names_the_return(sprat: Case) -> None:
    # Logistic with constant catch: once collapsed to 100 kt, the stock grows again only
    # when r B (1 - B/K) > H at B = 100 kt, i.e. H < 0.5 * 100 * 0.9 = 45 kt/yr.
    scenario, summary, _ = sprat
    text = _topic(sentences.limit_sentences(summary, scenario), "recovery").text
    assert "down to 45 kt/yr" in text and "80 kt/yr below" in text


def test_better_lower_wording(sprat: Case) -> None:
    scenario, summary, _ = sprat
    from dataclasses import replace

    lower = _with(summary, **{"state.better": "lower"})
    lake_like = replace(scenario, state=replace(scenario.state, better="lower"), tags=())
    made = sentences.limit_sentences(lower, lake_like)
    joined = " ".join(s.text for s in made)
    assert "flip" in joined
    # The risk itself is told in the uncertainty section (not repeated in the limits list).
    risk = _topic(sentences.section_sentences(lower, lake_like)["uncertainty"], "certainty")
    assert "collapse" not in risk.text
    assert "low stable level" in _topic(made, "largest-setting").text
    assert "overfish" not in joined  # not a fishery, and lower is better


@pytest.mark.parametrize(
    "part",
    [
        "dynamics",
        "limits",
        "uncertainty",
        "policies",
        "economics",
        "sensitivity",
        "equilibria",
        "dynamics.trajectory",
        "dynamics.hysteresis",
        "limits.lever_limit",
        "limits.sustainable_yield",
        "limits.stock_status",
    ],
)
def test_missing_parts_never_crash(sprat: Case, part: str) -> None:
    scenario, summary, _ = sprat
    broken = _with(summary, **{part: None})
    made = _all(scenario, broken)
    for s in made:
        _traceable(s)
    assert isinstance(sentences.status(broken, scenario), Status)


def test_numbers_inside_parts_may_be_none(sprat: Case) -> None:
    scenario, summary, _ = sprat
    broken = copy.deepcopy(summary)
    for section in ("limits", "dynamics"):
        for value in broken[section].values():
            if isinstance(value, dict):
                for key in value:
                    if isinstance(value[key], float):
                        value[key] = None
    for s in _all(scenario, broken):
        _traceable(s)
    sentences.status(broken, scenario)


def test_milestones_are_used_when_present(sprat: Case) -> None:
    scenario, summary, figures = sprat
    marks = {
        "name": "base",
        "start": 640.0,
        "attractor": 723.6,
        "direction": "rising",
        "milestones": [
            {"kind": "50% of the way", "level": 681.8, "time": 2.5, "settles": None},
            {"kind": "95% of the way", "level": 719.4, "time": 7.25, "settles": None},
            {"kind": "limit", "level": 250.0, "time": None, "settles": "above"},
        ],
        "end_time": 7.25,
    }
    made = sentences.limit_sentences(_with(summary, **{"dynamics.milestones": marks}), scenario)
    text = " ".join(s.text for s in made if s.topic.startswith("milestone"))
    assert "2.5 years" in text and "7.25 years" in text
    # From 640 kt the stock never falls to 250 kt: it stays above it (was "never reaches").
    assert "stays above its limit level of 250 kt" in text
    for s in made:
        _traceable(s)
        assert s.figure is None or s.figure in figures


# One stable state, nothing to tip: the airdrop and the aquifer ---------------------------


def _fewer_samples(name: str) -> Case:
    # The bundled scenario with 2,000 samples instead of 10,000, to keep the module fast.
    text = (ROOT / "scenarios" / f"{name}.toml").read_text(encoding="utf-8")
    return _case(load_text(text.replace("samples = 10000", "samples = 2000"), f"{name}.toml", name))


@pytest.fixture(scope="module")
def airdrop() -> Case:
    return _fewer_samples("corrie-airdrop")


@pytest.fixture(scope="module")
def aquifer() -> Case:
    return _fewer_samples("sandhollow-aquifer")


@pytest.mark.parametrize("name", ["airdrop", "aquifer"])
def test_no_risk_sentence_where_nothing_can_collapse(
    name: str, request: pytest.FixtureRequest
) -> None:
    # One stable state, no threshold, no fold: no sample can collapse or flip, so a risk
    # of 0% is 0 by construction. What the uncertainty does to the resting level against
    # the limit is said instead.
    scenario, summary, figures = request.getfixturevalue(name)
    made = _all(scenario, summary)
    for s in made:
        _traceable(s)
        assert s.figure is None or s.figure in figures
    assert not [s for s in made if s.topic in ("certainty", "safe-setting", "limit-spread")]
    assert not [s for s in made if "tipping point" in s.text or "collapse" in s.text]
    st = sentences.status(summary, scenario)
    assert "risk" not in st.reason and "0%" not in st.reason
    spread = _topic(sentences.section_sentences(summary, scenario)["uncertainty"], "state-spread")
    limit = scenario.reference.limit
    assert wording.quantity(limit, scenario.state.unit) in spread.text
    q = next(o for o in summary["uncertainty"]["outcomes"] if o["name"] == "base")["stable_state"]
    tail = q["p95"] if scenario.state.better == "lower" else q["p05"]
    past = tail > limit if scenario.state.better == "lower" else tail < limit
    assert ("more than 5%" in spread.text) == past
    assert ("more than 5%" in st.reason) == past and st.level == (1 if past else 0)


def test_airdrop_terminal_speed_against_the_safe_landing_speed(airdrop: Case) -> None:
    # Newton's second law with power-law drag, dv/dt = g - (c/m)(v/v1)^p, settles at the
    # terminal speed v1 (m g / c)^(1/p); it lands at the limit v_L for m = c (v_L/v1)^p / g
    # (any mechanics text, from memory).
    scenario, summary, _ = airdrop
    v = {p.name: p.value for p in scenario.parameters}
    limit = scenario.reference.limit

    def terminal(values: dict[str, float]) -> float:
        return values["v1"] * (values["m"] * values["g"] / values["c"]) ** (1 / values["p"])

    rows = _topic(sentences.section_sentences(summary, scenario)["policies"], "policies-limit")
    assert "9 m/s" in rows.text
    for policy in scenario.policies:
        speed = terminal({**v, **policy.values})
        verdict = "past it" if speed > limit else "inside it"
        name = f"\u201c{policy.name}\u201d" if "," in policy.name else policy.name
        assert f"{name}, {wording.quantity(speed, 'm/s')} ({verdict})" in rows.text
    head = sentences.headline(summary, scenario)
    assert wording.quantity(terminal(v), "m/s") in head[0].text  # 8.69 m/s, today's law
    heaviest = v["c"] * (limit / v["v1"]) ** v["p"] / v["g"]
    setting = _topic(head, "lever-setting")
    assert f"at most {wording.quantity(heaviest, 'kg')}" in setting.text
    assert "now 0 m/s" not in " ".join(s.text for s in _all(scenario, summary))


def test_cold_room_headline_leads_with_the_time_to_its_limit(cold_room: Case) -> None:
    # Newton's law of cooling (Boyce and DiPrima, sec. 2.3): t = ln((A - T0)/(A - TL))/k,
    # for today's doors and for each option's k.
    scenario, summary, _ = cold_room
    v = {p.name: p.value for p in scenario.parameters}
    gap = math.log((v["A"] - scenario.state.current) / (v["A"] - scenario.reference.limit))
    head = sentences.headline(summary, scenario)
    assert wording.duration(gap / v["k"], "h") in head[0].text
    times = _topic(head, "policies-time")
    for policy in scenario.policies:
        expected = wording.duration(gap / policy.values.get("k", v["k"]), "h")
        assert f"{expected} with {policy.name}" in times.text
    reason = sentences.status(summary, scenario).reason
    assert reason.startswith("The air temperature in the cold room")  # no bare "it"


@pytest.mark.parametrize("name", ["sprat", "cold_room", "soil", "past", "airdrop", "aquifer"])
def test_no_sentence_twice_and_no_unit_as_code(name: str, request: pytest.FixtureRequest) -> None:
    scenario, summary, _ = request.getfixturevalue(name)
    limits = [s.text for s in sentences.limit_sentences(summary, scenario)]
    sections = sentences.section_sentences(summary, scenario)
    assert len(limits) == len(set(limits))
    for lead in sections.values():
        texts = [s.text for s in lead]
        assert len(texts) == len(set(texts))
    assert not set(limits) & {s.text for s in sections["uncertainty"]}
    for s in _all(scenario, summary):
        assert not re.search(r"(?<![\d,.])1/|per yr\b|B_MSY|\s\.|\s,", s.text), s.text
        assert s.text.endswith("."), s.text
        assert s.text[0].isupper(), s.text
    assert not re.search(r"per yr\b|1/", sentences.status(summary, scenario).reason)


def test_plural_names_take_plural_verbs_and_counted_levers_read_number_of(sprat: Case) -> None:
    from dataclasses import replace

    from sitegen.pages.sentences_context import is_plural, plural_verb

    # Head nouns (common English, no source).
    assert is_plural("hunting tags issued") and is_plural("total petroleum hydrocarbons in soil")
    assert not is_plural("mass of bundle and parachute") and not is_plural("spawning biomass")
    assert not is_plural("phosphorus loading from the catchment")
    assert [plural_verb(w) for w in ("is", "has", "reaches", "lies", "settles")] == [
        "are",
        "have",
        "reach",
        "lie",
        "settle",
    ]
    scenario, summary, _ = sprat
    params = tuple(
        replace(p, label="hunting tags issued") if p.name == "H" else p for p in scenario.parameters
    )
    herd = replace(
        scenario,
        state=replace(scenario.state, name="young sprats in the bay"),
        parameters=params,
    )
    counted = _with(summary, **{"units.lever": "animal/yr"})
    text = " ".join(s.text for s in _all(herd, counted))
    assert "number of hunting tags issued" in text
    assert not re.search(r"(?<!number of )hunting tags issued (has|is)", text)
    assert "a fixed hunting tags" not in text and "today's hunting tags" not in text
    assert re.search(r"young sprats in the bay, now 640 kt, settle at", text)
    assert "keeps the young sprats in the bay stable" in text
    assert not re.search(r"young sprats in the bay (settles|has|is|falls|lies)\b", text)
