"""Run every benchmark and print one table: figure, baseline, ratio, target, met.

Usage: ``python -m bench [--quick] [--only NAME ...] [--json FILE]``. Results are
also written as JSON to ``bench/results/latest.json`` (or FILE), with the machine
(cores, Python) and the date. Every target is printed as met or not, and each one
not met is repeated at the end with the reason.
"""

from __future__ import annotations

import argparse
import datetime
import json
import os
import platform
import sys
from dataclasses import asdict
from pathlib import Path

from bench import (  # noqa: F401  (imported for their registration)
    accuracy_bench,
    analysis_bench,
    build_bench,
    explorer_bench,
    imports_bench,
    pageload_bench,
    scale_bench,
    uncertainty_bench,
)
from bench.registry import BENCHMARKS, Result

# The order of the table; a benchmark not named here comes after these.
ORDER = (
    "import floor",
    "analysis",
    "uncertainty",
    "build",
    "scale",
    "accuracy",
    "page load",
    "explorer",
)


def _met(r: Result) -> str:
    if r.target.startswith("reference"):
        return "-"
    return "yes" if r.met else "NO"


def _not_met(results: list[Result]) -> list[str]:
    """One plain line per target not met: the target, the figure, and why."""
    return [
        f"  NOT MET: {r.name}: target {r.target}, measured {r.figure:.4g} {r.figure_unit}"
        + (f" (ratio {r.ratio:.3g})" if r.ratio is not None else "")
        + (f"; {r.detail}" if r.detail else "")
        for r in results
        if not r.met and not r.target.startswith("reference")
    ]


def _table(results: list[Result]) -> str:
    header = ("benchmark", "figure", "baseline", "ratio", "target", "met")
    rows = [header]
    for r in results:
        baseline = f"{r.baseline:.4g} ({r.baseline_label})" if r.baseline is not None else "-"
        ratio = f"{r.ratio:.3g}" if r.ratio is not None else "-"
        rows.append(
            (
                r.name,
                f"{r.figure:.4g} {r.figure_unit}",
                baseline,
                ratio,
                r.target,
                _met(r),
            )
        )
    widths = [max(len(row[i]) for row in rows) for i in range(len(header))]
    lines = ["  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)) for row in rows]
    lines.insert(1, "  ".join("-" * w for w in widths))
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m bench", description=__doc__)
    parser.add_argument("--quick", action="store_true", help="fewer repetitions")
    parser.add_argument("--only", nargs="*", metavar="NAME", help="run only these benchmarks")
    parser.add_argument(
        "--json", type=Path, default=Path(__file__).parent / "results" / "latest.json",
        metavar="FILE", help="where the results go (default bench/results/latest.json)",
    )  # fmt: skip
    args = parser.parse_args(argv)
    results: list[Result] = []
    ranked = sorted(BENCHMARKS, key=lambda n: ORDER.index(n) if n in ORDER else len(ORDER))
    unknown = sorted(set(args.only or ()) - set(BENCHMARKS))
    if unknown:
        parser.error(f"no benchmark named {', '.join(unknown)}; known: {', '.join(ranked)}")
    for name in ranked:
        function = BENCHMARKS[name]
        if args.only and name not in args.only:
            continue
        print(f"running {name} ...", file=sys.stderr, flush=True)
        results.extend(function(args.quick))
    print(_table(results))
    for r in results:
        if r.detail:
            print(f"  {r.name}: {r.detail}")
    missed = _not_met(results)
    targets = sum(not r.target.startswith("reference") for r in results)
    print(f"\n{targets - len(missed)} of {targets} targets met.")
    print("\n".join(missed))
    args.json.parent.mkdir(parents=True, exist_ok=True)
    machine = {
        "cores": os.cpu_count(),
        "date": datetime.date.today().isoformat(),
        "python": platform.python_version(),
        "machine": platform.machine(),
        "processor": platform.processor() or "unknown",
    }
    args.json.write_text(
        json.dumps(
            {"machine": machine, "quick": args.quick, "results": [asdict(r) for r in results]},
            indent=2,
        )
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
