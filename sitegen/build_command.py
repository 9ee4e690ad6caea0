"""``sitegen build [PATHS...] [--out build/] [--jobs N] [--budget S]``: the static site."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from sitegen.analysis.budget import DEFAULT_BUDGET_S


def _arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "paths", nargs="*", default=["scenarios"], metavar="PATH",
        help="scenario files or folders (default: scenarios)",
    )  # fmt: skip
    parser.add_argument("--out", default="build", metavar="FOLDER", help="output (default build)")
    parser.add_argument(
        "--jobs", type=int, default=None, metavar="N",
        help="scenarios built at once (default: the number of cores, at most 8)",
    )  # fmt: skip
    parser.add_argument(
        "--budget", type=float, default=DEFAULT_BUDGET_S, metavar="SECONDS",
        help=f"time budget of each SymPy step (default {DEFAULT_BUDGET_S:g})",
    )  # fmt: skip
    parser.add_argument("--quiet", action="store_true", help="print only errors")


def _run(args: argparse.Namespace) -> int:
    from sitegen import __version__
    from sitegen.site.build import BuildError, build_site, default_jobs

    if args.budget <= 0 or (args.jobs is not None and args.jobs < 1):
        print("sitegen: error: --budget must be above zero and --jobs at least 1", file=sys.stderr)
        return 2
    say = (lambda _m: None) if args.quiet else (lambda m: print(f"sitegen: {m}", file=sys.stderr))
    try:
        report = build_site(
            args.paths,
            Path(args.out),
            jobs=args.jobs or default_jobs(),
            budget_s=args.budget,
            version=__version__,
            progress=say,
        )
    except BuildError as error:
        print(f"sitegen: error: {error}", file=sys.stderr)
        return 2
    for _path, message in report.failed:
        print(message, file=sys.stderr)
    if not args.quiet:
        print(
            f"wrote {report.out}: {len(report.built)} built, {len(report.reused)} unchanged, "
            f"{len(report.failed)} failed, in {report.total_seconds:.1f} s"
        )
    return 1 if report.failed else 0


COMMAND = ("build the static site of dossiers from scenario files", _arguments, _run)
