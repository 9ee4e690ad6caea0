"""Registry of the subcommands beyond ``check``: name -> (summary, arguments, run)."""

from __future__ import annotations

import argparse
from collections.abc import Callable

from sitegen import analyse_command, build_command, fit_command, new_command

Command = tuple[str, Callable[[argparse.ArgumentParser], None], Callable[[argparse.Namespace], int]]

COMMANDS: dict[str, Command] = {
    "analyse": analyse_command.COMMAND,
    "build": build_command.COMMAND,
    "fit": fit_command.COMMAND,
    "new": new_command.COMMAND,
}
