"""``sitegen fit FILE [--write] [--replicates N] [--json]``: fit a scenario to its ``[data]``.

Prints the estimates, their intervals, the derived figures and the diagnostics.
``--write`` stores this assessment year's estimates in the companion file
``<stem>.fitted.toml`` beside the scenario (replacing an entry of the same year,
keeping the others), which the loader then applies to the parameter values.
Exit codes as for the other commands: 0 done, 1 a problem with the scenario or
its data (reported by the command line), 2 a bad option or a scenario without
``[data]``.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path


def _arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", metavar="FILE", help="one scenario file with a [data] table")
    parser.add_argument(
        "--write", action="store_true", help="store the estimates in FILE's .fitted.toml"
    )
    parser.add_argument(
        "--replicates",
        type=int,
        default=None,
        metavar="N",
        help="bootstrap replicates (default: [data] replicates, else 500; 0: none)",
    )
    parser.add_argument("--json", action="store_true", help="print the fit summary as JSON")


def _run(args: argparse.Namespace) -> int:
    from sitegen.fitting import fit_entry, fit_scenario, fit_summary, fit_text
    from sitegen.scenario.companion import companion_file, companion_text
    from sitegen.scenario.loader import load_scenario

    if args.replicates is not None and not 0 <= args.replicates <= 100_000:
        print("sitegen: error: --replicates must be between 0 and 100000", file=sys.stderr)
        return 2
    scenario = load_scenario(args.file)
    report = fit_scenario(scenario, args.replicates)
    if report is None:
        print(
            f"sitegen: error: {args.file} has no [data] table to fit; "
            "see docs/scenario-format.md, [data]",
            file=sys.stderr,
        )
        return 2
    if args.json:
        print(json.dumps(fit_summary(report), indent=2, sort_keys=True))
    else:
        print(fit_text(report), end="")
    if args.write:
        target = companion_file(args.file)
        kept = tuple(e for e in scenario.fits if e.assessment_year != report.assessment_year)
        text = companion_text(Path(args.file).name, (*kept, fit_entry(report)))
        partial = target.with_name(target.name + ".partial")
        partial.write_text(text, encoding="utf-8")
        partial.replace(target)  # whole file or nothing
        print(f"wrote {target}", file=sys.stderr)
    return 0


COMMAND = ("fit a scenario's model to its monitoring data ([data])", _arguments, _run)
