"""The benchmark registry and the result record every benchmark returns."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass


@dataclass(frozen=True)
class Result:
    """One measured figure beside its baseline, measured in the same run.

    ``ratio`` is baseline / figure when ``higher_is_better`` is False (a speed-up),
    else figure / baseline. ``target`` is the ratio (or figure) we aim for and
    ``met`` says whether this run reached it.
    """

    name: str
    figure: float
    figure_unit: str
    baseline: float | None
    baseline_label: str
    ratio: float | None
    target: str
    met: bool
    detail: str = ""


Benchmark = Callable[[bool], list[Result]]
BENCHMARKS: dict[str, Benchmark] = {}


def benchmark(name: str) -> Callable[[Benchmark], Benchmark]:
    """Register a benchmark function ``fn(quick) -> list[Result]`` under ``name``."""

    def register(function: Benchmark) -> Benchmark:
        BENCHMARKS[name] = function
        return function

    return register
