"""SymPy steps under a time budget, in a worker process that can be killed.

SymPy cannot be interrupted inside a thread, so every symbolic step runs in a
forked worker. The steps of one scenario are sent as one batch (a fork costs
about 20 ms); the parent waits at most ``budget_s`` seconds for each step's
answer, and on a time-out kills the worker and starts a new one for the steps
that remain. Each step's outcome records whether it finished, failed or ran
out of time, so the numeric result can stand in with the reason written down.

The pure steps of this module (solve, fold candidates, branch points, fold
curves) are remembered per process: a step sent again with equal arguments (a
policy's model has the base model's rate, so its general solution and folds
are the same) reuses the outcome that finished, or failed, within the budget,
instead of running SymPy again; a worker forked later inherits them, so the
same calls made inside another step (the sensitivities solve the same rate)
are answered at once too. A reused step is charged its original seconds
against the batch's total budget, so which later steps run or are skipped is
decided as if it had run again. Time-outs are never reused.
"""

from __future__ import annotations

import functools
import multiprocessing
import pickle
import time
from collections import OrderedDict
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import sympy

from sitegen.analysis.budget import DEFAULT_BUDGET_S  # re-exported: callers import it here

WORKER_STOPPED = "the SymPy worker stopped"
OK, FAILED, TIMED_OUT, SKIPPED = "ok", "failed", "timed out", "skipped"


@dataclass(frozen=True)
class Step:
    """One symbolic job: a module-level function and its (picklable) arguments."""

    name: str
    function: Callable[..., Any]
    arguments: tuple[Any, ...]


@dataclass(frozen=True)
class Outcome:
    """What became of a step: ``status`` is ok, failed, timed out or skipped."""

    name: str
    status: str
    value: Any = None
    message: str = ""
    seconds: float = 0.0


_REUSE_LIMIT = 256  # outcomes kept per process (oldest dropped first)
_REUSED: OrderedDict[tuple[Any, ...], bytes] = OrderedDict()


def _frozen(value: Any) -> Any:
    """A hashable stand-in for a step argument (lists and dicts become tuples)."""
    if isinstance(value, list | tuple):
        return (type(value).__name__, *(_frozen(v) for v in value))
    if isinstance(value, dict):
        return ("dict", *sorted((k, _frozen(v)) for k, v in value.items()))
    return (type(value).__name__, value)


def _reuse_key(step: Step) -> tuple[Any, ...] | None:
    """The key under which ``step``'s outcome is remembered, or None if it is not pure."""
    if step.function not in _PURE_STEPS:
        return None
    try:
        key = (step.function.__qualname__, _frozen(step.arguments))
        hash(key)
    except TypeError:
        return None
    return key


def _recall(step: Step, budget_s: float) -> Outcome | None:
    """A remembered outcome of ``step`` that finished within ``budget_s``, renamed to it."""
    key = _reuse_key(step)
    if key is None or key not in _REUSED:
        return None
    _, status, value, message, seconds = pickle.loads(_REUSED[key])
    if seconds > budget_s:
        return None
    _REUSED.move_to_end(key)
    return Outcome(step.name, status, value, message, seconds)


def _remember(step: Step, outcome: Outcome) -> None:
    key = _reuse_key(step)
    if key is None or outcome.status not in (OK, FAILED) or outcome.message == WORKER_STOPPED:
        return
    # Pickled, as the worker's pipe would: every caller gets its own copy of the value.
    _REUSED[key] = pickle.dumps(
        (outcome.name, outcome.status, outcome.value, outcome.message, outcome.seconds)
    )
    while len(_REUSED) > _REUSE_LIMIT:
        _REUSED.popitem(last=False)


def _reusable(function: Callable[..., Any]) -> Callable[..., Any]:
    """A pure step that, called inside another step, answers from the remembered outcomes."""

    @functools.wraps(function)
    def answer(*arguments: Any, **keywords: Any) -> Any:
        if not keywords:
            key = _reuse_key(Step("", answer, arguments))
            packed = _REUSED.get(key) if key is not None else None
            if packed is not None:
                _, status, value, _, _ = pickle.loads(packed)
                if status == OK:
                    return value
        return function(*arguments, **keywords)

    return answer


def _worker(connection: Any, steps: Sequence[Step]) -> None:
    for step in steps:
        # The parent counts each step's budget from this moment (a shared monotonic clock).
        connection.send(("started", step.name, time.monotonic()))
        started = time.perf_counter()
        # A pure step sent on its own runs afresh: its reuse was decided under the budget.
        function = getattr(step.function, "__wrapped__", step.function)
        if step.function not in _PURE_STEPS:
            function = step.function
        try:
            value = function(*step.arguments)
            connection.send((step.name, OK, value, "", time.perf_counter() - started))
        except Exception as error:  # any SymPy failure becomes a recorded outcome
            message = f"{type(error).__name__}: {error}"[:300]
            connection.send((step.name, FAILED, None, message, time.perf_counter() - started))
    connection.close()


class PendingSteps:
    """A batch of steps running in a worker while the caller does other work.

    The worker starts at construction; :meth:`collect` waits for the answers,
    giving each step ``budget_s`` seconds of its own running time (a step that
    finished over budget while the caller was busy counts as timed out), and
    restarts the worker for the steps after one that timed out. Once ``total_budget_s`` has
    passed since construction, the steps not yet started are skipped.
    """

    def __init__(
        self,
        steps: Sequence[Step],
        budget_s: float = DEFAULT_BUDGET_S,
        total_budget_s: float | None = None,
    ) -> None:
        self.budget_s = budget_s
        self.total_budget_s = total_budget_s
        self.started = time.monotonic()
        self.order = [step.name for step in steps]
        self.remaining = list(steps)
        self.outcomes: dict[str, Outcome] = {}
        self.recalled = {
            step.name: found for step in steps if (found := _recall(step, budget_s)) is not None
        }
        self.charged = 0.0  # seconds of reused steps, counted against the total budget
        self.process: Any = None
        self._start()

    def _start(self) -> None:
        to_run = [step for step in self.remaining if step.name not in self.recalled]
        if not to_run:
            self.process = None
            return
        context = multiprocessing.get_context("fork")
        self.parent, child = context.Pipe(duplex=False)
        self.process = context.Process(target=_worker, args=(child, to_run), daemon=True)
        self.process.start()
        child.close()

    def _stop(self) -> None:
        if self.process is None:
            return
        if self.process.is_alive():
            self.process.kill()
        self.process.join(timeout=5)
        self.parent.close()
        self.process = None

    def collect(self) -> dict[str, Outcome]:
        """Wait for every step (each within its budget) and return the outcomes by name."""
        while self.remaining:
            finished = 0
            try:
                for step in self.remaining:
                    if step.name in self.recalled:
                        outcome = self._charge(step)
                    else:
                        outcome = self._wait_for(step)
                        _remember(step, outcome)
                    self.outcomes[step.name] = outcome
                    finished += 1
                    if outcome.status in (TIMED_OUT, SKIPPED) or outcome.message == WORKER_STOPPED:
                        break
            finally:
                self._stop()
            self.remaining = self.remaining[finished:]
            if self.remaining and self._spent():
                for step in self.remaining:
                    self.outcomes[step.name] = Outcome(
                        step.name,
                        SKIPPED,
                        message=f"the scenario's {self.total_budget_s:g} s budget for SymPy "
                        "was spent",
                    )
                self.remaining = []
            if self.remaining:
                self._start()
        return {name: self.outcomes[name] for name in self.order if name in self.outcomes}

    def _charge(self, step: Step) -> Outcome:
        """A reused outcome, its seconds charged to the total budget as if it had run."""
        if self._spent():
            return self._skipped(step)
        outcome = self.recalled[step.name]
        self.charged += outcome.seconds
        return outcome

    def _wait_for(self, step: Step) -> Outcome:
        """The outcome of the worker's next step, waiting at most its budget from its start."""
        timed_out = Outcome(
            step.name,
            TIMED_OUT,
            seconds=self.budget_s,
            message=f"SymPy took longer than the {self.budget_s:g} s budget",
        )
        try:
            if not self.parent.poll(self.budget_s):
                return timed_out
            _, _, started_at = self.parent.recv()
            step_deadline = started_at + self.budget_s
            deadline = min(step_deadline, self._total_deadline())
            if not self.parent.poll(max(deadline - time.monotonic(), 0.0)):
                # Skipped only if the total budget cut the step short of its own budget;
                # a step already past its own budget (a busy caller) timed out.
                if deadline < step_deadline and time.monotonic() < step_deadline:
                    return self._skipped(step)
                return timed_out
            name, status, value, message, seconds = self.parent.recv()
        except (EOFError, OSError):
            return Outcome(step.name, FAILED, message=WORKER_STOPPED)
        if seconds > self.budget_s:
            # Finished while the caller was busy, but over budget: the budget is the rule.
            return timed_out
        return Outcome(name, status, value, message, seconds)

    def _total_deadline(self) -> float:
        if self.total_budget_s is None:
            return float("inf")
        return self.started + self.total_budget_s - self.charged

    def _spent(self) -> bool:
        return time.monotonic() >= self._total_deadline()

    def _skipped(self, step: Step) -> Outcome:
        return Outcome(
            step.name,
            SKIPPED,
            message=f"the scenario's {self.total_budget_s:g} s budget for SymPy was spent",
        )


def run_steps(steps: Sequence[Step], budget_s: float = DEFAULT_BUDGET_S) -> dict[str, Outcome]:
    """Run ``steps`` in order in a killable worker; each gets ``budget_s`` seconds."""
    return PendingSteps(steps, budget_s).collect()


# -- the steps themselves (module level, so they can be sent to the worker) --------------


@_reusable
def solve_for(expr: sympy.Expr, symbol: sympy.Symbol) -> list[sympy.Expr]:
    """All solutions of expr = 0 for ``symbol`` that SymPy finds (no checking)."""
    solutions = sympy.solve(expr, symbol, check=False, dict=False)
    return [s for s in solutions if not s.has(sympy.I) or s.is_real is not False]


@_reusable
def fold_candidates(
    rate: sympy.Expr, state: sympy.Symbol, parameter: sympy.Symbol
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
        if _too_high_degree(numerator, state):
            continue
        for state_value in sympy.solve(numerator, state, check=False, dict=False):
            parameter_value = sympy.simplify(as_function.subs(state, state_value))
            pairs.append((sympy.simplify(state_value), parameter_value))
    return pairs


MAX_SYMBOLIC_DEGREE = 2


def _too_high_degree(expr: sympy.Expr, state: sympy.Symbol) -> bool:
    """True for a polynomial in the state of degree above 2 with symbolic coefficients.

    Its roots have no closed form worth showing (cubic and quartic formulas run to
    pages, quintics have none); the numeric continuation finds them in milliseconds.
    """
    try:
        polynomial = sympy.Poly(sympy.expand(expr), state)
    except sympy.PolynomialError:
        return False
    symbolic_coefficients = any(not c.is_number for c in polynomial.coeffs())
    return symbolic_coefficients and polynomial.degree() > MAX_SYMBOLIC_DEGREE


@_reusable
def parameter_at_states(
    rate: sympy.Expr, state: sympy.Symbol, parameter: sympy.Symbol, states: list[sympy.Expr]
) -> list[tuple[sympy.Expr, sympy.Expr]]:
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


@_reusable
def two_parameter_folds(
    rate: sympy.Expr, state: sympy.Symbol, first: sympy.Symbol, second: sympy.Symbol
) -> list[dict[str, sympy.Expr]]:
    """The fold curve(s) as (first(x), second(x)) in closed form, parametric in the state."""
    slope = sympy.diff(rate, state)
    solutions = sympy.solve([rate, slope], [first, second], dict=True)
    return [
        {first.name: sympy.simplify(s[first]), second.name: sympy.simplify(s[second])}
        for s in solutions
        if first in s and second in s
    ]


_PURE_STEPS = frozenset({solve_for, fold_candidates, parameter_at_states, two_parameter_folds})


def sleep_then(seconds: float, value: Any) -> Any:
    """A step that takes ``seconds``: for tests of the time budget."""
    time.sleep(seconds)
    return value
