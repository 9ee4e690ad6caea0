"""``sitegen analyse FILE [--json]``: the assessment (analysis and dynamics) as a report or JSON."""

from __future__ import annotations

import argparse
import sys

from sitegen.analysis.budget import DEFAULT_BUDGET_S


def _arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", metavar="FILE", help="one scenario file")
    parser.add_argument("--json", action="store_true", help="print the JSON summary")
    parser.add_argument(
        "--budget",
        type=float,
        default=DEFAULT_BUDGET_S,
        metavar="SECONDS",
        help=f"time budget of each SymPy step (default {DEFAULT_BUDGET_S:g})",
    )


def _run(args: argparse.Namespace) -> int:
    from sitegen.dynamics.assess import assess
    from sitegen.dynamics.report import assessment_json, assessment_text
    from sitegen.scenario.loader import load_scenario

    if args.budget <= 0:
        print("sitegen: error: --budget must be above zero", file=sys.stderr)
        return 2
    scenario = load_scenario(args.file)
    assessment = assess(scenario, args.budget)
    if args.json:
        print(assessment_json(assessment))
    else:
        print(assessment_text(assessment, scenario))
    return 0


COMMAND = ("analyse a scenario: equilibria, bifurcations, limits, policies, risk", _arguments, _run)
