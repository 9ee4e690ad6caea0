"""One-parameter continuation: branches, folds and branch points against published values.

Reference values are copied from the project's reference list (R-numbers); each check names its
source and that source's status beside it. Models are dimensionless (unit "1") so that any
additive term is consistent.
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from continuation_support import make_model, relative

from sitegen.analysis.continuation import (
    SpecialPoint,
    StepControl,
    continue_equilibria,
    null_tangent,
    trace_curve,
)
from sitegen.model.model import Model

REL_TOL = 1e-10  # folds and branch points, relative
ABS_TOL = 1e-12  # values that are exactly zero (normal forms at the origin)
RESIDUAL_TOL = 1e-9  # |f| on branch points, relative to the largest term of f
SEPARATE_TOL = 1e-3  # a special point must be at least this far from a kink (no false folds)


def only(points: tuple[SpecialPoint, ...], turning: bool) -> list[SpecialPoint]:
    return [p for p in points if p.turning is turning]


def branch_residuals(model: Model, parameter: str) -> float:
    """Largest |f| / (largest |term| scale) over all branch points."""
    branches, _ = continue_equilibria(model, parameter)
    index = model.parameters.index(parameter)
    worst = 0.0
    for branch in branches:
        args = list(model.args())
        args[index] = branch.parameter_values
        f = model.numeric()(branch.state_values, *args)
        scale = np.abs(model.numeric(1)(branch.state_values, *args)) * np.ptp(model.region)
        scale += np.abs(model.numeric(0, (parameter,))(branch.state_values, *args)) * np.ptp(
            model.ranges[parameter]
        )
        worst = max(worst, float(np.max(np.abs(f) / scale)))
    return worst


# -- normal forms (Strogatz 2015) -------------------------------------------------------------


def test_saddle_node_normal_form() -> None:
    # R20: f = r + x^2, fold at (r, x) = (0, 0); x = -sqrt(-r) stable. Strogatz (2015) §3.1
    # (from memory; normal form confirmed).
    model = make_model("r + x^2", {"r": (-0.25, (-1, 1))}, -2, 2)
    branches, points = continue_equilibria(model, "r")
    assert len(points) == 1 and points[0].turning
    assert abs(points[0].parameter_value) <= ABS_TOL and abs(points[0].state_value) <= ABS_TOL
    (branch,) = branches
    assert np.all(branch.parameter_values <= 1e-12)  # R20: no equilibria for r > 0
    assert np.array_equal(branch.stable, branch.state_values < 0)


def test_transcritical_normal_form() -> None:
    # R20: f = r x - x^2: equilibria 0 and r exchange stability at r = 0 (a branch point, the
    # parameter does not turn). Strogatz (2015) §3.2 (from memory; normal form confirmed).
    model = make_model("r*x - x^2", {"r": (0.3, (-1, 1))}, -2, 2)
    branches, points = continue_equilibria(model, "r")
    assert len(points) == 1 and not points[0].turning
    assert abs(points[0].parameter_value) <= ABS_TOL and abs(points[0].state_value) <= ABS_TOL
    assert len(branches) == 2
    for branch in branches:
        zero = np.all(np.abs(branch.state_values) <= ABS_TOL)
        r = branch.parameter_values
        # R20: f'(0) = r, f'(r) = -r, so 0 is stable for r < 0 and x = r for r > 0.
        expected = r < 0 if zero else r > 0
        assert np.array_equal(branch.stable[np.abs(r) > 1e-9], expected[np.abs(r) > 1e-9])


@pytest.mark.parametrize(("rate", "parabola_stable"), [("r*x - x^3", True), ("r*x + x^3", False)])
def test_pitchforks(rate: str, parabola_stable: bool) -> None:
    # R21: supercritical r x - x^3 (x = ±sqrt(r) stable, f' = -2r) and subcritical r x + x^3
    # (±sqrt(-r) unstable); the branch x = 0 meets the parabola at (0, 0). Strogatz (2015) §3.4
    # (from memory; normal forms confirmed).
    model = make_model(rate, {"r": (0.25, (-1, 1))}, -2, 2)
    branches, points = continue_equilibria(model, "r")
    assert len(points) == 1 and not points[0].turning
    assert abs(points[0].parameter_value) <= ABS_TOL and abs(points[0].state_value) <= ABS_TOL
    parabola = [b for b in branches if np.ptp(b.state_values) > 0.5]
    assert len(parabola) == 1
    away = np.abs(parabola[0].state_values) > 1e-6
    assert np.all(parabola[0].stable[away] == parabola_stable)


def test_quintic_pitchfork_folds() -> None:
    # R21: f = r x + x^3 - x^5: folds of the nonzero branches at r_s = -1/4, x = ±1/sqrt(2),
    # pitchfork at (0, 0). Strogatz (2015) §3.4 (normal form confirmed; r_s from memory and
    # derived).
    model = make_model("r*x + x^3 - x^5", {"r": (-0.1, (-1, 1))}, -1.5, 1.5)
    _, points = continue_equilibria(model, "r")
    folds = only(points, True)
    assert len(folds) == 2
    for fold in folds:
        assert relative(fold.parameter_value, -0.25) <= REL_TOL
        assert relative(abs(fold.state_value), 0.7071067811865475) <= REL_TOL
    assert {round(f.state_value, 6) for f in folds} == {-0.707107, 0.707107}
    (pitchfork,) = only(points, False)
    assert abs(pitchfork.parameter_value) <= ABS_TOL and abs(pitchfork.state_value) <= ABS_TOL


# -- harvested stocks -------------------------------------------------------------------------


def test_logistic_constant_harvest_fold() -> None:
    # R01/R02: fold at H_c = rK/4 = 125 (exact), x = K/2 = 500 (exact). Schaefer (1954)
    # (confirmed); Clark (1990) ch. 1 and Murray (2002) §1.6 (from memory).
    model = make_model(
        "r*x*(1 - x/K) - H", {"r": (0.5, None), "K": (1000, None), "H": (100, (0, 160))}, 0, 1500
    )
    branches, points = continue_equilibria(model, "H")
    (fold,) = points
    assert fold.turning
    assert relative(fold.parameter_value, 125.0) <= REL_TOL
    assert relative(fold.state_value, 500.0) <= REL_TOL
    assert branch_residuals(model, "H") <= RESIDUAL_TOL
    (branch,) = branches
    # R01: the upper equilibrium is stable, the lower one unstable.
    assert np.array_equal(
        branch.stable[branch.state_values != 500.0],
        branch.state_values[branch.state_values != 500.0] > 500.0,
    )


def test_logistic_effort_branch_point() -> None:
    # R03: transcritical at E_tc = r/q = 400 (exact), x = 0, at the region's lower end.
    # Schaefer (1954) (confirmed).
    model = make_model(
        "r*x*(1 - x/K) - q*E*x",
        {"r": (0.8, None), "K": (5000, None), "q": (0.002, None), "E": (150, (0, 600))},
        0,
        7500,
    )
    branches, points = continue_equilibria(model, "E")
    (point,) = points
    assert not point.turning
    assert relative(point.parameter_value, 400.0) <= REL_TOL
    assert abs(point.state_value) <= ABS_TOL
    assert len(branches) == 2
    # R03: x* = K(1 - qE/r) = 3125 at E = 150, stable with f' = -0.5.
    upper = next(b for b in branches if np.max(b.state_values) > 1.0)
    order = np.argsort(upper.parameter_values)  # monotone in E: no fold on this branch
    at = np.interp(150.0, upper.parameter_values[order], upper.state_values[order])
    assert abs(at - 3125.0) / 3125.0 <= 1e-3  # chord between branch points, not polished
    assert np.all(upper.stable[upper.state_values > 1e-6])


def test_allee_constant_harvest_folds() -> None:
    # R13: H_c = 12 + 28 sqrt(21)/9 = 26.25690216208484 at x_c = 70.55050463303893, and the
    # stocking-side fold at H = -2.256902162084836 (x_c' = (A + K - D)/3). Model as in
    # Courchamp, Berec & Gascoigne (2008) ch. 2 (confirmed form); values derived.
    model = make_model(
        "r*x*(x/A - 1)*(1 - x/K) - H",
        {"r": (0.5, None), "A": (20, None), "K": (100, None), "H": (15, (-5, 40))},
        0,
        150,
    )
    _, points = continue_equilibria(model, "H")
    assert [p.turning for p in points] == [True, True]
    low, high = points
    assert relative(high.parameter_value, 26.25690216208484) <= REL_TOL
    assert relative(high.state_value, 70.55050463303893) <= REL_TOL
    assert relative(low.parameter_value, -2.256902162084836) <= REL_TOL
    assert relative(low.state_value, (120 - math.sqrt(8400)) / 3) <= REL_TOL


def test_allee_effort_fold() -> None:
    # R14: F_c = r (K - A)^2 / (4AK) = 0.4 (exact) at x = 60 (exact): a fold, not a branch
    # point; the origin stays stable. Derived from the R12 model.
    model = make_model(
        "r*x*(x/A - 1)*(1 - x/K) - F*x",
        {"r": (0.5, None), "A": (20, None), "K": (100, None), "F": (0.3, (0, 0.6))},
        0,
        150,
    )
    branches, points = continue_equilibria(model, "F")
    (fold,) = points
    assert fold.turning
    assert relative(fold.parameter_value, 0.4) <= REL_TOL
    assert relative(fold.state_value, 60.0) <= REL_TOL
    origin = next(b for b in branches if np.all(np.abs(b.state_values) <= ABS_TOL))
    assert np.all(origin.stable)  # R14: f'(0) = -r - F < 0


def test_gompertz_harvest_fold_and_undefined_end() -> None:
    # R10: f = r x ln(K/x) - H, fold at H_c = rK/e = 220.7276647028654, x = K/e =
    # 735.7588823428846. Fox (1970) model; derived. log(K/x) is undefined at x = 0.
    model = make_model(
        "r*x*log(K/x) - H", {"r": (0.3, None), "K": (2000, None), "H": (150, (0, 300))}, 0, 3000
    )
    _, points = continue_equilibria(model, "H")
    (fold,) = points
    assert fold.turning
    assert relative(fold.parameter_value, 220.7276647028654) <= REL_TOL
    assert relative(fold.state_value, 735.7588823428846) <= REL_TOL


def test_gompertz_effort_has_no_branch_point() -> None:
    # R09: x* = K exp(-qE/r) > 0 for every finite E, f'(x*) = -r: no transcritical point.
    # Fox (1970) model; derived.
    model = make_model(
        "r*x*log(K/x) - q*E*x",
        {"r": (0.3, None), "K": (2000, None), "q": (0.001, None), "E": (150, (0, 3000))},
        0,
        3000,
    )
    branches, points = continue_equilibria(model, "E")
    assert points == ()
    (branch,) = branches
    expected = 2000 * np.exp(-0.001 * branch.parameter_values / 0.3)
    assert np.max(np.abs(branch.state_values - expected) / expected) <= 1e-9
    assert np.all(branch.stable)


# -- insect outbreak and lake -----------------------------------------------------------------

BUDWORM = "r*x*(1 - x/k) - x^2/(1 + x^2)"


def test_budworm_folds_in_r_at_k_10() -> None:
    # R17: at k = 10, folds at r = 0.3839707316274608 (x = 4.781283795978356) and
    # r = 0.5595250124456357 (x = 1.137805201613904). Derived on the curves of R15
    # (Ludwig, Jones & Holling 1978; Strogatz 2015 §3.7, confirmed).
    model = make_model(BUDWORM, {"r": (0.5, (0.2, 0.8)), "k": (10, None)}, 0, 15)
    branches, points = continue_equilibria(model, "r")
    expected = [(0.3839707316274608, 4.781283795978356), (0.5595250124456357, 1.137805201613904)]
    assert len(points) == 2 and all(p.turning for p in points)
    for point, (r, x) in zip(points, expected, strict=True):
        assert relative(point.parameter_value, r) <= REL_TOL
        assert relative(point.state_value, x) <= REL_TOL
    # R16: at r = 1/2 the equilibria are 0, 4 - sqrt(11), 2 and 4 + sqrt(11) (derived, exact).
    roots = []
    for branch in branches:
        p, x = branch.parameter_values, branch.state_values
        hits = np.flatnonzero((p[:-1] - 0.5) * (p[1:] - 0.5) <= 0)
        for i in hits:
            w = (0.5 - p[i]) / (p[i + 1] - p[i])
            roots.append(x[i] + w * (x[i + 1] - x[i]))
    found = np.sort(np.array(roots))
    f, fx = model.numeric(), model.numeric(1)
    args = model.args({"r": 0.5})
    for _ in range(8):  # polish the chord values, as a user of the branches would
        found = found - f(found, *args) / fx(found, *args)
    reference = np.array([0.0, 0.6833752096446002, 2.0, 7.316624790355400])
    assert found.size == 4
    assert abs(found[0]) <= ABS_TOL
    assert np.max(np.abs(found[1:] - reference[1:]) / reference[1:]) <= REL_TOL


def test_budworm_folds_in_k_at_r_055() -> None:
    # R17: at r = 0.55, folds at k = 6.595858884601163 (x = 2.907918368565168) and
    # k = 11.58239639189684 (x = 1.112563028121840). Derived on the curves of R15.
    model = make_model(BUDWORM, {"r": (0.55, None), "k": (10, (2, 15))}, 0, 15)
    _, points = continue_equilibria(model, "k")
    expected = [(6.595858884601163, 2.907918368565168), (11.58239639189684, 1.112563028121840)]
    assert len(points) == 2 and all(p.turning for p in points)
    for point, (k, x) in zip(points, expected, strict=True):
        assert relative(point.parameter_value, k) <= REL_TOL
        assert relative(point.state_value, x) <= REL_TOL


LAKE = "a - b*x + x^q/(1 + x^q)"


@pytest.mark.parametrize(
    ("b", "expected"),
    [
        # R19 (b = 0.6): a_low = 0.08972441837399073 at x = 0.7875529384989432 and
        # a_high = 0.1020918438251307 at x = 0.4084468617920715.
        (
            0.6,
            [(0.08972441837399073, 0.7875529384989432), (0.1020918438251307, 0.4084468617920715)],
        ),
        # R19 (b = 0.45, irreversible): a_low = -0.05251151199588767 < 0 at x = 1.100905623766998,
        # a_high = 0.05369514792960103 at x = 0.2552814392965923.
        (
            0.45,
            [(-0.05251151199588767, 1.100905623766998), (0.05369514792960103, 0.2552814392965923)],
        ),
    ],
)
def test_lake_folds_in_loading(b: float, expected: list[tuple[float, float]]) -> None:
    # R19: Carpenter, Ludwig & Brock (1999) (model confirmed; values derived).
    model = make_model(LAKE, {"a": (0.1, (-0.1, 0.2)), "b": (b, None), "q": (2, None)}, 0, 3)
    _, points = continue_equilibria(model, "a")
    assert len(points) == 2 and all(p.turning for p in points)
    for point, (a, x) in zip(points, expected, strict=True):
        assert relative(point.parameter_value, a) <= REL_TOL
        assert relative(point.state_value, x) <= REL_TOL


@pytest.mark.parametrize("parameter", ["a", "b"])
def test_lake_q3_folds_against_mpmath(parameter: str) -> None:
    # Independent reference computation: mpmath.findroot on (f, f_x) = 0 at 30 digits for the
    # lake model with q = 3 (Carpenter, Ludwig & Brock 1999), which has no simple closed form.
    ranges = {"a": (0.1, 0.4), "b": (0.5, 1.0)}
    values = {"a": 0.3, "b": 0.7}
    model = make_model(
        LAKE,
        {
            "a": (values["a"], ranges["a"] if parameter == "a" else None),
            "b": (values["b"], ranges["b"] if parameter == "b" else None),
            "q": (3, None),
        },
        0,
        4,
    )
    _, points = continue_equilibria(model, parameter)
    assert len(points) == 2 and all(p.turning for p in points)
    mpmath.mp.dps = 30
    try:
        for point in points:

            def system(x: mpmath.mpf, p: mpmath.mpf) -> list[mpmath.mpf]:
                a, b = (
                    (p, mpmath.mpf(values["b"]))
                    if parameter == "a"
                    else (mpmath.mpf(values["a"]), p)
                )
                f = a - b * x + x**3 / (1 + x**3)
                fx = -b + 3 * x**2 / (1 + x**3) ** 2
                return [f, fx]

            x_ref, p_ref = mpmath.findroot(system, (point.state_value, point.parameter_value))
            assert relative(point.parameter_value, float(p_ref)) <= REL_TOL
            assert relative(point.state_value, float(x_ref)) <= REL_TOL
    finally:
        mpmath.mp.dps = 15


# -- non-smooth, closed and degenerate cases --------------------------------------------------


def test_threshold_rule_kink_is_not_a_fold() -> None:
    # Harvest cut linearly below a trigger 0.2: f = x(1 - x) - H min(1, x/0.2). The lower
    # branch turns back in H at the kink (H, x) = (0.16, 0.2) with a jump of f_x from +0.6 to
    # -0.2, where f_x never vanishes: not a fold. Real ones: the fold at H = 1/4, x = 1/2
    # (Strogatz 2015 Exercise 3.7.3, dimensionless R01, from memory) and the transcritical
    # point at H = 0.2, x = 0 (derived: f_x(0) = 1 - 5H).
    model = make_model("x*(1 - x) - H*min(1, x/0.2)", {"H": (0.1, (0, 0.4))}, -0.5, 1.5)
    branches, points = continue_equilibria(model, "H")
    assert [
        (p.turning, round(p.parameter_value, 12), round(p.state_value, 12)) for p in points
    ] == [(False, 0.2, 0.0), (True, 0.25, 0.5)]
    for point in points:
        assert math.hypot(point.parameter_value - 0.16, point.state_value - 0.2) > SEPARATE_TOL
    # The continuation goes round the kink: one branch holds both sides of it.
    assert any(
        np.any(b.state_values < 0.1)
        and np.any(b.state_values > 0.5)
        and np.any(np.abs(b.state_values) > 1e-6)
        for b in branches
    )


def test_corner_fold_of_a_v_shaped_rate_is_not_reported() -> None:
    # f = p - max(2x, -x): equilibria x = p/2 and x = -p meet at a corner (0, 0) where f_x
    # jumps from +1 to -2 (derived). No fold may be reported; the one branch crosses the corner.
    model = make_model("p - max(2*x, -x)", {"p": (0.5, (-1, 1))}, -2, 2)
    branches, points = continue_equilibria(model, "p")
    assert points == ()
    (branch,) = branches
    assert branch.state_values.min() < -0.5 and branch.state_values.max() > 0.4


def test_closed_curve_is_traced_once() -> None:
    # The circle x^2 + p^2 = 1 (derived): one closed branch, folds at p = ±1, x = 0.
    model = make_model("1 - x^2 - p^2", {"p": (0, (-2, 2))}, -2, 2)
    branches, points = continue_equilibria(model, "p")
    (branch,) = branches
    assert branch.parameter_values[0] == branch.parameter_values[-1]
    radius = np.hypot(branch.state_values, branch.parameter_values)
    assert np.max(np.abs(radius - 1)) <= 1e-10
    assert [(p.turning, round(p.parameter_value, 12)) for p in points] == [
        (True, -1.0),
        (True, 1.0),
    ]


def test_trace_curve_refuses_a_branch_point_start_and_respects_the_box() -> None:
    # f = r x - x^2 (R20): at (x, r) = (0, 0) the Jacobian vanishes, so no tangent exists.
    def residual(u: np.ndarray) -> np.ndarray:
        return np.array([u[1] * u[0] - u[0] ** 2])

    def jacobian(u: np.ndarray) -> np.ndarray:
        return np.array([[u[1] - 2 * u[0], u[0]]])

    assert trace_curve(residual, jacobian, [0.0, 0.0], [-1, -1], [1, 1]) is None
    trace = trace_curve(
        residual, jacobian, [0.5, 0.5], [-1, -1], [1, 1], StepControl(max_steps=500)
    )
    assert trace is not None and trace.ends == ("box", "box")
    assert np.all(np.abs(trace.points) <= 1 + 1e-9)
    assert np.allclose(trace.points[[0, -1]], [[-1, -1], [1, 1]], atol=1e-12)
    tangent = null_tangent(np.array([[1.0, 2.0]]))
    assert tangent is not None and abs(tangent @ [1.0, 2.0]) <= 1e-15


def test_parameter_without_range_is_refused() -> None:
    model = make_model("r + x^2", {"r": (-0.25, None)}, -2, 2)
    with pytest.raises(ValueError, match="no range"):
        continue_equilibria(model, "r")
