"""Behaviour of the analysis engine at the edges: non-hyperbolic and boundary equilibria, empty
regions, basins, symbolic-numeric disagreement, SymPy time-outs, and the JSON contract.

Expected values come from closed forms written here, with their source beside each check.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import mpmath
import pytest
from analysis_support import (
    analysis_of,
    load_references,
    model_of,
    relative_error,
    scenario_of,
    scenario_text,
)

from sitegen.analysis import symbolic
from sitegen.analysis.equilibria import basins_of, find_equilibria
from sitegen.analysis.records import SEMI_STABLE, STABLE, UNSTABLE

REL_TOL = 1e-10  # equilibria and fold points
WALL_LIMIT_S = 5.0  # a whole analyse call whose SymPy steps all time out
TINY_BUDGET_S = 0.01  # a SymPy budget nothing fits in
CLI_LIMIT_S = 60.0  # the subprocess, including interpreter start and imports

MODELS: dict[str, dict[str, Any]] = load_references()["models"]

SQUARE: dict[str, Any] = {"rate": "c*x^2", "min": -1, "max": 1, "parameters": {"c": {"value": 1}}}

# Coastal-sprat shape: logistic with a quota, every parameter ranged (Clark 1990 ch. 1).
SPRAT: dict[str, Any] = {
    "rate": "r*B*(1 - B/K) - H",
    "symbol": "B",
    "state_unit": "kt",
    "time_unit": "yr",
    "min": 0,
    "max": 1500,
    "lever": "H",
    "parameters": {
        "r": {"value": 0.5, "unit": "1/yr", "range": [0.3, 0.7]},
        "K": {"value": 1000, "unit": "kt", "range": [700, 1300]},
        "H": {"value": 100, "unit": "kt/yr", "range": [0, 160]},
    },
}

# sqrt(x) = x - 2 squared gives x^2 - 5x + 4 = 0: the root x = 1 is extraneous (f(1) = 2).
EXTRANEOUS: dict[str, Any] = {
    "rate": "c*sqrt(x) - x + 2",
    "min": 0,
    "max": 10,
    "parameters": {"c": {"value": 1}},
}


def close(got: float, want: float, scale: float = 1.0) -> bool:
    if want == 0:
        return abs(got) <= REL_TOL * scale
    return relative_error(got, want) <= REL_TOL


# -- non-hyperbolic, boundary and missing equilibria ------------------------------------------


def test_semi_stable_double_root_of_x_squared() -> None:
    """f = x^2 on [-1, 1] (Strogatz 2015 sec. 2.4, from memory): 0 attracts from below and
    repels above; it is semi-stable, multiplicity 2, with no return time."""
    model = model_of(SQUARE)
    found, _ = find_equilibria(model)
    assert len(found) == 1
    (zero,) = found
    assert zero.value == 0.0 and zero.stability == SEMI_STABLE and zero.multiplicity == 2
    assert zero.derivative == 0.0 and zero.return_time is None and not zero.on_boundary
    basins, thresholds = basins_of(model, found)
    assert [(b.low, b.high, b.attractor, b.exit) for b in basins] == [
        (-1.0, 0.0, 0.0, None),
        (0.0, 1.0, None, "upper end"),
    ]
    assert thresholds == [0.0]


def test_semi_stable_is_not_reported_stable_in_the_report() -> None:
    """The text report and the JSON summary say semi-stable for f = x^2."""
    from sitegen.analysis.summary import summary, to_text

    analysis = analysis_of(SQUARE)
    assert [e["stability"] for e in summary(analysis)["equilibria"]] == [SEMI_STABLE]
    assert "semi-stable" in to_text(analysis, "1")


@pytest.mark.parametrize("gap", [1e-7, 1e-9, 1e-11])
def test_two_close_equilibria_just_below_the_fold_are_not_one_double_root(gap: float) -> None:
    """Logistic with H = rK/4 - gap (Clark 1990 ch. 1, from memory): the equilibria are
    (K/2)(1 +/- sqrt(1 - 4H/(rK))), closer than one grid cell of the scan; both must be
    found (unstable below, stable above), with no semi-stable phantom between them."""
    model = model_of(MODELS["logistic-quota"], {"H": 125 - gap})
    found, _ = find_equilibria(model)
    with mpmath.workdps(30):
        r, K, H = mpmath.mpf("0.5"), mpmath.mpf(1000), mpmath.mpf(125 - gap)
        root = mpmath.sqrt(1 - 4 * H / (r * K))
        expected = [float(K / 2 * (1 - root)), float(K / 2 * (1 + root))]
    assert [e.stability for e in found] == [UNSTABLE, STABLE]
    assert close(found[0].value, expected[0]) and close(found[1].value, expected[1])


def test_no_phantom_root_between_close_roots_beside_a_transcritical() -> None:
    """Logistic with effort just below E = r/q (Schaefer 1954 model): roots 0 and
    x* = K(1 - qE/r) = 0.075 only, not the hump between them."""
    from sitegen.analysis.scan import scan_roots

    model = model_of(MODELS["logistic-effort"])
    roots = scan_roots(model, {"E": 399.994})
    assert len(roots) == 2 and roots[0] == 0.0
    assert relative_error(float(roots[1]), 5000 * (1 - 0.002 * 399.994 / 0.8)) <= 1e-9


def test_equilibrium_on_the_lower_boundary() -> None:
    """Radiocarbon decay dN/dt = -(ln 2/5730) N: 0 is a stable equilibrium at the region's end
    with f' = -lambda and return time = mean life 8266.64 yr (common practice: 'about
    8267 yr'; the 5730 yr half-life is Godwin 1962, from memory)."""
    found, _ = find_equilibria(model_of(MODELS["radiocarbon"]))
    (zero,) = found
    assert zero.value == 0.0 and zero.on_boundary and zero.stability == STABLE
    assert close(zero.derivative, -math.log(2) / 5730)
    assert close(zero.return_time, 5730 / math.log(2))
    assert round(zero.return_time) == 8267


def test_equilibrium_on_the_upper_boundary() -> None:
    """Logistic on [0, K] (Verhulst 1838): both ends are equilibria, K stable with f' = -r."""
    spec = dict(MODELS["logistic-quota"], max=1000)
    found, _ = find_equilibria(model_of(spec, {"H": 0}))
    assert [(e.value, e.on_boundary, e.stability) for e in found] == [
        (0.0, True, UNSTABLE),
        (1000.0, True, STABLE),
    ]
    assert close(found[1].derivative, -0.5)


def test_no_equilibrium_in_the_region() -> None:
    """Logistic with H = 150 > rK/4 = 125 (Clark 1990 ch. 1, from memory): f < 0 everywhere,
    so there is no equilibrium and every state collapses to the lower end."""
    model = model_of(MODELS["logistic-quota"], {"H": 150})
    found, notes = find_equilibria(model)
    assert found == [] and notes == []
    basins, thresholds = basins_of(model, found)
    assert [(b.low, b.high, b.attractor, b.exit) for b in basins] == [
        (0.0, 1500.0, None, "lower end")
    ]
    assert thresholds == []


def test_no_equilibrium_in_analysis_summary_and_report() -> None:
    """The empty case reaches the JSON summary and the text report in plain words."""
    from sitegen.analysis.summary import summary, to_text

    analysis = analysis_of(MODELS["logistic-quota"], {"H": 150})
    assert analysis.equilibria == () and summary(analysis)["equilibria"] == []
    assert "none in the region" in to_text(analysis, "yr")
    assert analysis.basins[0].exit == "lower end"


# -- basins and thresholds --------------------------------------------------------------------


def test_budworm_basins_split_at_the_middle_equilibrium() -> None:
    """Strogatz (2015) sec. 3.7 at r = 1/2, k = 10 (derived): below 2 the refuge 4 - sqrt 11,
    above it the outbreak 4 + sqrt 11; 0 is unstable but not a threshold."""
    model = model_of(MODELS["budworm"])
    found, _ = find_equilibria(model)
    basins, thresholds = basins_of(model, found)
    refuge, outbreak = 4 - math.sqrt(11), 4 + math.sqrt(11)
    assert thresholds == [2.0]
    assert len(basins) == 2
    assert basins[0].low == 0.0 and basins[0].high == 2.0 and close(basins[0].attractor, refuge)
    assert basins[1].low == 2.0 and basins[1].high == 15.0 and close(basins[1].attractor, outbreak)


def test_lake_basins_and_threshold() -> None:
    """Carpenter et al. (1999) model at b = 0.6, a = 0.095 (derived values, team notes R19)."""
    analysis = analysis_of(MODELS["lake"])
    assert len(analysis.thresholds) == 1
    assert close(analysis.thresholds[0], 0.6060542929268246)
    attractors = [b.attractor for b in analysis.basins]
    assert len(attractors) == 2
    assert close(attractors[0], 0.2775023159666816) and close(attractors[1], 0.9414433911064938)


# -- symbolic versus numeric ------------------------------------------------------------------


def test_extraneous_symbolic_root_becomes_a_warning() -> None:
    """SymPy's solve with check=False squares sqrt(x) = x - 2 and keeps the extraneous root
    x = 1 (f(1) = 2, not 0): the engine must warn and show the numeric result, x = 4."""
    model = model_of(EXTRANEOUS)
    assert float(model.f(1.0)) == 2.0  # independent check: 1 is not an equilibrium
    analysis = analysis_of(EXTRANEOUS)
    assert [e.value for e in analysis.equilibria] == [4.0]
    assert analysis.equilibria[0].closed_form is not None
    assert any("= 1 that the numeric search did not find" in w for w in analysis.warnings)
    assert analysis.warnings  # reaches the summary too
    from sitegen.analysis.summary import summary

    assert summary(analysis)["warnings"] == list(analysis.warnings)


# -- SymPy time-outs --------------------------------------------------------------------------


def test_run_steps_kills_a_slow_step_and_runs_the_next() -> None:
    """A step over budget is recorded as timed out; the worker is replaced for the rest."""
    started = time.perf_counter()
    outcomes = symbolic.run_steps(
        [
            symbolic.Step("slow", symbolic.sleep_then, (30.0, "late")),
            symbolic.Step("fast", symbolic.sleep_then, (0.0, "on time")),
        ],
        budget_s=0.3,
    )
    assert time.perf_counter() - started < WALL_LIMIT_S
    assert outcomes["slow"].status == symbolic.TIMED_OUT and outcomes["slow"].value is None
    assert "0.3 s budget" in outcomes["slow"].message
    assert outcomes["fast"].status == symbolic.OK and outcomes["fast"].value == "on time"


def test_tiny_budget_falls_back_to_numeric_with_a_note() -> None:
    """analyse with a 0.01 s budget: the symbolic steps time out, the numeric answer stands
    (Clark 1990 ch. 1 values), the notes name the time-out, and the call stays quick."""
    from sitegen.analysis.analyse import analyse

    scenario = scenario_of(MODELS["logistic-quota"])
    started = time.perf_counter()
    analysis = analyse(scenario, budget_s=TINY_BUDGET_S)
    assert time.perf_counter() - started < WALL_LIMIT_S
    timed_out = [n for n in analysis.notes if "timed out" in n]
    assert any("'equilibria' timed out" in n for n in timed_out), analysis.notes
    assert all("0.01 s budget" in n for n in timed_out)
    assert any("numeric result stands" in n for n in timed_out)
    assert analysis.method == "numeric"
    values = [e.value for e in analysis.equilibria]
    assert len(values) == 2
    assert close(values[0], 500 - 100 * math.sqrt(5)) and close(values[1], 500 + 100 * math.sqrt(5))
    (fold,) = [b for b in analysis.bifurcations if b.parameter == "H"]
    assert close(fold.parameter_value, 125.0)


def test_budworm_folds_without_closed_form_come_from_continuation() -> None:
    """Budworm folds in r: p(x) = dr/dx = 0 is a quartic with symbolic coefficients, which
    SymPy once took well over 10 s on; the engine now declines it at once (no closed form
    worth showing) and the folds come from continuation (R17, derived)."""
    started = time.perf_counter()
    analysis = analysis_of(MODELS["budworm"])
    assert time.perf_counter() - started < WALL_LIMIT_S
    assert not any("'folds:r' timed out" in n for n in analysis.notes), analysis.notes
    folds = [b for b in analysis.bifurcations if b.parameter == "r"]
    assert [round(b.parameter_value, 9) for b in folds] == [0.383970732, 0.559525012]


# -- the JSON contract ------------------------------------------------------------------------

TOP_KEYS = {"slug", "state", "parameters", "equilibria", "bifurcations", "cusps", "method"}
STATE_KEYS = {"symbol", "unit", "min", "max"}
EQUILIBRIUM_KEYS = {
    "value",
    "stability",
    "derivative",
    "return_time",
    "closed_form",
    "multiplicity",
}
BIFURCATION_KEYS = {"parameter", "kind", "parameter_value", "state_value", "closed_form"}
CUSP_KEYS = {"parameters", "state_value"}
METHOD_KEYS = {"equilibria", "notes"}


def check_contract(data: dict[str, Any]) -> None:
    """The contract keys are there (more may be), with the documented orderings."""
    assert set(data) >= TOP_KEYS
    assert set(data["state"]) >= STATE_KEYS
    assert set(data["method"]) >= METHOD_KEYS
    assert isinstance(data["parameters"], dict)
    for equilibrium in data["equilibria"]:
        assert set(equilibrium) >= EQUILIBRIUM_KEYS
    for bifurcation in data["bifurcations"]:
        assert set(bifurcation) >= BIFURCATION_KEYS
    for cusp in data["cusps"]:
        assert set(cusp) >= CUSP_KEYS
    values = [e["value"] for e in data["equilibria"]]
    assert values == sorted(values)
    order = [(b["parameter"], b["parameter_value"]) for b in data["bifurcations"]]
    assert order == sorted(order)


@pytest.fixture(scope="module")
def sprat_json() -> dict[str, Any]:
    from sitegen.analysis.analyse import analyse
    from sitegen.analysis.summary import to_json

    return json.loads(to_json(analyse(scenario_of(SPRAT, "coastal-sprat"))))


def test_json_summary_has_the_contract_keys(sprat_json: dict[str, Any]) -> None:
    check_contract(sprat_json)
    assert sprat_json["slug"] == "coastal-sprat"
    assert sprat_json["state"] == {"symbol": "B", "unit": "kt", "min": 0.0, "max": 1500.0}
    assert sprat_json["parameters"] == {"r": 0.5, "K": 1000.0, "H": 100.0}


def test_json_summary_folds_in_every_parameter(sprat_json: dict[str, Any]) -> None:
    """Clark (1990) ch. 1 (from memory): the fold is where H = rK/4, so at the current values
    it is at H = 125, r = 4H/K = 0.4 and K = 4H/r = 800, all at B = K/2 or 2H/r."""
    folds = {b["parameter"]: b for b in sprat_json["bifurcations"]}
    assert sorted(folds) == ["H", "K", "r"] and len(sprat_json["bifurcations"]) == 3
    assert all(b["kind"] == "saddle-node" for b in folds.values())
    assert close(folds["H"]["parameter_value"], 125.0) and close(folds["H"]["state_value"], 500.0)
    assert close(folds["r"]["parameter_value"], 0.4) and close(folds["r"]["state_value"], 500.0)
    assert close(folds["K"]["parameter_value"], 800.0) and close(folds["K"]["state_value"], 400.0)


def test_json_summary_equilibria(sprat_json: dict[str, Any]) -> None:
    """Clark (1990) ch. 1 (from memory): 500 -/+ 100 sqrt 5, the lower one a threshold."""
    lower, upper = sprat_json["equilibria"]
    assert close(lower["value"], 500 - 100 * math.sqrt(5)) and lower["stability"] == UNSTABLE
    assert close(upper["value"], 500 + 100 * math.sqrt(5)) and upper["stability"] == STABLE
    assert close(upper["return_time"], 2 * math.sqrt(5)) and lower["return_time"] is None
    assert lower["multiplicity"] == upper["multiplicity"] == 1


def test_cli_analyse_json(tmp_path: Path, sprat_json: dict[str, Any]) -> None:
    """``sitegen analyse FILE --json`` in a subprocess prints the same contract."""
    path = tmp_path / "coastal-sprat.toml"
    path.write_text(scenario_text(SPRAT), encoding="utf-8")
    done = subprocess.run(
        [sys.executable, "-m", "sitegen", "analyse", str(path), "--json"],
        capture_output=True,
        text=True,
        timeout=CLI_LIMIT_S,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    data = json.loads(done.stdout)
    check_contract(data)
    assert data["slug"] == "coastal-sprat"
    assert [e["value"] for e in data["equilibria"]] == [
        e["value"] for e in sprat_json["equilibria"]
    ]
    assert [(b["parameter"], b["kind"]) for b in data["bifurcations"]] == [
        (b["parameter"], b["kind"]) for b in sprat_json["bifurcations"]
    ]


def test_json_without_equilibria_is_valid_json() -> None:
    """No NaN or infinity leaks into the JSON (Gompertz slope at 0 is infinite)."""
    from sitegen.analysis.summary import to_json

    for spec, values in ((MODELS["logistic-quota"], {"H": 150}), (MODELS["gompertz-effort"], {})):
        text = to_json(analysis_of(spec, values))
        check_contract(json.loads(text))
        assert "Infinity" not in text and "NaN" not in text
