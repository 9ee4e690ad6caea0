"""Where one scenario's build spends its time, by kind of work (exclusive seconds).

:func:`stage_seconds` runs :func:`sitegen.site.worker.build_scenario` on one
scenario in this process with timers wrapped around the functions that do each
kind of work, wherever they are looked up (the analysis, the policy table, the
stage-4 parts). Time is exclusive: a policy row that runs a continuation counts
the continuation under "continuation" and the rest under "policies", so the
figures add up to the build's own stage times. "symbolic" is the time spent
waiting for the SymPy worker (it runs beside the numeric work, so only the wait
that is left over shows). The timers are removed afterwards.
"""

from __future__ import annotations

import importlib
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from functools import wraps
from typing import Any

# (module, class or "", attribute, kind): every place a kind of work is looked up.
TARGETS: tuple[tuple[str, str, str, str], ...] = (
    ("sitegen.analysis.symbolic", "PendingSteps", "collect", "symbolic (waiting)"),
    ("sitegen.analysis.analyse", "", "find_equilibria", "numeric equilibria"),
    ("sitegen.analysis.analyse", "", "continue_equilibria", "continuation"),
    ("sitegen.analysis.analyse", "", "parameter_map", "two-parameter maps"),
    ("sitegen.analysis.analyse", "", "build_bifurcations", "bifurcations"),
    ("sitegen.dynamics.assess", "", "analyse_model", "analysis (rest)"),
    ("sitegen.dynamics.policies", "", "analyse_model", "analysis (rest)"),
    ("sitegen.dynamics.assess", "", "compare_policies", "policies (rest)"),
    ("sitegen.dynamics.assess", "", "run_uncertainty", "uncertainty"),
    ("sitegen.dynamics.assess", "", "run_sensitivity", "sensitivity"),
    ("sitegen.dynamics.assess", "", "assess", "dynamics (rest)"),
    ("sitegen.figures.registry", "", "figures_for", "figures"),
    ("sitegen.pages.dossier", "", "render_dossier", "pages"),
    ("sitegen.pages.dossier", "", "scenario_card", "pages"),
    ("sitegen.site.worker", "", "_explorer", "pages"),
)


class _Clock:
    def __init__(self) -> None:
        self.totals: dict[str, float] = {}
        self.stack: list[list[float]] = []  # [started, seconds in children]

    def wrap(self, kind: str, function: Callable[..., Any]) -> Callable[..., Any]:
        @wraps(function)
        def timed(*args: Any, **kwargs: Any) -> Any:
            self.stack.append([time.perf_counter(), 0.0])
            try:
                return function(*args, **kwargs)
            finally:
                started, children = self.stack.pop()
                elapsed = time.perf_counter() - started
                self.totals[kind] = self.totals.get(kind, 0.0) + elapsed - children
                if self.stack:
                    self.stack[-1][1] += elapsed

        return timed


def _owner(module: str, name: str) -> Any:
    found = importlib.import_module(module)
    return getattr(found, name) if name else found


@contextmanager
def _timers(clock: _Clock) -> Iterator[None]:
    saved: list[tuple[Any, str, Any]] = []
    try:
        for module, name, attribute, kind in TARGETS:
            owner = _owner(module, name)
            original = getattr(owner, attribute)
            saved.append((owner, attribute, original))
            setattr(owner, attribute, clock.wrap(kind, original))
        yield
    finally:
        for owner, attribute, original in reversed(saved):
            setattr(owner, attribute, original)


def stage_seconds(path: str, budget_s: float = 5.0) -> tuple[dict[str, float], dict[str, float]]:
    """(exclusive seconds by kind of work, the build's own stage seconds) for one scenario."""
    from sitegen.site.worker import build_scenario

    clock = _Clock()
    started = time.perf_counter()
    with _timers(clock):
        built = build_scenario(path, "bench", "bench", budget_s, "bench")
    if built.error is not None:
        raise RuntimeError(built.error)
    clock.totals["load, fit, rest"] = time.perf_counter() - started - sum(clock.totals.values())
    return clock.totals, dict(built.seconds)
