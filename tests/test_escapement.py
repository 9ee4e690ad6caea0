"""Constant escapement as a policy: analysed by the same engine as the other rules.

Constant escapement leaves a fixed stock S in the water and takes the surplus above it
(harvesting theory; "constant escapement keeps abundance steadiest", common practice, no
single source). In continuous time it is written as a fast removal Fmax*max(B - S, 0); the
stable state solves g(B) = Fmax (B - S) with g the logistic surplus production (Schaefer
1954), computed independently here with SciPy's brentq.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from scipy.optimize import brentq

from sitegen.dynamics.policies import compare_policies
from sitegen.scenario.loader import load_text

REL_TOL = 1e-8
R, K, FMAX, S = 0.5, 1000.0, 20.0, 600.0

ESCAPEMENT = """
[[policies]]
name = "constant escapement at 600 kt"
rate = "r*B*(1 - B/K) - Fmax*max(B - S, 0)"
yield = "Fmax*max(B - S, 0)"

[policies.parameters.Fmax]
value = 20
unit = "1/yr"
name = "removal rate above the escapement level"

[policies.parameters.S]
value = 600
unit = "kt"
name = "escapement level"

"""


def _scenario_text() -> str:
    source = (Path(__file__).parent.parent / "scenarios" / "coastal-sprat.toml").read_text()
    cut = source.index("[uncertainty]")
    return source[:cut] + ESCAPEMENT + source[cut:]


def test_escapement_row_matches_an_independent_root() -> None:
    scenario = load_text(_scenario_text(), "esc.toml", "esc")
    assert scenario.parameter("r").value == R and scenario.parameter("K").value == K
    table = compare_policies(scenario, 1.0)
    (row,) = [r for r in table.rows if r.name.startswith("constant escapement")]

    def surplus(b: float) -> float:
        return R * b * (1 - b / K)

    expected = brentq(lambda b: surplus(b) - FMAX * (b - S), S, K, xtol=1e-14)
    assert row.stable_state == pytest.approx(expected, rel=REL_TOL)
    assert row.yield_ == pytest.approx(surplus(expected), rel=REL_TOL)
    # The stock stays just above S: steadiest abundance of all the rules.
    assert S < row.stable_state < S + surplus(S) / FMAX + 1e-9
