"""Two-parameter maps: fold curves, cusps and stable counts against published values.

Reference values are copied from the project's reference list (R-numbers); each check names its
source and that source's status beside it.
"""

from __future__ import annotations

import mpmath
import numpy as np
import pytest
from continuation_support import make_model, relative

from sitegen.analysis.maps import parameter_map, stable_counts
from sitegen.analysis.records import ParameterMap
from sitegen.model.model import Model

REL_TOL = 1e-10  # cusps and fold-curve points, relative
CELL_MARGIN = 3  # roots closer than this many state cells are beyond the count grid: skipped


BUDWORM = "r*x*(1 - x/k) - x^2/(1 + x^2)"
LAKE = "a - b*x + x^q/(1 + x^q)"


@pytest.fixture(scope="module")
def budworm() -> tuple[Model, ParameterMap]:
    model = make_model(BUDWORM, {"r": (0.5, (0.3, 0.8)), "k": (10, (2, 12))}, 0, 15)
    return model, parameter_map(model, "k", "r")


@pytest.fixture(scope="module")
def lake() -> tuple[Model, ParameterMap]:
    model = make_model(
        LAKE, {"a": (0.1, (-0.1, 0.3)), "b": (0.6, (0.3, 0.9)), "q": (2, None)}, 0, 6
    )
    return model, parameter_map(model, "b", "a")


def test_budworm_cusp(budworm: tuple[Model, ParameterMap]) -> None:
    # R15: cusp at x = sqrt(3), (k, r) = (3 sqrt 3, 3 sqrt 3 / 8) = (5.196152422706632,
    # 0.6495190528383290). Ludwig, Jones & Holling (1978); Strogatz (2015) §3.7 (confirmed;
    # cusp values derived).
    _, result = budworm
    (cusp,) = result.cusps
    assert relative(cusp.parameters["k"], 5.196152422706632) <= REL_TOL
    assert relative(cusp.parameters["r"], 0.6495190528383290) <= REL_TOL
    assert relative(cusp.state_value, 1.732050807568877) <= REL_TOL


def test_budworm_fold_curve_matches_parametric_form(budworm: tuple[Model, ParameterMap]) -> None:
    # R15: along the fold curve r(x) = 2x^3/(1 + x^2)^2 and k(x) = 2x^3/(x^2 - 1), x > 1.
    # Ludwig, Jones & Holling (1978); Murray (2002) §1.2; Strogatz (2015) §3.7 (confirmed).
    _, result = budworm
    (curve,) = result.fold_curves
    x = curve.state_values
    assert np.all(x > 1)
    assert np.max(np.abs(curve.y_values - 2 * x**3 / (1 + x**2) ** 2) / curve.y_values) <= REL_TOL
    assert np.max(np.abs(curve.x_values - 2 * x**3 / (x**2 - 1)) / curve.x_values) <= REL_TOL
    # R15: the curve passes x = 2 at (k, r) = (16/3, 0.64) and x = 3 at (6.75, 0.54), and both
    # of its ends leave the box through k = 12 (k -> infinity as x -> 1 and as x -> infinity).
    assert x.min() < 2 and x.max() > 3
    for state, k, r in ((2.0, 16 / 3, 0.64), (3.0, 6.75, 0.54)):
        assert abs(np.interp(state, np.sort(x), curve.x_values[np.argsort(x)]) - k) < 1e-2
        assert abs(np.interp(state, np.sort(x), curve.y_values[np.argsort(x)]) - r) < 1e-3
    assert np.allclose(curve.x_values[[0, -1]], 12.0, rtol=0, atol=1e-12)
    assert sum("leaves the map" in note for note in result.notes) == 2


def test_budworm_stable_counts_against_cubic_roots(budworm: tuple[Model, ParameterMap]) -> None:
    # R16: the positive equilibria solve x^3 - k x^2 + (k/r + 1) x - k = 0 (derived from
    # Strogatz 2015 §3.7); their stability alternates from the smallest (stable) up, and x = 0
    # is unstable (f'(0) = r > 0). Independent count with numpy.roots at every grid point
    # whose roots the state grid can separate.
    model, result = budworm
    cell = (model.region[1] - model.region[0]) / 1024
    checked = {1: 0, 2: 0}
    for j, r in enumerate(result.y_grid):
        for i, k in enumerate(result.x_grid):
            roots = np.roots([1.0, -k, k / r + 1.0, -k])
            real = np.sort(roots[np.abs(roots.imag) <= 1e-9].real)
            if (
                roots[np.abs(roots.imag) > 1e-9].size
                and np.min(np.abs(roots[np.abs(roots.imag) > 1e-9].imag)) < CELL_MARGIN * cell
            ):
                continue  # a near-double root: too close to the fold curve for the grid
            if real.size > 1 and np.min(np.diff(real)) < CELL_MARGIN * cell:
                continue
            positive = real[(real > 0) & (real < model.region[1])]
            expected = (positive.size + 1) // 2
            assert result.stable_counts[j, i] == expected, (k, r)
            checked[expected] += 1
    # Both regions are well sampled: inside the cusp wedge 2 stable states, outside 1.
    assert checked[1] > 1000 and checked[2] > 500
    # R17: at r = 0.55 bistability holds for 6.5959 < k < 11.582 (derived): k = 9 is inside.
    assert stable_counts(model, "k", "r", np.array([9.0, 4.0]), np.array([0.55])).tolist() == [
        [2, 1]
    ]


def test_lake_cusp_and_fold_curve(lake: tuple[Model, ParameterMap]) -> None:
    # R18: cusp at (b, a) = (3 sqrt 3/8, 1/8) = (0.6495190528383290, 0.125), x = 1/sqrt 3 =
    # 0.5773502691896258; fold curve b(x) = 2x/(1 + x^2)^2, a(x) = b(x) x - x^2/(1 + x^2).
    # Carpenter, Ludwig & Brock (1999) (model and b = 3 sqrt 3/8 confirmed; general-q derived).
    _, result = lake
    (cusp,) = result.cusps
    assert relative(cusp.parameters["b"], 0.6495190528383290) <= REL_TOL
    assert relative(cusp.parameters["a"], 0.125) <= REL_TOL
    assert relative(cusp.state_value, 0.5773502691896258) <= REL_TOL
    (curve,) = result.fold_curves
    x = curve.state_values
    b = 2 * x / (1 + x**2) ** 2
    a = b * x - x**2 / (1 + x**2)
    assert np.max(np.abs(curve.x_values - b) / b) <= REL_TOL
    assert np.max(np.abs(curve.y_values - a)) <= REL_TOL  # a crosses 0 (R18: x = 1 gives a = 0)


def test_lake_stable_counts_against_cubic_roots(lake: tuple[Model, ParameterMap]) -> None:
    # R19: the equilibria solve (1 + x^2)(a - b x) + x^2 = 0 (derived, Carpenter et al. 1999);
    # in the region [0, 6] their stability alternates from the smallest (stable) up.
    model, result = lake
    cell = (model.region[1] - model.region[0]) / 1024
    checked = 0
    for j, a in enumerate(result.y_grid):
        for i, b in enumerate(result.x_grid):
            roots = np.roots([-b, a + 1.0, -b, a])
            real = np.sort(roots[np.abs(roots.imag) <= 1e-9].real)
            inside = real[(real >= 0) & (real <= model.region[1])]
            if (
                (
                    roots[np.abs(roots.imag) > 1e-9].size
                    and np.min(np.abs(roots[np.abs(roots.imag) > 1e-9].imag)) < CELL_MARGIN * cell
                )
                or (real.size > 1 and np.min(np.diff(real)) < CELL_MARGIN * cell)
                or (
                    inside.size
                    and min(inside.min(), model.region[1] - inside.max()) < CELL_MARGIN * cell
                )
            ):
                continue
            # f(0) = a: when a > 0 the flow rises from 0 to the smallest root, which is stable;
            # when a < 0 it falls out through x = 0 and the smallest root is a threshold.
            expected = (inside.size + (1 if a > 0 else 0)) // 2
            assert result.stable_counts[j, i] == expected, (b, a)
            checked += 1
    assert checked > 4000


def test_logistic_harvest_map() -> None:
    # R01: the fold curve in (H, r) is H = rK/4 at x = K/2 (Schaefer 1954, confirmed; Clark 1990
    # ch. 1, from memory): one straight fold curve, no cusp. Below it one stable state; above it
    # none (f(0) = -H < 0: the stock collapses, which the count rule does not call stable).
    model = make_model(
        "r*x*(1 - x/K) - H",
        {"r": (0.5, (0.2, 0.8)), "K": (1000, None), "H": (100, (0, 200))},
        0,
        2000,
    )
    result = parameter_map(model, "H", "r", grid_points=41)
    (curve,) = result.fold_curves
    assert result.cusps == ()
    assert np.max(np.abs(curve.x_values - curve.y_values * 1000 / 4) / curve.x_values) <= REL_TOL
    assert np.max(np.abs(curve.state_values - 500.0)) / 500.0 <= REL_TOL
    h, r = np.meshgrid(result.x_grid, result.y_grid)
    clear = np.abs(h - r * 250) > 2.0  # away from the fold line
    assert np.array_equal(result.stable_counts[clear], (h < r * 250)[clear].astype(int))


def test_lake_q3_cusp_against_mpmath() -> None:
    # R18, general q (derived): x_c = ((q-1)/(q+1))^(1/q), b_c = ((q+1)^2/(4q))
    # ((q-1)/(q+1))^((q-1)/q), a_c = (q-1)^2/(4q); for q = 3 checked against an independent
    # mpmath.findroot on (f, f_x, f_xx) = 0 at 30 digits.
    model = make_model(LAKE, {"a": (0.3, (0.1, 0.5)), "b": (0.8, (0.5, 1.2)), "q": (3, None)}, 0, 6)
    result = parameter_map(model, "b", "a", grid_points=21)
    (cusp,) = result.cusps
    q = 3.0
    closed = (
        ((q - 1) / (q + 1)) ** (1 / q),
        (q + 1) ** 2 / (4 * q) * ((q - 1) / (q + 1)) ** ((q - 1) / q),
        (q - 1) ** 2 / (4 * q),
    )
    mpmath.mp.dps = 30
    try:

        def system(x: mpmath.mpf, b: mpmath.mpf, a: mpmath.mpf) -> list[mpmath.mpf]:
            return [
                a - b * x + x**3 / (1 + x**3),
                -b + 3 * x**2 / (1 + x**3) ** 2,
                6 * x / (1 + x**3) ** 2 - 18 * x**4 / (1 + x**3) ** 3,
            ]

        reference = mpmath.findroot(system, (0.8, 0.85, 0.33))
    finally:
        mpmath.mp.dps = 15
    found = (cusp.state_value, cusp.parameters["b"], cusp.parameters["a"])
    for value, exact, independent in zip(found, closed, reference, strict=True):
        assert relative(value, exact) <= REL_TOL
        assert relative(value, float(independent)) <= REL_TOL


def test_count_rule_at_the_region_ends() -> None:
    # The documented rule: an end counts as stable only if it is an equilibrium that the flow
    # inside points at. f = x (E - x) on [0, 2] (derived): for E < 0, x = 0 is the only
    # equilibrium in the region and is stable (counted at the lower end); for E > 0 the
    # interior root E is stable and 0 is not. f = c - x on [0, 1] with c < 0: f(0) = c < 0 is a
    # collapse through the lower end, not an equilibrium, so no stable state; at c = 0 the
    # end x = 0 is a stable equilibrium.
    model = make_model("x*(E - x) + c*x^3", {"E": (0.5, (-1, 1)), "c": (0, (-1, 1))}, 0, 2)
    counts = stable_counts(model, "E", "c", np.array([-0.5, 0.5]), np.array([0.0]))
    assert counts.tolist() == [[1, 1]]
    model = make_model("c*(1 + d) - x", {"c": (0, (-1, 0)), "d": (0, (0, 1))}, 0, 1)
    counts = stable_counts(model, "c", "d", np.array([-0.5, 0.0]), np.array([0.0]))
    assert counts.tolist() == [[0, 1]]


def test_map_refuses_bad_arguments() -> None:
    model = make_model(BUDWORM, {"r": (0.5, (0.3, 0.8)), "k": (10, None)}, 0, 15)
    with pytest.raises(ValueError, match="no range"):
        parameter_map(model, "r", "k")
    with pytest.raises(ValueError, match="two different"):
        parameter_map(model, "r", "r")
