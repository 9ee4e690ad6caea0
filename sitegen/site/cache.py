"""The build cache: a scenario whose inputs and tool are unchanged is not rebuilt.

The key of a scenario is the SHA-256 of the tool's own files (every module,
template, stylesheet and script of the package, so any change of code
invalidates everything), the SymPy time budget, and the name and bytes of
every file the scenario reads (the scenario, its data, its fitted companion).

An entry lives in the output folder, ``.cache/<key>/``: the files the scenario
wrote, its card (``card.json``) or its error (``error.txt``). Each build copies
the entries it used into the new output, so the cache never outgrows the site.
This module imports only the standard library: the no-change rebuild must not
pay for NumPy or SymPy.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
from functools import cache
from pathlib import Path
from typing import Any

CACHE_DIR = ".cache"
CARD = "card.json"
ERROR = "error.txt"
META = "entry.json"
_PACKAGE = Path(__file__).resolve().parent.parent
_CODE_SUFFIXES = {".py", ".j2", ".css", ".js", ".toml"}


@cache
def code_fingerprint() -> str:
    """SHA-256 over every source file of the sitegen package (sorted by path)."""
    digest = hashlib.sha256()
    for path in sorted(_PACKAGE.rglob("*")):
        if path.suffix in _CODE_SUFFIXES and "__pycache__" not in path.parts:
            digest.update(path.relative_to(_PACKAGE).as_posix().encode())
            digest.update(b"\0")
            digest.update(path.read_bytes())
            digest.update(b"\0")
    return digest.hexdigest()


def scenario_key(inputs: list[Path], budget_s: float) -> str:
    """The cache key of a scenario reading ``inputs`` (first one: the scenario file)."""
    digest = hashlib.sha256()
    digest.update(code_fingerprint().encode())
    digest.update(f"budget={budget_s!r}".encode())
    base = inputs[0].parent
    for path in inputs:
        try:
            data = path.read_bytes()
        except OSError:
            data = b"<unreadable>"
        try:
            name = path.relative_to(base).as_posix()
        except ValueError:
            name = path.name
        digest.update(name.encode() + b"\0" + data + b"\0")
    return digest.hexdigest()


def read_entry(out: Path, key: str) -> dict[str, Any] | None:
    """A cached build as {"slug", "path", "files", "card", "error"}, or None."""
    folder = out / CACHE_DIR / key
    try:
        meta = json.loads((folder / META).read_text(encoding="utf-8"))
        files = {name: (folder / name).read_bytes() for name in meta["files"]}
        card = json.loads((folder / CARD).read_text("utf-8")) if (folder / CARD).exists() else None
        error = (folder / ERROR).read_text("utf-8") if (folder / ERROR).exists() else None
    except (OSError, ValueError, KeyError):
        return None  # a damaged entry is rebuilt, never trusted
    return {
        "slug": meta["slug"],
        "path": meta["path"],
        "files": files,
        "card": card,
        "error": error,
    }


def write_entry(
    staging: Path,
    key: str,
    slug: str,
    path: str,
    files: dict[str, bytes],
    card: dict[str, Any] | None,
    error: str | None,
) -> None:
    folder = staging / CACHE_DIR / key
    folder.mkdir(parents=True, exist_ok=True)
    for name, data in files.items():
        (folder / name).write_bytes(data)
    if card is not None:
        (folder / CARD).write_text(json.dumps(card, sort_keys=True), encoding="utf-8")
    if error is not None:
        (folder / ERROR).write_text(error, encoding="utf-8")
    meta = {"slug": slug, "path": path, "files": sorted(files)}
    (folder / META).write_text(json.dumps(meta, sort_keys=True), encoding="utf-8")


def carry_entry(old_out: Path, staging: Path, key: str) -> None:
    """Copy a used entry into the new output (hard links where the file system allows)."""
    source = old_out / CACHE_DIR / key
    target = staging / CACHE_DIR / key
    target.mkdir(parents=True, exist_ok=True)
    for item in source.iterdir():
        try:
            os.link(item, target / item.name)
        except OSError:
            shutil.copy2(item, target / item.name)
