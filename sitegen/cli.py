"""The command line: parse arguments, call the pipeline, map results to exit codes.

Exit codes: 0 everything valid, 1 some scenario invalid (or failed), 2 usage error.
No traceback reaches the user unless ``--debug`` is given.
"""

from __future__ import annotations

import argparse
import os
import sys
import traceback
from collections.abc import Callable, Sequence

from sitegen.errors import ScenarioError

EXIT_OK, EXIT_INVALID, EXIT_USAGE = 0, 1, 2


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        print(f"sitegen: error: {message}", file=sys.stderr)
        raise SystemExit(EXIT_USAGE)


def _check(args: argparse.Namespace) -> int:
    from sitegen.scenario.loader import find_scenarios, load_scenario

    try:
        files = find_scenarios(args.paths)
    except ScenarioError as error:
        print(error.render(), file=sys.stderr)
        return EXIT_INVALID
    failures = 0
    for path in files:
        try:
            scenario = load_scenario(path)
        except ScenarioError as error:
            failures += 1
            print(error.render(), file=sys.stderr)
            continue
        names = ", ".join(p.name for p in scenario.parameters)
        lever = scenario.model.lever or "none"
        print(
            f"ok  {scenario.slug}: state {scenario.state.symbol} ({scenario.state.unit}); "
            f"parameters {names}; lever {lever}"
        )
        for warning in scenario.warnings:
            print(f"    warning: {warning}")
    if not args.quiet:
        print(f"{len(files) - failures} of {len(files)} scenario(s) valid", file=sys.stderr)
    return EXIT_INVALID if failures else EXIT_OK


def _commands() -> dict[
    str, tuple[str, Callable[[argparse.ArgumentParser], None], Callable[[argparse.Namespace], int]]
]:
    def check_arguments(parser: argparse.ArgumentParser) -> None:
        parser.add_argument(
            "paths", nargs="+", metavar="PATH", help="scenario files or folders of them"
        )
        parser.add_argument("--quiet", action="store_true", help="no summary line")

    commands = {
        "check": ("validate scenario files", check_arguments, _check),
    }
    from sitegen import commands as extra

    commands.update(extra.COMMANDS)
    return commands


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code."""
    parser = _Parser(prog="sitegen", description="Sustainability dossiers from scenario files.")
    parser.add_argument("--debug", action="store_true", help="show a traceback on failure")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    commands = _commands()
    for name, (summary, add_arguments, _run) in commands.items():
        command_parser = sub.add_parser(
            name, help=summary, description=summary, conflict_handler="resolve"
        )
        # --debug is also accepted after the command (sitegen check x --debug), where
        # users add it on the hint's advice; SUPPRESS keeps the main parser's default.
        command_parser.add_argument(
            "--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS
        )
        add_arguments(command_parser)
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help(sys.stderr)
        return EXIT_USAGE
    run = commands[args.command][2]
    try:
        return run(args)
    except ScenarioError as error:
        print(error.render(), file=sys.stderr)
        return EXIT_INVALID
    except KeyboardInterrupt:
        print("sitegen: interrupted", file=sys.stderr)
        return EXIT_INVALID
    except BrokenPipeError:
        # The reader went away (e.g. `sitegen analyse ... | head`); stop quietly.
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return EXIT_OK
    except Exception as error:  # the promise: no traceback without --debug
        if args.debug:
            traceback.print_exc()
        else:
            print(
                f"sitegen: internal error: {type(error).__name__}: {error}\n"
                "  hint: run again with --debug and report the traceback",
                file=sys.stderr,
            )
        return EXIT_INVALID


if __name__ == "__main__":
    sys.exit(main())
