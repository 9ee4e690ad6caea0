"""Every bundled scenario checks and analyses without warnings, and its headline numbers
match an independent computation written here, each with its source named.

The bundle is built once per session (the ``demo_site`` fixture of conftest.py) and the
numbers are read from the summaries the build wrote (``<slug>.json``), so these checks
are about what users get.
Expected values are computed from the scenario's own parameter values with textbook
formulas (or mpmath), never copied from the tool's output.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import mpmath
import pytest

from sitegen.scenario.loader import load_scenario
from sitegen.scenario.records import Scenario

ROOT = Path(__file__).resolve().parent.parent
PATHS = sorted((ROOT / "scenarios").glob("*.toml"))
REL_TOL = 1e-6  # headline numbers against closed forms
FOLD_TOL = 1e-8  # folds against mpmath.findroot
SECTIONS = ("dynamics", "limits", "policies", "uncertainty", "sensitivity", "economics")


@pytest.fixture(scope="module")
def bundle(demo_site) -> dict[str, tuple[Scenario, dict]]:
    """Each bundled scenario with the summary its build wrote (``<slug>.json``)."""
    out, _report = demo_site
    return {
        path.stem: (load_scenario(path), json.loads((out / f"{path.stem}.json").read_text()))
        for path in PATHS
    }


def values(scenario: Scenario) -> dict[str, float]:
    return {p.name: p.value for p in scenario.parameters}


def row(summary: dict, name: str) -> dict:
    """The milestones of one model (base or a policy) in a summary."""
    return next(r for r in summary["dynamics"]["milestones"] if r["name"] == name)


def time_of(milestones: dict, kind: str) -> float | None:
    return next((m["time"] for m in milestones["milestones"] if m["kind"] == kind), None)


def close(actual: float | None, expected: float, tol: float = REL_TOL) -> bool:
    return actual is not None and math.isclose(actual, expected, rel_tol=tol)


def test_the_bundle_checks_analyses_and_builds_without_warnings(demo_site, bundle) -> None:
    out, report = demo_site
    assert len(bundle) >= 12
    assert report.failed == []
    assert sorted(report.built + report.reused) == sorted(bundle)
    warned = {
        name: [*scenario.warnings, *d["warnings"], *(w for k in SECTIONS for w in d[k]["warnings"])]
        for name, (scenario, d) in bundle.items()
    }
    assert {name: w for name, w in warned.items() if w} == {}
    for name, (scenario, d) in bundle.items():
        assert (out / f"{name}.html").stat().st_size > 10_000, name
        assert "milestones" in d["dynamics"], name
        if scenario.state.current is not None:
            assert d["dynamics"]["milestones"], name


def test_logistic_msy_is_r_k_over_4(bundle: dict) -> None:
    # Schaefer (1954): logistic surplus r B (1 - B/K) peaks at B = K/2 with r K / 4.
    scenario, d = bundle["coastal-sprat"]
    v = values(scenario)
    assert close(d["limits"]["sustainable_yield"]["msy"], v["r"] * v["K"] / 4)
    assert close(d["limits"]["sustainable_yield"]["state_at_msy"], v["K"] / 2)


def test_gompertz_msy_is_r_k_over_e_at_k_over_e(bundle: dict) -> None:
    # Fox (1970): Gompertz surplus r B ln(K/B) peaks at B = K/e with r K / e.
    scenario, d = bundle["brindle-shrimp"]
    v = values(scenario)
    assert close(d["limits"]["sustainable_yield"]["msy"], v["r"] * v["K"] / math.e)
    assert close(d["limits"]["sustainable_yield"]["state_at_msy"], v["K"] / math.e)


def test_pella_tomlinson_msy(bundle: dict) -> None:
    # Pella and Tomlinson (1969): (r/p) B (1 - (B/K)^p) peaks at B = K (1 + p)^(-1/p),
    # where it equals r B / (1 + p).
    scenario, d = bundle["orrin-hake"]
    v = values(scenario)
    b_msy = v["K"] * (1 + v["p"]) ** (-1 / v["p"])
    assert close(d["limits"]["sustainable_yield"]["state_at_msy"], b_msy)
    assert close(d["limits"]["sustainable_yield"]["msy"], v["r"] * b_msy / (1 + v["p"]))
    # The logistic shape of the same stock has the smaller r K / 4 (the growth law moves MSY).
    assert v["r"] * v["K"] / 4 < d["limits"]["sustainable_yield"]["msy"]


def test_terminal_velocity_for_both_drag_laws(bundle: dict) -> None:
    # Drag c (v/v1)^p balances the weight m g at v_t = v1 (m g / c)^(1/p) (any mechanics
    # text; p = 2 is the classic v_t = sqrt(m g / c) with c in N per (m/s)^2).
    scenario, d = bundle["corrie-airdrop"]
    v = values(scenario)
    for policy in scenario.policies:
        setting = {**v, **policy.values}
        expected = v["v1"] * (setting["m"] * setting["g"] / setting["c"]) ** (1 / setting["p"])
        assert close(row(d, policy.name)["attractor"], expected), policy.name
    by_p = {p.values.get("p"): row(d, p.name)["attractor"] for p in scenario.policies}
    assert close(by_p[2.0], math.sqrt(v["m"] * v["g"] / v["c"]))
    assert close(by_p[1.0], v["m"] * v["g"] / v["c"])
    # The heaviest bundle that lands at the safe speed: c (v_safe / v1)^p / g.
    limit = scenario.reference.limit
    setting = d["dynamics"]["milestones"][0]["lever_settings"][0]
    assert close(setting["lever_value"], v["c"] * (limit / v["v1"]) ** v["p"] / v["g"])


def test_cold_room_time_to_pass_the_safe_temperature(bundle: dict) -> None:
    # Newton's law of cooling T(t) = A + (T0 - A) exp(-k t), so T reaches Ts at
    # t = ln((T0 - A) / (Ts - A)) / k (Boyce & DiPrima, Elementary Differential
    # Equations, sec. 2.3).
    scenario, d = bundle["tamsin-cold-room"]
    start, safe = scenario.state.current, scenario.reference.limit
    for policy in scenario.policies:
        setting = {**values(scenario), **policy.values}
        k, air = setting["k"], setting["A"]
        expected = math.log((start - air) / (safe - air)) / k
        assert close(time_of(row(d, policy.name), "limit"), expected), policy.name


def test_soil_half_life_and_time_to_the_target(bundle: dict) -> None:
    # First-order decay C(t) = C0 exp(-(k + a) t): half-life ln 2 / (k + a) and the
    # guideline Ct (the soil's limit) reached at ln(C0 / Ct) / (k + a) (exponential decay law).
    scenario, d = bundle["wexley-depot-soil"]
    start, target = scenario.state.current, scenario.reference.limit
    for policy in scenario.policies:
        setting = {**values(scenario), **policy.values}
        rate = setting["k"] + setting["a"]
        milestones = row(d, policy.name)
        assert close(milestones["half_time"], math.log(2) / rate), policy.name
        assert close(time_of(milestones, "limit"), math.log(start / target) / rate)


def test_reservoir_equilibrium_and_time_to_95_percent(bundle: dict) -> None:
    # Well-mixed tank at constant volume, dc/dt = (Q/V)(c_in - c) - k c: equilibrium
    # c_in Q / (Q + k V), approached at the rate Q/V + k, so 95% of the way takes
    # ln(20) / (Q/V + k) (mass balance of a stirred tank; any reactor-engineering text).
    scenario, d = bundle["penhallow-reservoir"]
    v = values(scenario)
    for policy in scenario.policies:
        setting = {**v, **policy.values}
        q, volume, k = setting["Q"], setting["V"], setting["k"]
        milestones = row(d, policy.name)
        assert close(milestones["attractor"], setting["c_in"] * q / (q + k * volume))
        assert close(milestones["time_95"], math.log(20) / (q / volume + k))
    # The largest inflow concentration that keeps the reservoir at the limit.
    limit = scenario.reference.limit
    expected = limit * (v["Q"] + v["k"] * v["V"]) / v["Q"]
    assert close(d["dynamics"]["milestones"][0]["lever_settings"][0]["lever_value"], expected)


def test_aquifer_level_time_constant_and_sustainable_pumping(bundle: dict) -> None:
    # Linear water balance dh/dt = (R - Q)/Sy - k (h - h0): equilibrium h0 + (R - Q)/(Sy k),
    # time constant 1/k, half-way in ln 2 / k, 95% in ln 20 / k; the pumping that holds
    # the table at a level h_lim is R - Sy k (h_lim - h0) (conservation of mass).
    scenario, d = bundle["sandhollow-aquifer"]
    v = values(scenario)
    for policy in scenario.policies:
        setting = {**v, **policy.values}
        milestones = row(d, policy.name)
        level = setting["h0"] + (setting["R"] - setting["Q"]) / (setting["Sy"] * setting["k"])
        assert close(milestones["attractor"], level), policy.name
        assert close(milestones["half_time"], math.log(2) / setting["k"])
        assert close(milestones["time_95"], math.log(20) / setting["k"])
    limit = scenario.reference.limit
    pumping = v["R"] - v["Sy"] * v["k"] * (limit - v["h0"])
    assert close(d["dynamics"]["milestones"][0]["lever_settings"][0]["lever_value"], pumping)


def test_deer_allee_threshold_is_the_middle_root(bundle: dict) -> None:
    # Strong Allee effect (Allee 1931; cubic form, e.g. Courchamp, Berec and Gascoigne
    # 2008): r N (N/A - 1)(1 - N/K) - H = 0 has three roots; the middle one is the
    # threshold below which the herd dies out. Roots by mpmath.polyroots of the cubic
    # -(r/(A K)) N^3 + r (1/A + 1/K) N^2 - r N - H.
    scenario, d = bundle["upland-deer"]
    v = values(scenario)
    r, allee, k, h = v["r"], v["A"], v["K"], v["H"]
    roots = sorted(
        float(mpmath.re(z))
        for z in mpmath.polyroots([-r / (allee * k), r * (1 / allee + 1 / k), -r, -h])
    )
    unstable = [e["value"] for e in d["equilibria"] if e["stability"] == "unstable"]
    stable = [e["value"] for e in d["equilibria"] if e["stability"] == "stable" and e["value"] > 0]
    assert any(close(x, roots[1], 1e-9) for x in unstable)
    assert any(close(x, roots[2], 1e-9) for x in stable)


def test_lake_loading_fold_against_mpmath(bundle: dict) -> None:
    # Carpenter, Ludwig and Brock (1999): the clear state vanishes where f = f_P = 0 in
    # (P, L). Solved here by mpmath.findroot from a start near the clear state's fold.
    scenario, d = bundle["vellamere-lake"]
    v = {n: mpmath.mpf(x) for n, x in values(scenario).items()}

    def rate(p: mpmath.mpf, loading: mpmath.mpf) -> mpmath.mpf:
        x = (p / v["m"]) ** v["q"]
        return loading - v["s"] * p + v["rmax"] * x / (1 + x)

    def system(p: mpmath.mpf, loading: mpmath.mpf) -> list[mpmath.mpf]:
        return [rate(p, loading), mpmath.diff(lambda y: rate(y, loading), p)]

    folds = [b for b in d["bifurcations"] if b["parameter"] == "L"]
    assert folds
    for fold in folds:
        start = (fold["state_value"] * 1.02, fold["parameter_value"])
        p_star, l_star = mpmath.findroot(system, start)
        assert close(fold["parameter_value"], float(l_star), FOLD_TOL)
        assert close(fold["state_value"], float(p_star), FOLD_TOL)
    # The loading at which a turbid lake clears again lies below today's loading limit.
    hysteresis = d["dynamics"]["hysteresis"]
    assert hysteresis is not None and hysteresis["return_value"] is not None
    assert hysteresis["return_value"] < hysteresis["fold_value"]


def test_every_page_carries_the_cautions_of_its_field(demo_site) -> None:
    # Every page defers to the agency's procedures, local rules and qualified professionals;
    # a cold store and an airdrop add the cautions of their own fields (common practice,
    # no source: storage rules for medicines, aviation rules for drops).
    out, _ = demo_site
    general = "judgement of qualified, licensed professionals"
    for page in sorted(out.glob("*.html")):
        assert general in page.read_text("utf-8"), page.name
    assert "cold-chain rules" in (out / "tamsin-cold-room.html").read_text("utf-8")
    assert "aviation rules" in (out / "corrie-airdrop.html").read_text("utf-8")
    assert "water-quality decisions" in (out / "penhallow-reservoir.html").read_text("utf-8")


def test_no_lever_limit_outside_the_range_studied_is_printed(bundle, demo_site) -> None:
    # The airdrop has no tipping point in the bundle mass: the sampled "limits" lie far
    # outside the masses searched (an extrapolation of the search, not a result), so the
    # dossier must not print them as figures (common practice, no source: report only what
    # was computed inside the range studied).
    from sitegen.pages import wording

    out, _ = demo_site
    _, d = bundle["corrie-airdrop"]
    base = next(o for o in d["uncertainty"]["outcomes"] if o["name"] == "base")
    low, high = base["lever_search"]
    assert not low <= base["lever_limit"]["p50"] <= high  # the case this test is about
    page = (out / "corrie-airdrop.html").read_text("utf-8")
    section = page.split('id="uncertainty"')[1].split('id="assumptions"')[0]
    assert "beyond the range studied" in section
    for value in (base["lever_limit"]["p05"], base["lever_limit"]["p50"], base["safe_lever"]):
        assert wording.quantity(value, "kg") not in section
