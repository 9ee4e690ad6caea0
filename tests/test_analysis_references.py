"""The analysis engine against the outside world: published formulas and independent computations.

Reference values live in ``tests/reference_data/analysis_references.json`` with their source and
status (R numbers as in the team's reference notes) and are read by the two parametrised tests
at the top. The tests below them check closed forms from the literature and independent
reference computations done here with mpmath at 30 digits (``mpmath.findroot`` on f, or on the
extended system (f, f_x) for a fold), each with its source named beside the check.
"""

from __future__ import annotations

import itertools
import math
from functools import cache
from typing import Any

import mpmath
import pytest
import sympy
from analysis_support import (
    QUICK_BUDGET_S,
    analysis_of,
    load_references,
    model_of,
    relative_error,
    scenario_of,
)

from sitegen.analysis import symbolic
from sitegen.analysis.bifurcations import classify
from sitegen.analysis.equilibria import basins_of, find_equilibria
from sitegen.analysis.records import (
    SEMI_STABLE,
    STABLE,
    UNSTABLE,
    Analysis,
    Bifurcation,
    ParameterMap,
)

REL_TOL = 1e-10  # equilibria and fold points, relative (absolute in region widths at 0)
PRECISE_REL_TOL = 1e-25  # the 30-digit value, where every parameter is exact in binary
ZERO_SLOPE_TOL = 1e-12  # |f'(x*)| below this (1/time unit) counts as zero
DIGITS = 30  # working precision of the reference computations

REFERENCES = load_references()
MODELS: dict[str, dict[str, Any]] = REFERENCES["models"]


def analysis_named(name: str, values: dict[str, float] | None = None) -> Analysis:
    """The engine's analysis of a reference model (once per session)."""
    return analysis_of(MODELS[name], values)


def close(got: float, want: float, scale: float = 1.0, tol: float = REL_TOL) -> bool:
    """Relative closeness; at want = 0, absolute closeness in units of ``scale``."""
    if want == 0:
        return abs(got) <= tol * scale
    return relative_error(got, want) <= tol


def nearest(
    bifurcations: tuple[Bifurcation, ...],
    parameter: str,
    p: float,
    x: float,
    p_width: float,
    x_width: float,
) -> Bifurcation:
    """The reported bifurcation in ``parameter`` nearest to (p, x)."""
    candidates = [b for b in bifurcations if b.parameter == parameter]
    assert candidates, f"no bifurcation reported in {parameter}"
    return min(
        candidates,
        key=lambda b: abs(b.parameter_value - p) / p_width + abs(b.state_value - x) / x_width,
    )


def in_parameter(analysis: Analysis, parameter: str) -> list[Bifurcation]:
    return [b for b in analysis.bifurcations if b.parameter == parameter]


# -- the reference table, one parametrised test per kind of value ----------------------------


@pytest.mark.parametrize("case", REFERENCES["equilibria"], ids=lambda case: case["id"])
def test_equilibria_match_reference(case: dict[str, Any]) -> None:
    """Every equilibrium in the region, its stability, f'(x*) and return time (source in data)."""
    model = model_of(MODELS[case["model"]], case["values"])
    found, _ = find_equilibria(model)
    where = f"{case['id']} ({case['source']}; {case['status']})"
    expected = case["expected"]
    assert [e.value for e in found] == pytest.approx(
        [float(e["value"]) for e in expected], rel=1e-6, abs=1e-9
    ), where
    width = model.region[1] - model.region[0]
    for got, want in zip(found, expected, strict=True):
        assert close(got.value, float(want["value"]), width), where
        assert got.stability == want["stability"], where
        slope = float(want["derivative"])
        if math.isinf(slope):
            assert math.isinf(got.derivative) and got.derivative > 0, where
        elif slope == 0:
            assert abs(got.derivative) <= ZERO_SLOPE_TOL, where
        else:
            assert close(got.derivative, slope), where
        if want["return_time"] is None:
            assert got.return_time is None, where
        else:
            assert got.return_time is not None, where
            assert close(got.return_time, float(want["return_time"])), where
        assert got.multiplicity == want.get("multiplicity", 1), where


@pytest.mark.parametrize("case", REFERENCES["bifurcations"], ids=lambda case: case["id"])
def test_bifurcation_kind_at_reference_point(case: dict[str, Any]) -> None:
    """The classification at the published point gives the published kind (source in data)."""
    model = model_of(MODELS[case["model"]], case.get("values"))
    kind, _ = classify(
        model, case["parameter"], float(case["parameter_value"]), float(case["state_value"])
    )
    assert kind == case["kind"], f"{case['id']} ({case['source']}; {case['status']})"


@pytest.mark.parametrize("case", REFERENCES["bifurcations"], ids=lambda case: case["id"])
def test_bifurcation_found_by_analysis(case: dict[str, Any]) -> None:
    """``analyse`` finds the published point, to REL_TOL, with the published kind."""
    spec = MODELS[case["model"]]
    analysis = analysis_named(case["model"], case.get("values"))
    model = model_of(spec)
    p_low, p_high = model.ranges[case["parameter"]]
    low, high = model.region
    p, x = float(case["parameter_value"]), float(case["state_value"])
    point = nearest(analysis.bifurcations, case["parameter"], p, x, p_high - p_low, high - low)
    where = f"{case['id']} ({case['source']}; {case['status']}): got {point}"
    assert close(point.parameter_value, p, p_high - p_low), where
    assert close(point.state_value, x, high - low), where
    assert point.kind == case["kind"], where


# -- R01, R02: logistic growth with constant harvest -----------------------------------------


def test_r01_equilibria_are_the_closed_forms_to_30_digits() -> None:
    """Clark (1990) ch. 1; Murray (2002) sec. 1.6 (from memory): x = (K/2)(1 +/- sqrt(1 - 4H/(rK))).

    r = 0.5, K = 1000, H = 100 are exact in binary, so the 30-digit values must agree.
    """
    model = model_of(MODELS["logistic-quota"])
    found, _ = find_equilibria(model)
    with mpmath.workdps(DIGITS + 5):
        r, K, H = mpmath.mpf("0.5"), mpmath.mpf(1000), mpmath.mpf(100)
        root = mpmath.sqrt(1 - 4 * H / (r * K))
        expected = [K / 2 * (1 - root), K / 2 * (1 + root)]
        for got, want in zip(found, expected, strict=True):
            assert abs(mpmath.mpf(got.precise) - want) / want <= PRECISE_REL_TOL
        # Return time at the upper state: 1/(r sqrt(1 - 4H/(rK))) = 2 sqrt 5.
        assert close(found[1].return_time, float(2 * mpmath.sqrt(5)))
        # f'(x-) = +r sqrt(1 - 4H/(rK)): the lower state is the unstable threshold.
        assert close(found[0].derivative, float(r * root))


def test_r01_saddle_node_at_rk_over_4_with_closed_form() -> None:
    """Clark (1990) ch. 1; Strogatz (2015) Exercise 3.7.3 (from memory): H_c = rK/4 at K/2."""
    analysis = analysis_named("logistic-quota")
    folds = in_parameter(analysis, "H")
    assert len(folds) == 1
    fold = folds[0]
    assert fold.kind == "saddle-node"
    assert close(fold.parameter_value, 0.5 * 1000 / 4)
    assert close(fold.state_value, 1000 / 2)
    symbols = model_of(MODELS["logistic-quota"]).symbols
    assert fold.closed_form == sympy.sstr(symbols["K"] * symbols["r"] / 4)
    assert fold.counts == (2, 0)  # two equilibria below H_c, none above
    # The closed-form equilibria of the general solution are attached to both numeric roots.
    assert all(e.closed_form for e in analysis.equilibria)


def test_r02_harvest_at_msy_is_semi_stable_not_stable() -> None:
    """Schaefer (1954) (confirmed): at H = MSY = rK/4 one double root at K/2, f' = 0.

    f''(K/2) = -2r/K = -0.001 (exact); it attracts from above and repels below, so it is
    semi-stable: the tool must not call it "stable".
    """
    model = model_of(MODELS["logistic-quota"], {"H": 125})
    found, _ = find_equilibria(model)
    assert len(found) == 1
    (msy,) = found
    assert msy.stability == SEMI_STABLE
    assert msy.stability != STABLE
    assert msy.multiplicity == 2 and msy.return_time is None
    assert close(msy.value, 500.0)
    curvature = float(model.numeric(2)(msy.value, *model.args()))
    assert close(curvature, -2 * 0.5 / 1000)
    basins, thresholds = basins_of(model, found)
    above = [b for b in basins if b.low >= msy.value]
    below = [b for b in basins if b.high <= msy.value]
    assert [b.attractor for b in above] == [msy.value]  # attracts from above
    assert [b.exit for b in below] == ["lower end"]  # repels below: collapse
    assert thresholds == [msy.value]


def test_r02_analysis_and_report_say_semi_stable() -> None:
    """Schaefer (1954): the analysis record, the JSON summary and the text report agree."""
    from sitegen.analysis.summary import summary, to_text

    analysis = analysis_named("logistic-quota", {"H": 125})
    (msy,) = analysis.equilibria
    assert msy.stability == SEMI_STABLE
    assert [e["stability"] for e in summary(analysis)["equilibria"]] == [SEMI_STABLE]
    lines = [line for line in to_text(analysis, "yr").splitlines() if line.startswith("  x = ")]
    assert len(lines) == 1 and ": semi-stable" in lines[0] and ": stable" not in lines[0]


# -- R03: logistic growth with constant effort -----------------------------------------------


@pytest.mark.parametrize("effort", [0.0, 50.0, 150.0, 200.0, 300.0, 390.0])
def test_r03_equilibrium_and_recovery_time_against_effort(effort: float) -> None:
    """Schaefer (1954) (confirmed): x* = K(1 - qE/r); Murray (2002) sec. 1.6 (from memory):
    recovery time 1/(r - qE), which grows with effort (slowing down)."""
    r, K, q = 0.8, 5000.0, 0.002
    model = model_of(MODELS["logistic-effort"], {"E": effort})
    found, _ = find_equilibria(model)
    stable = [e for e in found if e.stability == STABLE]
    assert len(stable) == 1
    assert close(stable[0].value, K * (1 - q * effort / r))
    assert close(stable[0].return_time, 1 / (r - q * effort))
    assert [e.value for e in found if e.stability == UNSTABLE] == [0.0]


def test_r03_murray_recovery_ratio() -> None:
    """Murray (2002) sec. 1.6 (from memory): T_R(E)/T_R(0) = 1/(1 - qE/r) = 1.6 at qE = 0.3."""
    fished = [e for e in find_equilibria(model_of(MODELS["logistic-effort"]))[0] if e.return_time]
    unfished = [
        e
        for e in find_equilibria(model_of(MODELS["logistic-effort"], {"E": 0.0}))[0]
        if e.return_time
    ]
    assert close(fished[0].return_time / unfished[0].return_time, 1.6)


def test_r03_transcritical_at_r_over_q_exchanges_stability() -> None:
    """Schaefer (1954); E_tc = r/q = 400 (derived): past it x* < 0 is not reported, 0 is stable."""
    analysis = analysis_named("logistic-effort")
    points = in_parameter(analysis, "E")
    assert [b.kind for b in points] == ["transcritical"]
    (point,) = points
    assert close(point.parameter_value, 400.0) and point.state_value == 0.0
    symbols = model_of(MODELS["logistic-effort"]).symbols
    assert point.closed_form == sympy.sstr(symbols["r"] / symbols["q"])
    assert point.counts == (2, 1)  # below: 0 and x*; above: only 0
    for effort in (450.0, 600.0):
        found, _ = find_equilibria(model_of(MODELS["logistic-effort"], {"E": effort}))
        assert [(e.value, e.stability) for e in found] == [(0.0, STABLE)]
        assert close(found[0].derivative, 0.8 - 0.002 * effort)


# -- R09, R10: Gompertz (Fox 1970) with effort and with a quota -------------------------------


@pytest.mark.parametrize("effort", [0.0, 75.0, 150.0, 300.0, 900.0, 3000.0])
def test_r09_gompertz_effort_equilibrium_and_constant_slope(effort: float) -> None:
    """Fox (1970) model, derived: x* = K exp(-qE/r) > 0 for every finite E, f'(x*) = -r."""
    r, K, q = 0.3, 2000.0, 0.001
    found, _ = find_equilibria(model_of(MODELS["gompertz-effort"], {"E": effort}))
    positive = [e for e in found if e.value > 0]
    assert len(positive) == 1
    with mpmath.workdps(DIGITS):
        expected = float(K * mpmath.exp(-mpmath.mpf(q) * effort / r))
    assert close(positive[0].value, expected)
    assert close(positive[0].derivative, -r)
    assert close(positive[0].return_time, 1 / r)  # does not depend on effort


def test_r09_no_transcritical_and_the_infinite_slope_at_zero() -> None:
    """Fox (1970) model, derived: no bifurcation in E at finite effort; f' -> +inf at 0+."""
    from sitegen.analysis.summary import summary

    analysis = analysis_named("gompertz-effort")
    assert in_parameter(analysis, "E") == []
    zero = analysis.equilibria[0]
    assert zero.value == 0.0 and zero.on_boundary
    assert math.isinf(zero.derivative) and zero.return_time is None
    assert summary(analysis)["equilibria"][0]["derivative"] is None  # JSON has no infinity
    assert any("infinite" in note for note in analysis.notes)


def test_r10_lambert_w_branches_at_30_digits() -> None:
    """Fox (1970) model, derived; Corless et al. (1996) (from memory) for the branches:
    x = K exp(W(-H/(rK))), W_0 the upper (stable) state, W_-1 the lower (threshold)."""
    found, _ = find_equilibria(model_of(MODELS["gompertz-quota"]))
    with mpmath.workdps(DIGITS):
        r, K, H = mpmath.mpf("0.3"), mpmath.mpf(2000), mpmath.mpf(150)
        h = H / (r * K)
        lower = K * mpmath.exp(mpmath.lambertw(-h, -1).real)
        upper = K * mpmath.exp(mpmath.lambertw(-h, 0).real)
        slope_lower = -r * (1 + mpmath.lambertw(-h, -1).real)
        slope_upper = -r * (1 + mpmath.lambertw(-h, 0).real)
    assert [e.stability for e in found] == [UNSTABLE, STABLE]
    assert close(found[0].value, float(lower)) and close(found[1].value, float(upper))
    assert close(found[0].derivative, float(slope_lower))
    assert close(found[1].derivative, float(slope_upper))


def test_r10_sympy_gives_one_branch_but_analysis_finds_both() -> None:
    """SymPy 1.14 returns only the principal LambertW branch in general (measured, team notes);
    the lower root must still be found, and at today's values gets the W_-1 branch
    (Fox 1970 model; Corless et al. 1996 for the branches, from memory)."""
    model = model_of(MODELS["gompertz-quota"])
    general = symbolic.solve_for(model.rate, model.state)
    assert len(general) == 1 and general[0].has(sympy.LambertW)
    analysis = analysis_named("gompertz-quota")
    assert len(analysis.equilibria) == 2
    lower, upper = analysis.equilibria
    assert upper.closed_form == sympy.sstr(general[0])
    # At H = 150, r = 3/10, K = 2000: x = -H/(r W_-1(-H/(rK))) = -500/W_-1(-1/4).
    at_values = -500 / sympy.LambertW(-sympy.Rational(1, 4), -1)
    assert lower.closed_form == sympy.sstr(at_values)
    with mpmath.workdps(DIGITS):
        assert close(float(-500 / mpmath.lambertw(-mpmath.mpf(1) / 4, -1).real), lower.value)
    assert close(lower.value, 232.2025602903111) and lower.stability == UNSTABLE
    assert analysis.thresholds == (lower.value,)


def test_r10_fold_at_rk_over_e() -> None:
    """Fox (1970) model, derived: the fold is at H_c = rK/e (= MSY), at x = K/e."""
    analysis = analysis_named("gompertz-quota")
    (fold,) = in_parameter(analysis, "H")
    assert fold.kind == "saddle-node"
    assert close(fold.parameter_value, 0.3 * 2000 / math.e)
    assert close(fold.state_value, 2000 / math.e)
    assert fold.closed_form is not None and "exp(-1)" in fold.closed_form


# -- R12, R13, R14: strong Allee effect -------------------------------------------------------


def test_r12_basins_separated_by_the_allee_threshold() -> None:
    """Courchamp et al. (2008) ch. 2 (from memory), derived: below A the stock dies out,
    above it tends to K; A is the threshold."""
    model = model_of(MODELS["allee"])
    found, _ = find_equilibria(model)
    basins, thresholds = basins_of(model, found)
    assert thresholds == [20.0]
    assert [(b.low, b.high, b.attractor) for b in basins] == [
        (0.0, 20.0, 0.0),
        (20.0, 150.0, 100.0),
    ]


def allee_harvest_fold_reference(x0: float, h0: float) -> tuple[mpmath.mpf, mpmath.mpf]:
    """Independent reference: (x, H) with f = f_x = 0 by mpmath.findroot at 30 digits."""
    with mpmath.workdps(DIGITS):
        r, A, K = mpmath.mpf("0.5"), mpmath.mpf(20), mpmath.mpf(100)

        def f(x: mpmath.mpf, h: mpmath.mpf) -> mpmath.mpf:
            return r * x * (x / A - 1) * (1 - x / K) - h

        def f_x(x: mpmath.mpf, h: mpmath.mpf) -> mpmath.mpf:
            return mpmath.diff(lambda y: f(y, h), x)

        x, h = mpmath.findroot([f, f_x], (mpmath.mpf(x0), mpmath.mpf(h0)))
        return +x, +h


def test_r13_harvest_fold_against_mpmath_and_the_closed_form() -> None:
    """Independent reference computation (mpmath, 30 digits) of the fold of the Allee model
    with harvest, and the derived closed form H_c = 12 + 28 sqrt(21)/9 (team notes R13)."""
    x_c, h_c = allee_harvest_fold_reference(70, 26)
    with mpmath.workdps(DIGITS):
        assert abs(h_c - (12 + 28 * mpmath.sqrt(21) / 9)) <= mpmath.mpf(10) ** -25
        assert abs(x_c - (40 + 20 * mpmath.sqrt(21) / 3)) <= mpmath.mpf(10) ** -25
    analysis = analysis_named("allee-quota")
    harvest_side = [b for b in in_parameter(analysis, "H") if b.parameter_value > 0]
    assert len(harvest_side) == 1
    assert close(harvest_side[0].parameter_value, float(h_c))
    assert close(harvest_side[0].state_value, float(x_c))
    assert harvest_side[0].counts == (2, 0)


def test_r13_stocking_side_fold_is_reported_at_negative_harvest() -> None:
    """Team notes R13 (derived): the cubic's discriminant also vanishes at
    H = 12 - 28 sqrt(21)/9 < 0, a fold at x < A on the stocking side."""
    x_s, h_s = allee_harvest_fold_reference(9, -2)
    analysis = analysis_named("allee-quota")
    stocking = [b for b in in_parameter(analysis, "H") if b.parameter_value < 0]
    assert len(stocking) == 1
    assert stocking[0].kind == "saddle-node"
    assert close(stocking[0].parameter_value, float(h_s))
    assert close(stocking[0].state_value, float(x_s)) and stocking[0].state_value < 20


def test_r13_no_stocking_fold_when_the_range_is_harvest_only() -> None:
    """With H in [0, 40] only the harvest limit H_c is reported (team notes R13, derived)."""
    spec = dict(MODELS["allee-quota"])
    spec["parameters"] = dict(spec["parameters"], H={"value": 15, "unit": "t/yr", "range": [0, 40]})
    analysis = analysis_of(spec)
    assert [round(b.parameter_value, 9) for b in in_parameter(analysis, "H")] == [26.256902162]


def test_r13_equilibria_at_h15_drop_the_negative_root_and_zero() -> None:
    """Team notes R13 (derived): at H = 15 the root -14.94 is not biological and 0 is no
    longer an equilibrium (f(0) = -H), so below the threshold the stock hits 0."""
    model = model_of(MODELS["allee-quota"])
    found, _ = find_equilibria(model)
    assert len(found) == 2 and all(e.value > 0 for e in found)
    basins, _ = basins_of(model, found)
    assert basins[0].exit == "lower end" and basins[0].attractor is None


def test_r14_effort_collapse_is_a_fold_not_a_transcritical() -> None:
    """Team notes R14 (derived): F_c = r(K - A)^2/(4AK) = 0.4 at x = (A + K)/2 = 60; the
    origin stays an equilibrium and stays stable (f'(0) = -r - F)."""
    analysis = analysis_named("allee-effort")
    points = in_parameter(analysis, "F")
    assert [b.kind for b in points] == ["saddle-node"]
    assert close(points[0].parameter_value, 0.5 * 80**2 / (4 * 20 * 100))
    assert close(points[0].state_value, 60.0)
    assert points[0].closed_form is not None
    for effort in (0.0, 0.6, 1.0):
        found, _ = find_equilibria(model_of(MODELS["allee-effort"], {"F": effort}))
        assert found[0].value == 0.0 and found[0].stability == STABLE
        assert close(found[0].derivative, -0.5 - effort)


# -- R15, R16, R17: spruce budworm ------------------------------------------------------------


def test_r16_budworm_equilibria_are_the_exact_roots() -> None:
    """Strogatz (2015) sec. 3.7 model, derived: (x - 2)(x^2 - 8x + 5) = 0 at r = 1/2, k = 10;
    f' = -11/50 -/+ sqrt(11)/200 at 4 -/+ sqrt 11, 7/50 at 2, 1/2 at 0. All exact in binary."""
    found, _ = find_equilibria(model_of(MODELS["budworm"]))
    with mpmath.workdps(DIGITS + 5):
        s = mpmath.sqrt(11)
        values = [mpmath.mpf(0), 4 - s, mpmath.mpf(2), 4 + s]
        slopes = [
            mpmath.mpf(1) / 2,
            -mpmath.mpf(11) / 50 + s / 200,
            mpmath.mpf(7) / 50,
            -mpmath.mpf(11) / 50 - s / 200,
        ]
        for got, value, slope in zip(found, values, slopes, strict=True):
            assert abs(mpmath.mpf(got.precise) - value) <= PRECISE_REL_TOL * max(1, abs(value))
            assert close(got.derivative, float(slope))
    assert [e.stability for e in found] == [UNSTABLE, STABLE, UNSTABLE, STABLE]


def budworm_folds_in_r_at_k10() -> list[tuple[float, float]]:
    """Independent reference: roots x > 1 of x^3 - 5x^2 + 5 (k(x) = 10), r = 2x^3/(1 + x^2)^2."""
    with mpmath.workdps(DIGITS):
        roots = [z.real for z in mpmath.polyroots([1, -5, 0, 5], extraprec=60) if z.real > 1]
        return sorted((float(2 * x**3 / (1 + x**2) ** 2), float(x)) for x in roots)


def test_r17_folds_in_r_at_k10_against_polynomial_roots() -> None:
    """Ludwig et al. (1978); Strogatz (2015) sec. 3.7, derived: folds at r = 0.38397..., 0.55952...
    with three positive equilibria between them (counts beside each fold)."""
    analysis = analysis_named("budworm")
    folds = in_parameter(analysis, "r")
    assert len(folds) == 2
    for fold, (r_ref, x_ref) in zip(folds, budworm_folds_in_r_at_k10(), strict=True):
        assert fold.kind == "saddle-node"
        assert close(fold.parameter_value, r_ref) and close(fold.state_value, x_ref)
    assert folds[0].counts == (2, 4) and folds[1].counts == (4, 2)  # 0 plus 1 or 3 positive


def test_r17_folds_in_k_at_r055_against_polynomial_roots() -> None:
    """Derived on the curves of Ludwig et al. (1978): at r = 0.55 the roots x > 1 of
    0.55x^4 - 2x^3 + 1.1x^2 + 0.55 give the folds k = 2x^3/(x^2 - 1)."""
    with mpmath.workdps(DIGITS):
        c = [mpmath.mpf("0.55"), -2, mpmath.mpf("1.1"), 0, mpmath.mpf("0.55")]
        roots = [z.real for z in mpmath.polyroots(c, extraprec=60) if abs(z.imag) < 1e-20]
        expected = sorted((float(2 * x**3 / (x**2 - 1)), float(x)) for x in roots if x > 1)
    analysis = analysis_named("budworm", {"r": 0.55})
    folds = in_parameter(analysis, "k")
    assert len(folds) == len(expected) == 2
    for fold, (k_ref, x_ref) in zip(folds, expected, strict=True):
        assert close(fold.parameter_value, k_ref) and close(fold.state_value, x_ref)


def test_r17_only_one_finite_fold_in_k_at_r_one_half() -> None:
    """Team notes R17 (derived): for r <= 1/2 only one fold in k is finite; at r = 1/2,
    2x^3/(1 + x^2)^2 = 1/2 factors as (x - 1)(x^3 - 3x^2 - x - 1), and x = 1 gives k = inf."""
    with mpmath.workdps(DIGITS):
        roots = [
            z.real for z in mpmath.polyroots([1, -3, -1, -1], extraprec=60) if abs(z.imag) < 1e-20
        ]
        (x_ref,) = roots
        k_ref = float(2 * x_ref**3 / (x_ref**2 - 1))
    folds = in_parameter(analysis_named("budworm"), "k")
    assert len(folds) == 1
    assert close(folds[0].parameter_value, k_ref) and close(folds[0].state_value, float(x_ref))


@cache
def map_of(name: str, x: str, y: str) -> ParameterMap:
    """The engine's two-parameter map of a reference model (once per session)."""
    from sitegen.analysis.maps import parameter_map

    return parameter_map(model_of(MODELS[name]), x, y)


def curve_points(computed: ParameterMap) -> list[tuple[float, float, float]]:
    """(state, x parameter, y parameter) of every traced fold-curve point."""
    points = [
        (float(s), float(u), float(v))
        for curve in computed.fold_curves
        for s, u, v in zip(curve.state_values, curve.x_values, curve.y_values, strict=True)
    ]
    assert len(points) >= 20, "the map traced (almost) no fold curve"
    return points


def test_r15_budworm_fold_curves_are_the_parametric_curves() -> None:
    """Strogatz (2015) sec. 3.7; Murray (2002) sec. 1.2 (confirmed): every fold point lies on
    r(x) = 2x^3/(1 + x^2)^2, k(x) = 2x^3/(x^2 - 1) (absolute error in range widths)."""
    model = model_of(MODELS["budworm"])
    (k_low, k_high), (r_low, r_high) = model.ranges["k"], model.ranges["r"]
    for x, k, r in curve_points(map_of("budworm", "k", "r")):
        assert x > 1
        assert abs(r - 2 * x**3 / (1 + x**2) ** 2) <= REL_TOL * (r_high - r_low)
        assert abs(k - 2 * x**3 / (x**2 - 1)) <= REL_TOL * (k_high - k_low)


def test_r18_lake_fold_curve_is_the_parametric_curve() -> None:
    """Carpenter et al. (1999) model, q = 2 (team notes R18, derived): every fold point lies on
    b(x) = 2x/(1 + x^2)^2, a(x) = b(x) x - x^2/(1 + x^2)."""
    model = model_of(MODELS["lake"])
    (a_low, a_high), (b_low, b_high) = model.ranges["a"], model.ranges["b"]
    for x, a, b in curve_points(map_of("lake", "a", "b")):
        assert abs(b - 2 * x / (1 + x**2) ** 2) <= REL_TOL * (b_high - b_low)
        assert abs(a - (b * x - x**2 / (1 + x**2))) <= REL_TOL * (a_high - a_low)


def cusp_near(cusps: Any, names: tuple[str, str], point: tuple[float, float], state: float) -> bool:
    return any(
        close(c.parameters[names[0]], point[0], tol=REL_TOL)
        and close(c.parameters[names[1]], point[1], tol=REL_TOL)
        and close(c.state_value, state, tol=REL_TOL)
        for c in cusps
    )


def test_r15_budworm_cusp_from_the_map() -> None:
    """Ludwig et al. (1978); Strogatz (2015) sec. 3.7; Murray (2002) sec. 1.2 (confirmed):
    the cusp of the fold curves is at (k, r) = (3 sqrt 3, 3 sqrt 3/8), x = sqrt 3."""
    computed = map_of("budworm", "k", "r")
    s3 = math.sqrt(3)
    assert cusp_near(computed.cusps, ("k", "r"), (3 * s3, 3 * s3 / 8), s3), computed.cusps
    assert len(computed.fold_curves) >= 1


def test_r18_lake_cusp_from_the_map() -> None:
    """Carpenter et al. (1999) model; Maeler et al. (2003) (confirmed): b = 3 sqrt 3/8 for q = 2;
    a_c = (q - 1)^2/(4q) = 1/8 at x_c = 1/sqrt 3 (derived)."""
    computed = map_of("lake", "a", "b")
    s3 = math.sqrt(3)
    assert cusp_near(computed.cusps, ("a", "b"), (1 / 8, 3 * s3 / 8), 1 / s3), computed.cusps


def test_r15_cusp_in_the_analysis_summary() -> None:
    """The cusp of a [[maps]] pair reaches the JSON summary (Strogatz 2015 sec. 3.7)."""
    from sitegen.analysis.analyse import analyse
    from sitegen.analysis.summary import summary

    spec = dict(MODELS["budworm"], maps=[["k", "r"]])
    analysis = analyse(scenario_of(spec), budget_s=QUICK_BUDGET_S)
    s3 = math.sqrt(3)
    assert cusp_near(analysis.cusps, ("k", "r"), (3 * s3, 3 * s3 / 8), s3), analysis.cusps
    cusps = summary(analysis)["cusps"]
    assert len(cusps) == 1 and set(cusps[0]["parameters"]) == {"k", "r"}


# -- R19 and the lake with q = 3: folds in the loading ----------------------------------------


def lake_folds_in_a(q: int, b: str) -> list[tuple[float, float]]:
    """Independent reference: folds of a - b x + x^q/(1 + x^q) in a, by mpmath at 30 digits.

    f_x = 0 is -b + q x^(q-1)/(1 + x^q)^2 = 0 (one variable); a = b x - x^q/(1 + x^q) there.
    Both roots are bracketed by a sign scan and found with the Anderson-Bjorck solver.
    """
    with mpmath.workdps(DIGITS):
        loss = mpmath.mpf(b)

        def f_x(x: mpmath.mpf) -> mpmath.mpf:
            return -loss + q * x ** (q - 1) / (1 + x**q) ** 2

        grid = [mpmath.mpf(k) / 200 for k in range(1, 800)]
        folds = []
        for left, right in itertools.pairwise(grid):
            if f_x(left) * f_x(right) < 0:
                x = mpmath.findroot(f_x, (left, right), solver="anderson")
                folds.append((float(loss * x - x**q / (1 + x**q)), float(x)))
        return sorted(folds)


def test_r19_lake_reference_values_reproduced_by_mpmath() -> None:
    """Team notes R19 (derived) reproduced independently: a_low, a_high at b = 0.6 and b = 0.45."""
    want_06 = [(0.08972441837399073, 0.7875529384989432), (0.1020918438251307, 0.4084468617920715)]
    want_045 = [
        (-0.05251151199588767, 1.100905623766998),
        (0.05369514792960103, 0.2552814392965923),
    ]
    for (got_a, got_x), (a, x) in zip(lake_folds_in_a(2, "0.6"), want_06, strict=True):
        assert close(got_a, a, tol=1e-15) and close(got_x, x, tol=1e-15)
    for (got_a, got_x), (a, x) in zip(lake_folds_in_a(2, "0.45"), want_045, strict=True):
        assert close(got_a, a, tol=1e-15) and close(got_x, x, tol=1e-15)


def test_r19_irreversible_lake_has_a_fold_at_negative_loading() -> None:
    """Carpenter et al. (1999) (from memory): for q = 2, b < 1/2 is irreversible; at b = 0.45
    the clear state comes back only at a negative loading (derived value -0.0525...)."""
    folds = in_parameter(analysis_named("lake-irreversible"), "a")
    assert len(folds) == 2
    assert folds[0].parameter_value < 0 < folds[1].parameter_value
    # Below a_low nothing rests in the region (the clear state has moved to x < 0); between
    # a_low and 0 the threshold and the turbid state; between 0 and a_high all three.
    assert folds[0].counts == (0, 2) and folds[1].counts == (3, 1)


def test_r18_folds_in_b_at_fixed_loading_against_mpmath() -> None:
    """Carpenter et al. (1999) model, q = 2 (team notes R18, derived): on the fold curve
    a(x) = x^2(1 - x^2)/(1 + x^2)^2, so the folds in b at a = 0.095 are b = 2x/(1 + x^2)^2 at
    the roots of a(x) = 0.095 (independent reference computation, mpmath at 30 digits)."""
    with mpmath.workdps(DIGITS):
        loading = mpmath.mpf("0.095")

        def on_curve(x: mpmath.mpf) -> mpmath.mpf:
            return x**2 * (1 - x**2) / (1 + x**2) ** 2 - loading

        grid = [mpmath.mpf(k) / 500 for k in range(1, 500)]
        roots = [
            mpmath.findroot(on_curve, (u, v), solver="anderson")
            for u, v in itertools.pairwise(grid)
            if on_curve(u) * on_curve(v) < 0
        ]
        expected = sorted((float(2 * x / (1 + x**2) ** 2), float(x)) for x in roots)
    folds = in_parameter(analysis_named("lake"), "b")
    assert len(folds) == len(expected) == 2
    for fold, (b_ref, x_ref) in zip(folds, expected, strict=True):
        assert fold.kind == "saddle-node"
        assert close(fold.parameter_value, b_ref) and close(fold.state_value, x_ref)


LAKE_Q3: dict[str, Any] = {
    "rate": "a - b*x + x^3/(1 + x^3)",
    "min": 0,
    "max": 3,
    "parameters": {"a": {"value": 0.22, "range": [0, 0.4]}, "b": {"value": 0.7}},
}


def test_lake_q3_folds_against_mpmath() -> None:
    """Nutrient recycling with q = 3 (Carpenter et al. 1999 model with a steeper Hill term):
    no simple closed form for the folds; independent reference computation by mpmath."""
    expected = lake_folds_in_a(3, "0.7")
    assert len(expected) == 2
    folds = in_parameter(analysis_of(LAKE_Q3), "a")
    assert [b.kind for b in folds] == ["saddle-node", "saddle-node"]
    for fold, (a_ref, x_ref) in zip(folds, expected, strict=True):
        assert close(fold.parameter_value, a_ref) and close(fold.state_value, x_ref)


def test_lake_q3_equilibria_against_mpmath() -> None:
    """Independent reference: mpmath.findroot on f from each numeric root's neighbourhood,
    with the count checked against the sign changes of f on a fine 30-digit grid."""
    found, _ = find_equilibria(model_of(LAKE_Q3))
    with mpmath.workdps(DIGITS):
        a, b = mpmath.mpf("0.22"), mpmath.mpf("0.7")

        def f(x: mpmath.mpf) -> mpmath.mpf:
            return a - b * x + x**3 / (1 + x**3)

        grid = [mpmath.mpf(k) / 1000 for k in range(3001)]
        brackets = [(u, v) for u, v in itertools.pairwise(grid) if f(u) * f(v) < 0]
        roots = [mpmath.findroot(f, bracket, solver="anderson") for bracket in brackets]
    assert len(found) == len(roots) == 3
    for got, root in zip(found, roots, strict=True):
        assert close(got.value, float(root))


# -- R20, R21: normal forms -------------------------------------------------------------------


def test_r21_sub_and_supercritical_pitchforks_differ_in_f_xxx() -> None:
    """Strogatz (2015) sec. 3.4: supercritical when f_xxx < 0 (branches above, stable),
    subcritical when f_xxx > 0 (branches below, unstable)."""
    super_ = in_parameter(analysis_named("supercritical-pitchfork"), "r")
    sub = in_parameter(analysis_named("subcritical-pitchfork"), "r")
    assert [b.kind for b in super_] == [b.kind for b in sub] == ["pitchfork"]
    assert super_[0].derivatives["f_xxx"] < 0 < sub[0].derivatives["f_xxx"]
    assert super_[0].more_equilibria == "above" and sub[0].more_equilibria == "below"


def test_r21_quintic_bistable_window() -> None:
    """Strogatz (2015) sec. 3.4 (confirmed; r_s = -1/4 from memory, derived): folds at
    r_s = -1/4 at x = +/-1/sqrt 2, subcritical pitchfork at 0, bistable for r_s < r < 0."""
    points = in_parameter(analysis_named("quintic-pitchfork"), "r")
    assert [b.kind for b in points] == ["saddle-node", "saddle-node", "pitchfork"]
    assert sorted(b.state_value for b in points[:2]) == pytest.approx(
        [-1 / math.sqrt(2), 1 / math.sqrt(2)], rel=REL_TOL
    )
    assert points[2].derivatives["f_xxx"] > 0
    found, _ = find_equilibria(model_of(MODELS["quintic-pitchfork"]))
    assert sum(e.stability == STABLE for e in found) == 3  # 0 and the two large branches
