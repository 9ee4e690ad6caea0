"""The site build: cold build and no-change rebuild against the import floor, page weight,
and where the time goes (the build's stages, then the kinds of work inside them).

- Cold build: the bundled scenarios into a fresh temporary folder, a new
  interpreter, ``--jobs 2`` (see :mod:`bench.bundled_site`), wall time.
- No-change rebuild: ``python -m sitegen build scenarios --out SAME`` as a
  subprocess, best of five wall times; target within 1.5 times the import
  floor (``python -c "import numpy, sympy, scipy, matplotlib, jinja2, markdown"``,
  best of five, each measured just before a rebuild so both see the same load).
  A rebuild that rebuilt anything (someone changed the code in between, which
  changes every cache key) is not counted and is said so.
- Page weight: the size of every ``<slug>.html``; target each under 1 MB.
- Stages: ``BuildReport.seconds`` of the cold build (seconds per stage summed
  over scenarios, so with two workers they add up to about twice the wall time),
  and the kinds of work inside them (symbolic, numeric, continuation, maps,
  policies, uncertainty, sensitivity, figures, pages) timed on one scenario in
  this process (``--quick``) or on every bundled scenario (full run).
"""

from __future__ import annotations

import re
import subprocess
import sys
import time
from pathlib import Path

from bench.bundled_site import QUICK_SUBSET, ROOT, SCENARIOS, bundled, source
from bench.imports_bench import import_floor_s
from bench.registry import Result, benchmark
from bench.stage_timer import stage_seconds

REBUILD_TARGET = 1.5  # times the import floor
PAGE_LIMIT = 1_000_000  # bytes
SITE_PAGES = {"index", "compare", "brief"}
QUICK_STAGE_SCENARIO = "brindle-shrimp"  # three ranged parameters, two maps


def _rebuild_once(folder: Path, out: Path) -> tuple[float, bool]:
    """Wall time of one ``sitegen build`` over ``out``, and whether it rebuilt nothing."""
    started = time.perf_counter()
    done = subprocess.run(
        [sys.executable, "-m", "sitegen", "build", str(folder), "--out", str(out)],
        capture_output=True,
        text=True,
        cwd=ROOT,
    )
    seconds = time.perf_counter() - started
    found = re.search(r"(\d+) built, (\d+) unchanged", done.stdout)
    if found is None:
        raise RuntimeError(f"sitegen build said nothing usable:\n{done.stderr[-2000:]}")
    return seconds, int(found.group(1)) == 0


def rebuild_and_floor(folder: Path, out: Path, repeats: int) -> tuple[float, float, int]:
    """Best no-change rebuild and best import floor, measured in turn (same load on both).

    A rebuild that rebuilt anything is discarded (at most ``repeats`` extra tries).
    """
    rebuild, floor, discarded = float("inf"), float("inf"), 0
    counted = 0
    while counted < repeats and discarded <= repeats:
        floor = min(floor, import_floor_s(1))
        seconds, unchanged = _rebuild_once(folder, out)
        if not unchanged:
            discarded += 1
            continue
        rebuild = min(rebuild, seconds)
        counted += 1
    return rebuild, floor, discarded


def _listing(seconds: dict[str, float]) -> str:
    total = sum(seconds.values()) or 1.0
    ordered = sorted(seconds.items(), key=lambda item: -item[1])
    return ", ".join(
        f"{name} {value:.2f} s ({100 * value / total:.0f}%)" for name, value in ordered
    )


def _stage_split(quick: bool) -> tuple[dict[str, float], str]:
    names = [QUICK_STAGE_SCENARIO] if quick else sorted(p.stem for p in SCENARIOS.glob("*.toml"))
    totals: dict[str, float] = {}
    for name in names:
        kinds, _ = stage_seconds(str(SCENARIOS / f"{name}.toml"))
        for kind, value in kinds.items():
            totals[kind] = totals.get(kind, 0.0) + value
    where = f"{names[0]} (--quick)" if quick else f"all {len(names)} bundled scenarios"
    return totals, where


@benchmark("build")
def run(quick: bool) -> list[Result]:
    build = bundled(quick, jobs=2)
    repeats = 5
    rebuild, floor, discarded = rebuild_and_floor(source(quick), build.out, repeats)
    pages = sorted(
        (path.stat().st_size, path.stem)
        for path in build.out.glob("*.html")
        if path.stem not in SITE_PAGES
    )
    largest, largest_name = pages[-1]
    over = [f"{name} ({size / 1e6:.2f} MB)" for size, name in pages if size >= PAGE_LIMIT]
    mean = sum(size for size, _ in pages) / len(pages)
    stage_total = sum(build.seconds.values())
    slowest_stage = max(build.seconds, key=lambda name: build.seconds[name])
    kinds, where = _stage_split(quick)
    slowest_kind = max(kinds, key=lambda name: kinds[name])
    skipped = (
        f"; {discarded} run(s) rebuilt scenarios (code changed meanwhile), not counted"
        if discarded
        else ""
    )
    failed = f"; failed: {', '.join(build.failed)}" if build.failed else ""
    subset = (
        f" (--quick: {len(QUICK_SUBSET)} of the {len(list(SCENARIOS.glob('*.toml')))}: "
        f"{', '.join(QUICK_SUBSET)})"
        if quick
        else ""
    )
    return [
        Result(
            f"cold build of {len(build.built)} bundled scenarios (--jobs {build.jobs})",
            build.wall_s,
            "s",
            floor,
            "import floor",
            build.wall_s / floor,
            "reference only",
            True,
            f"wall time of a new interpreter building into an empty folder{subset}{failed}",
        ),
        Result(
            "no-change rebuild of the bundled scenarios",
            rebuild,
            "s",
            floor,
            "import floor",
            rebuild / floor,
            f"rebuild <= {REBUILD_TARGET}x the import floor",
            rebuild <= REBUILD_TARGET * floor,
            f"ratio = rebuild / floor; best of {repeats} subprocess runs of each, in turn"
            + skipped,
        ),
        Result(
            f"page weight of each dossier (largest of {len(pages)})",
            largest / 1e6,
            "MB",
            None,
            "",
            None,
            "each < 1 MB",
            not over,
            f"largest {largest_name}; mean {mean / 1e6:.2f} MB"
            + (f"; over 1 MB: {', '.join(over)}" if over else "; none over 1 MB"),
        ),
        Result(
            f"stages of the cold build, summed over scenarios (slowest: {slowest_stage})",
            build.seconds[slowest_stage],
            "s",
            stage_total,
            "all stages",
            build.seconds[slowest_stage] / stage_total,
            "reference only",
            True,
            _listing(build.seconds),
        ),
        Result(
            f"kinds of work in one build, {where} (slowest: {slowest_kind})",
            kinds[slowest_kind],
            "s",
            sum(kinds.values()),
            "all kinds",
            kinds[slowest_kind] / sum(kinds.values()),
            "reference only",
            True,
            "exclusive seconds, in this process, --jobs 1: " + _listing(kinds),
        ),
    ]
