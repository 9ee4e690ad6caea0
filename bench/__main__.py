"""Run every benchmark and print one table: figure, baseline, ratio, target, met.

Usage: ``python -m bench [--quick] [--only NAME ...]``. Results are also written
as JSON to ``bench/results/latest.json``.
"""

from __future__ import annotations

import argparse
import json
import platform
import sys
from dataclasses import asdict
from pathlib import Path

from bench import analysis_bench, explorer_bench, imports_bench, uncertainty_bench  # noqa: F401
from bench.registry import BENCHMARKS, Result


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
                "yes" if r.met else "NO",
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
    args = parser.parse_args(argv)
    results: list[Result] = []
    for name, function in BENCHMARKS.items():
        if args.only and name not in args.only:
            continue
        print(f"running {name} ...", file=sys.stderr, flush=True)
        results.extend(function(args.quick))
    print(_table(results))
    for r in results:
        if r.detail:
            print(f"  {r.name}: {r.detail}")
    out = Path(__file__).parent / "results"
    out.mkdir(exist_ok=True)
    machine = {
        "python": platform.python_version(),
        "machine": platform.machine(),
        "processor": platform.processor() or "unknown",
    }
    (out / "latest.json").write_text(
        json.dumps(
            {"machine": machine, "quick": args.quick, "results": [asdict(r) for r in results]},
            indent=2,
        )
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
