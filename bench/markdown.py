"""The README's performance table from a results file: ``python -m bench.markdown [FILE]``.

FILE defaults to ``bench/results/latest.json`` (written by ``python -m bench``).
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

DEFAULT = Path(__file__).parent / "results" / "latest.json"


def _number(value: float, unit: str) -> str:
    if value != value:  # NaN: not measured
        return "not measured"
    text = f"{value:.3g}"
    return f"{text} {unit}".strip()


def table(data: dict[str, Any]) -> str:
    lines = ["| benchmark | figure | baseline | ratio | target | met |", "|---" * 6 + "|"]
    for r in data["results"]:
        baseline = (
            f"{_number(r['baseline'], r['figure_unit'])} ({r['baseline_label']})"
            if r["baseline"] is not None
            else "-"
        )
        ratio = f"{r['ratio']:.3g}" if r["ratio"] is not None else "-"
        reference = r["target"].startswith("reference")
        met = "-" if reference else ("yes" if r["met"] else "**no**")
        cells = (r["name"], _number(r["figure"], r["figure_unit"]), baseline, ratio, r["target"])
        lines.append("| " + " | ".join((*cells, met)) + " |")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    arguments = sys.argv[1:] if argv is None else argv
    path = Path(arguments[0]) if arguments else DEFAULT
    data = json.loads(path.read_text(encoding="utf-8"))
    machine = data.get("machine", {})
    print(table(data))
    print(
        f"\n{machine.get('cores', '?')} cores, Python {machine.get('python', '?')}, "
        f"{machine.get('date', '?')}{', --quick' if data.get('quick') else ''}"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
