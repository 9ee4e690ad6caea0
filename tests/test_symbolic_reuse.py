"""The per-process reuse of pure SymPy steps (sitegen/analysis/symbolic.py).

A step sent again with equal arguments takes the outcome that finished within the
budget (no worker is started for it), in the order the steps were given; steps that
are not pure (the budget tests' sleep_then) always run. No timing is asserted.
"""

from __future__ import annotations

import sympy

from sitegen.analysis import symbolic

x, r, K, H = sympy.symbols("x r K H")
RATE = r * x * (1 - x / K) - H


def test_a_pure_step_sent_again_is_reused_without_a_worker() -> None:
    step = symbolic.Step("equilibria", symbolic.solve_for, (RATE, x))
    first = symbolic.run_steps([step], budget_s=30.0)["equilibria"]
    assert first.status == symbolic.OK
    again = symbolic.PendingSteps([symbolic.Step("renamed", symbolic.solve_for, (RATE, x))], 30.0)
    assert again.process is None  # nothing left to run
    outcome = again.collect()["renamed"]
    assert outcome.name == "renamed" and outcome.status == symbolic.OK
    assert [sympy.simplify(a - b) for a, b in zip(outcome.value, first.value, strict=True)] == [
        0,
        0,
    ]
    assert outcome.value is not first.value  # each caller has its own copy


def test_outcomes_keep_the_order_of_the_steps() -> None:
    fold = symbolic.Step("folds", symbolic.fold_candidates, (RATE, x, H))
    symbolic.run_steps([fold], budget_s=30.0)
    steps = [
        symbolic.Step("fresh", symbolic.sleep_then, (0.0, "ran")),
        fold,
        symbolic.Step("last", symbolic.sleep_then, (0.0, "ran too")),
    ]
    outcomes = symbolic.run_steps(steps, budget_s=30.0)
    assert list(outcomes) == ["fresh", "folds", "last"]
    assert outcomes["fresh"].value == "ran" and outcomes["last"].value == "ran too"
    assert outcomes["folds"].status == symbolic.OK


def test_different_arguments_are_not_reused() -> None:
    other = r * x * (1 - x / K) - 2 * H
    symbolic.run_steps([symbolic.Step("a", symbolic.solve_for, (RATE, x))], budget_s=30.0)
    pending = symbolic.PendingSteps([symbolic.Step("b", symbolic.solve_for, (other, x))], 30.0)
    assert pending.process is not None
    pending.collect()


def test_impure_steps_always_run() -> None:
    step = symbolic.Step("sleep", symbolic.sleep_then, (0.0, "value"))
    symbolic.run_steps([step], budget_s=30.0)
    pending = symbolic.PendingSteps([step], 30.0)
    assert pending.process is not None
    assert pending.collect()["sleep"].value == "value"
