"""``sitegen analyse FILE [--json]``: the analysis as a readable report or JSON."""

from __future__ import annotations

import argparse
import sys

from sitegen.analysis.symbolic import DEFAULT_BUDGET_S


def _arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", metavar="FILE", help="one scenario file")
    parser.add_argument("--json", action="store_true", help="print the JSON summary")
    parser.add_argument("--budget", type=float, default=DEFAULT_BUDGET_S, metavar="SECONDS",
                        help=f"time budget of each SymPy step (default {DEFAULT_BUDGET_S:g})")


def _run(args: argparse.Namespace) -> int:
    from sitegen.analysis.analyse import analyse
    from sitegen.analysis.summary import to_json, to_text
    from sitegen.scenario.loader import load_scenario

    if args.budget <= 0:
        print("sitegen: error: --budget must be above zero", file=sys.stderr)
        return 2
    scenario = load_scenario(args.file)
    analysis = analyse(scenario, args.budget)
    if args.json:
        print(to_json(analysis))
    else:
        print(to_text(analysis, scenario.model.time_unit))
    return 0


COMMAND = ("analyse a scenario: equilibria, stability, bifurcations", _arguments, _run)
