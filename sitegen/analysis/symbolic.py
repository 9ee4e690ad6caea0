"""SymPy steps under a time budget, in a worker process that can be killed.

SymPy cannot be interrupted inside a thread, so every symbolic step runs in a
forked worker. The steps of one scenario are sent as one batch (a fork costs
about 20 ms); the parent waits at most ``budget_s`` seconds for each step's
answer, and on a time-out kills the worker and starts a new one for the steps
that remain. Each step's outcome records whether it finished, failed or ran
out of time, so the numeric result can stand in with the reason written down.
"""

from __future__ import annotations

import multiprocessing
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import sympy

DEFAULT_BUDGET_S = 5.0

OK, FAILED, TIMED_OUT = "ok", "failed", "timed out"


@dataclass(frozen=True)
class Step:
    """One symbolic job: a module-level function and its (picklable) arguments."""

    name: str
    function: Callable[..., Any]
    arguments: tuple[Any, ...]


@dataclass(frozen=True)
class Outcome:
    """What became of a step: ``status`` is ok, failed or timed out."""

    name: str
    status: str
    value: Any = None
    message: str = ""
    seconds: float = 0.0


def _worker(connection: Any, steps: Sequence[Step]) -> None:
    for step in steps:
        started = time.perf_counter()
        try:
            value = step.function(*step.arguments)
            connection.send((step.name, OK, value, "", time.perf_counter() - started))
        except Exception as error:  # any SymPy failure becomes a recorded outcome
            message = f"{type(error).__name__}: {error}"[:300]
            connection.send((step.name, FAILED, None, message, time.perf_counter() - started))
    connection.close()


def run_steps(steps: Sequence[Step], budget_s: float = DEFAULT_BUDGET_S) -> dict[str, Outcome]:
    """Run ``steps`` in order in a killable worker; each gets ``budget_s`` seconds."""
    context = multiprocessing.get_context("fork")
    outcomes: dict[str, Outcome] = {}
    remaining = list(steps)
    while remaining:
        parent, child = context.Pipe(duplex=False)
        process = context.Process(target=_worker, args=(child, remaining), daemon=True)
        process.start()
        child.close()
        finished = 0
        try:
            for step in remaining:
                if not parent.poll(budget_s):
                    outcomes[step.name] = Outcome(
                        step.name, TIMED_OUT,
                        message=f"SymPy took longer than the {budget_s:g} s budget",
                        seconds=budget_s,
                    )
                    finished += 1
                    break
                try:
                    name, status, value, message, seconds = parent.recv()
                except (EOFError, OSError):
                    outcomes[step.name] = Outcome(step.name, FAILED,
                                                  message="the SymPy worker stopped")
                    finished += 1
                    break
                outcomes[name] = Outcome(name, status, value, message, seconds)
                finished += 1
        finally:
            if process.is_alive():
                process.kill()
            process.join(timeout=5)
            parent.close()
        remaining = remaining[finished:]
    return outcomes


# -- the steps themselves (module level, so they can be sent to the worker) --------------


def solve_for(expr: sympy.Expr, symbol: sympy.Symbol) -> list[sympy.Expr]:
    """All solutions of expr = 0 for ``symbol`` that SymPy finds (no checking)."""
    solutions = sympy.solve(expr, symbol, check=False, dict=False)
    return [s for s in solutions if not s.has(sympy.I) or s.is_real is not False]


def fold_candidates(rate: sympy.Expr, state: sympy.Symbol, parameter: sympy.Symbol
                    ) -> list[tuple[sympy.Expr, sympy.Expr]]:
    """(state, parameter) pairs in closed form where f = f_x = 0, via p(x).

    Solve f = 0 for the parameter as a function of the state, p(x); folds in
    that parameter sit where dp/dx = 0. Returns an empty list when f cannot be
    solved for the parameter.
    """
    pairs: list[tuple[sympy.Expr, sympy.Expr]] = []
    for as_function in sympy.solve(rate, parameter, check=False, dict=False):
        as_function = sympy.cancel(as_function)
        slope = sympy.together(sympy.diff(as_function, state))
        numerator = sympy.numer(slope)
        for state_value in sympy.solve(numerator, state, check=False, dict=False):
            parameter_value = sympy.simplify(as_function.subs(state, state_value))
            pairs.append((sympy.simplify(state_value), parameter_value))
    return pairs


def parameter_at_states(rate: sympy.Expr, state: sympy.Symbol, parameter: sympy.Symbol,
                        states: list[sympy.Expr]) -> list[tuple[sympy.Expr, sympy.Expr]]:
    """(state, parameter) pairs: p(x) evaluated at given closed-form states.

    Used for branch points such as a transcritical point at x = 0, where the
    branch p(x) meets an equilibrium that exists for every p.
    """
    pairs = []
    for as_function in sympy.solve(rate, parameter, check=False, dict=False):
        as_function = sympy.cancel(as_function)
        for state_value in states:
            try:
                value = sympy.limit(as_function, state, state_value)
            except (NotImplementedError, ValueError):
                continue
            if value.is_finite:
                pairs.append((state_value, sympy.simplify(value)))
    return pairs


def two_parameter_folds(rate: sympy.Expr, state: sympy.Symbol, first: sympy.Symbol,
                        second: sympy.Symbol) -> list[dict[str, sympy.Expr]]:
    """The fold curve(s) as (first(x), second(x)) in closed form, parametric in the state."""
    slope = sympy.diff(rate, state)
    solutions = sympy.solve([rate, slope], [first, second], dict=True)
    return [{first.name: sympy.simplify(s[first]), second.name: sympy.simplify(s[second])}
            for s in solutions if first in s and second in s]


def sleep_then(seconds: float, value: Any) -> Any:
    """A step that takes ``seconds``: for tests of the time budget."""
    time.sleep(seconds)
    return value
