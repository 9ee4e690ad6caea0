"""The import floor: how long the bare dependencies take to import (the baseline of builds)."""

from __future__ import annotations

import subprocess
import sys
import time

from bench.registry import Result, benchmark

FLOOR = "import numpy, sympy, scipy, matplotlib, jinja2, markdown"


def import_floor_s(repeats: int) -> float:
    """Best of ``repeats`` wall times of a fresh interpreter importing the dependencies."""
    best = float("inf")
    for _ in range(repeats):
        started = time.perf_counter()
        subprocess.run([sys.executable, "-c", FLOOR], check=True)
        best = min(best, time.perf_counter() - started)
    return best


@benchmark("import floor")
def run(quick: bool) -> list[Result]:
    floor = import_floor_s(2 if quick else 5)
    return [
        Result(
            "import floor (numpy, sympy, scipy, matplotlib, jinja2, markdown)",
            floor,
            "s",
            None,
            "",
            None,
            "reference only",
            True,
        )
    ]
