"""One cold build of the bundled scenarios per benchmark run, shared by the benchmarks.

The build benchmark times it; the accuracy and page-load benchmarks read the
pages and summaries it wrote, so the bundled site is built once per run. With
``--quick`` only :data:`QUICK_SUBSET` is built (four of the cheaper scenarios,
copied with their data files and the brief into a temporary folder). The
build is a fresh interpreter (``python -c`` calling ``build_site`` exactly as
``sitegen build`` does, so the stage seconds of its report can be read back)
into a temporary folder removed when the run ends.
"""

from __future__ import annotations

import atexit
import json
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SCENARIOS = ROOT / "scenarios"
QUICK_SUBSET = (  # cheaper ones, one with folds (for the accuracy benchmark)
    "brindle-shrimp",
    "penhallow-reservoir",
    "tamsin-cold-room",
    "wexley-depot-soil",
)

_CHILD = """
import json, sys
from pathlib import Path
from sitegen import __version__
from sitegen.site.build import build_site
report = build_site([sys.argv[1]], Path(sys.argv[2]), jobs=int(sys.argv[3]), version=__version__)
print(json.dumps({"built": report.built, "reused": report.reused,
                  "failed": [p for p, _ in report.failed], "seconds": report.seconds,
                  "total_seconds": report.total_seconds}))
"""


@dataclass(frozen=True)
class Build:
    """A finished build: where it is, its wall time, and its report."""

    out: Path
    wall_s: float
    jobs: int
    built: list[str]
    failed: list[str]
    seconds: dict[str, float]


_BUILDS: dict[str, Build] = {}
_TEMP: list[Path] = []


def _temp() -> Path:
    if not _TEMP:
        folder = Path(tempfile.mkdtemp(prefix="sitegen-bench-"))
        atexit.register(shutil.rmtree, folder, ignore_errors=True)
        _TEMP.append(folder)
    return _TEMP[0]


def cold_build(source: Path, out: Path, jobs: int) -> Build:
    """Build ``source`` into a fresh ``out`` in a new interpreter; wall time included."""
    shutil.rmtree(out, ignore_errors=True)
    started = time.perf_counter()
    done = subprocess.run(
        [sys.executable, "-c", _CHILD, str(source), str(out), str(jobs)],
        capture_output=True,
        text=True,
        cwd=ROOT,
    )
    wall = time.perf_counter() - started
    if done.returncode != 0:
        raise RuntimeError(f"build of {source} failed:\n{done.stderr[-3000:]}")
    report = json.loads(done.stdout.strip().splitlines()[-1])
    return Build(out, wall, jobs, report["built"], report["failed"], report["seconds"])


def source(quick: bool) -> Path:
    """The scenario folder a run builds: scenarios/, or a copy holding the quick subset."""
    if not quick:
        return SCENARIOS
    folder = _temp() / "quick-scenarios"
    if not folder.exists():
        shutil.copytree(SCENARIOS, folder)
        for path in folder.glob("*.toml"):
            if path.name.split(".")[0] not in QUICK_SUBSET:
                path.unlink()
    return folder


def bundled(quick: bool, jobs: int = 2) -> Build:
    """The cold build of the bundled scenarios made in this run (made now if none was yet)."""
    key = f"{quick}-{jobs}"
    if key not in _BUILDS:
        _BUILDS[key] = cold_build(source(quick), _temp() / f"bundled-{key}", jobs)
    return _BUILDS[key]
