"""``sitegen new``: start a scenario file from a template, or list the templates.

``sitegen new FILE --template NAME`` writes the template's text to FILE;
``sitegen new --list`` prints one line per template (name and description).
Exit codes follow :mod:`sitegen.cli`: 0 written or listed; 1 the file was not
written (it exists already, or its folder is missing or not writable); 2 usage
error (unknown template, FILE or ``--template`` missing, a file name that cannot
become a page name).

The file is written to a temporary file in the same folder and moved into place
with :func:`os.replace`, so a reader never sees half a file; an existing file is
never overwritten.
"""

from __future__ import annotations

import argparse
import contextlib
import os
import re
import sys
import tempfile
from pathlib import Path

from sitegen.cli import EXIT_INVALID, EXIT_OK, EXIT_USAGE
from sitegen.errors import did_you_mean
from sitegen.scenario.templates import TEMPLATES, Template

SUFFIX = ".toml"
# The same rule the loader applies to a file's stem: the stem becomes the page name.
_STEM = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_\-]*$")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Declare FILE, ``--template NAME`` and ``--list``."""
    parser.add_argument(
        "file",
        nargs="?",
        metavar="FILE",
        help="scenario file to write, e.g. scenarios/my-lake.toml (never overwritten)",
    )
    parser.add_argument(
        "--template", metavar="NAME", help="template to start from (see --list for the names)"
    )
    parser.add_argument(
        "--list", action="store_true", help="list the templates, one per line, and exit"
    )


def _usage(message: str, hint: str) -> int:
    print(f"sitegen new: error: {message}\n  hint: {hint}", file=sys.stderr)
    return EXIT_USAGE


def _not_written(path: str, message: str, hint: str) -> int:
    print(f"{path}: {message}\n  hint: {hint}", file=sys.stderr)
    return EXIT_INVALID


def listing() -> str:
    """The ``--list`` text: one line per template, names padded to one column."""
    width = max(len(name) for name in TEMPLATES)
    return "\n".join(
        f"{name.ljust(width)}  {template.description}" for name, template in TEMPLATES.items()
    )


def write_new_file(path: Path, text: str) -> None:
    """Write ``text`` (UTF-8, ``\\n`` line ends) to ``path``, which must not exist.

    The text goes to a temporary file in the same folder first (same file
    system, so the final :func:`os.replace` is atomic), is flushed to disk, then
    given the permissions a normally created file would have (0666 minus the
    umask; temporary files start at 0600). Raises :class:`FileExistsError` when
    ``path`` appeared meanwhile, :class:`OSError` for other failures; the
    temporary file never outlives a failure.
    """
    folder = path.parent
    handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(handle, "w", encoding="utf-8", newline="\n") as stream:
            stream.write(text)
            stream.flush()
            os.fsync(stream.fileno())
        mask = os.umask(0)
        os.umask(mask)
        os.chmod(temporary, 0o666 & ~mask)
        # Checked again just before the move: os.replace would silently overwrite.
        if os.path.lexists(path):
            raise FileExistsError(str(path))
        os.replace(temporary, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(temporary)
        raise


def _choose(name: str | None) -> Template | int:
    """The template called ``name``, or the exit code of the usage message printed."""
    names = list(TEMPLATES)
    if name is None:
        return _usage(
            "choose a template with --template NAME",
            "templates: " + ", ".join(names) + " (sitegen new --list describes them)",
        )
    if name not in TEMPLATES:
        return _usage(f"unknown template '{name}'", did_you_mean(name, names))
    return TEMPLATES[name]


def run(args: argparse.Namespace) -> int:
    """List the templates, or write FILE from ``--template``; returns the exit code."""
    if args.list:
        if args.file is not None or args.template is not None:
            return _usage(
                "--list takes no FILE or --template",
                "run sitegen new --list on its own, then sitegen new FILE --template NAME",
            )
        print(listing())
        return EXIT_OK
    if args.file is None:
        return _usage(
            "name the file to write",
            "sitegen new scenarios/my-stock.toml --template logistic-quota "
            "(sitegen new --list shows the templates)",
        )
    chosen = _choose(args.template)
    if isinstance(chosen, int):
        return chosen
    path = Path(args.file)
    if path.suffix != SUFFIX:
        return _usage(
            f"scenario files end in {SUFFIX}; '{args.file}' does not",
            f"write {path.with_suffix(SUFFIX) if path.suffix else args.file + SUFFIX} instead",
        )
    if not _STEM.match(path.stem):
        return _usage(
            f"the file name '{path.stem}' cannot be used as a page name",
            "use letters, digits, '-' and '_' only, e.g. my-lake.toml",
        )
    shown = args.file
    if os.path.lexists(path):
        return _not_written(
            shown,
            "the file exists already; sitegen new never overwrites a file",
            "choose another file name, or move the existing file away first",
        )
    folder = path.parent
    if not folder.is_dir():
        return _not_written(
            shown,
            f"the folder '{folder}' does not exist",
            f"create it first (mkdir -p {folder}) or write the file elsewhere",
        )
    try:
        write_new_file(path, chosen.text)
    except FileExistsError:
        return _not_written(
            shown,
            "the file appeared while it was being written; it was left as it is",
            "choose another file name",
        )
    except OSError as error:
        return _not_written(
            shown,
            f"cannot write the file ({error.strerror or error})",
            "check that the folder is writable",
        )
    print(f"wrote {shown} from template '{chosen.name}': {chosen.law}, {chosen.equation}")
    print(f"the numbers in it are illustrative: edit them, then run: sitegen check {shown}")
    return EXIT_OK


COMMAND = (
    "start a scenario file from a template (--list shows them)",
    add_arguments,
    run,
)
