"""``sitegen build``: every scenario through every stage, then the site, written atomically.

The build never leaves a half-written site. Everything goes into a staging
folder beside the output (``.<name>.staging-<pid>``); only when every page is
written does the staging folder take the output's place (two renames). A build
killed at any point leaves the previous output as it was.

Scenarios whose inputs and tool are unchanged come from the cache (see
:mod:`sitegen.site.cache`); a second build of unchanged input is byte-identical
and runs no analysis. Scenarios that fail are listed on the index with their
error; the rest of the site is built as usual.

The output folder must be empty, absent, or a previous sitegen build (it holds
the marker file ``.sitegen-build``): the build replaces it wholesale, so it
refuses to replace a folder it did not make. Hidden files other than ours in a
previous build (``.gitkeep``) are carried over.
"""

from __future__ import annotations

import os
import shutil
import time
from collections.abc import Callable, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field
from multiprocessing import get_context
from pathlib import Path

from sitegen.site import cache
from sitegen.site.worker import ScenarioBuild, build_scenario, preload

MARKER = ".sitegen-build"
RESERVED = frozenset({"index", "compare", "brief"})
SITE_PAGES = ("index.html", "compare.html", "brief.html")


class BuildError(Exception):
    """A problem with the build as a whole (the output folder, the paths given)."""


@dataclass
class BuildReport:
    """What a build did: scenarios built, taken from the cache, failed; time per stage."""

    out: Path
    built: list[str] = field(default_factory=list)
    reused: list[str] = field(default_factory=list)
    failed: list[tuple[str, str]] = field(default_factory=list)
    seconds: dict[str, float] = field(default_factory=dict)
    total_seconds: float = 0.0


@dataclass(frozen=True)
class _Job:
    path: Path
    slug: str
    key: str


def _scenario_files(paths: Sequence[str]) -> list[Path]:
    """Scenario files named by ``paths`` (files, or folders searched for ``*.toml``)."""
    from sitegen.scenario.inputs import is_companion

    found: list[Path] = []
    for text in paths:
        path = Path(text)
        if path.is_dir():
            found.extend(p for p in sorted(path.glob("*.toml")) if not is_companion(p))
        elif path.is_file():
            found.append(path)
        else:
            raise BuildError(f"{text}: no such file or folder")
    if not found:
        raise BuildError(f"no scenario files (*.toml) in {', '.join(paths)}")
    return found


def _jobs(files: list[Path], budget_s: float) -> tuple[list[_Job], list[tuple[str, str]]]:
    from sitegen.scenario.inputs import scenario_inputs

    jobs: list[_Job] = []
    clashes: list[tuple[str, str]] = []
    seen: dict[str, Path] = {}
    for path in files:
        slug = path.stem
        if slug.lower() in RESERVED:
            clashes.append(
                (str(path), f"{path}: the name '{slug}' is taken by a site page; rename the file")
            )
            continue
        if slug.lower() in seen:
            other = seen[slug.lower()]
            message = (
                f"{path}: another scenario ({other}) has the same file name, and both would be "
                f"written as {slug}.html; rename one of them"
            )
            clashes.append((str(path), message))
            continue
        seen[slug.lower()] = path
        jobs.append(_Job(path, slug, cache.scenario_key(scenario_inputs(path), budget_s)))
    return jobs, clashes


def _check_output(out: Path) -> None:
    if out.exists() and not out.is_dir():
        raise BuildError(f"{out} is a file; give --out a folder")
    if out.is_dir() and any(out.iterdir()) and not (out / MARKER).exists():
        hidden_only = all(p.name.startswith(".") and p.is_file() for p in out.iterdir())
        if not hidden_only:
            raise BuildError(
                f"{out} holds files that sitegen build did not write; choose another --out "
                "or empty the folder (the build replaces the whole folder)"
            )


def _clear_leftovers(out: Path) -> None:
    """Remove staging and retired folders of builds that were killed."""
    for leftover in out.parent.glob(f".{out.name}.staging-*"):
        shutil.rmtree(leftover, ignore_errors=True)
    for leftover in out.parent.glob(f".{out.name}.old-*"):
        shutil.rmtree(leftover, ignore_errors=True)


def _progress_line(result: ScenarioBuild) -> str:
    seconds = sum(result.seconds.values())
    verdict = "failed (see the index)" if result.error else "built"
    return f"{result.slug}: {verdict} in {seconds:.1f} s"


def _run_jobs(
    todo: list[_Job],
    budget_s: float,
    version: str,
    workers: int,
    say: Callable[[str], None],
) -> list[ScenarioBuild]:
    """Build every job, reporting one line per scenario as it finishes."""
    results: list[ScenarioBuild] = []
    if workers <= 1 or len(todo) <= 1:
        for j in todo:
            results.append(build_scenario(str(j.path), j.slug, j.key, budget_s, version))
            say(_progress_line(results[-1]))
        return results
    # Fork: workers inherit the modules loaded here once instead of each importing them;
    # the SymPy worker inside each forks again.
    preload()
    with ProcessPoolExecutor(
        max_workers=min(workers, len(todo)), mp_context=get_context("fork")
    ) as pool:
        futures = [
            pool.submit(build_scenario, str(j.path), j.slug, j.key, budget_s, version) for j in todo
        ]
        for future in as_completed(futures):
            say(_progress_line(future.result()))
        return [f.result() for f in futures]


def _swap(staging: Path, out: Path) -> None:
    retired = out.parent / f".{out.name}.old-{os.getpid()}"
    if out.exists():
        os.rename(out, retired)
    os.rename(staging, out)
    shutil.rmtree(retired, ignore_errors=True)


def build_site(
    paths: Sequence[str],
    out: Path,
    jobs: int = 1,
    budget_s: float = 5.0,
    version: str = "",
    progress: Callable[[str], None] | None = None,
) -> BuildReport:
    """Build the site for the scenarios under ``paths`` into ``out``; see the module notes."""
    started = time.perf_counter()
    say = progress or (lambda _message: None)
    out = out.resolve()
    _check_output(out)
    files = _scenario_files(paths)
    job_list, clashes = _jobs(files, budget_s)
    report = BuildReport(out)
    cached: dict[str, dict] = {}
    todo: list[_Job] = []
    for job in job_list:
        entry = cache.read_entry(out, job.key) if out.is_dir() else None
        if entry is not None and entry["slug"] == job.slug:
            cached[job.key] = entry
        else:
            todo.append(job)
    if todo:
        say(f"building {len(todo)} scenario(s), {len(cached)} unchanged")
    results = _run_jobs(todo, budget_s, version, jobs, say)

    out.parent.mkdir(parents=True, exist_ok=True)
    _clear_leftovers(out)
    staging = out.parent / f".{out.name}.staging-{os.getpid()}"
    staging.mkdir()
    try:
        cards, failures = _write_scenarios(out, staging, job_list, cached, results, report)
        failures.extend(clashes)
        report.failed.extend(clashes)
        _write_site_pages(staging, paths, cards, failures, version)
        _carry_hidden_files(out, staging)
        (staging / MARKER).write_text("written by sitegen build; safe to delete\n", "utf-8")
        _swap(staging, out)
    except BaseException:
        shutil.rmtree(staging, ignore_errors=True)
        raise
    report.total_seconds = time.perf_counter() - started
    return report


def _write_scenarios(
    out: Path,
    staging: Path,
    job_list: list[_Job],
    cached: dict[str, dict],
    results: list[ScenarioBuild],
    report: BuildReport,
) -> tuple[list[dict], list[tuple[str, str]]]:
    fresh = {r.key: r for r in results}
    cards: list[dict] = []
    failures: list[tuple[str, str]] = []
    for job in job_list:
        if job.key in cached:
            entry = cached[job.key]
            cache.carry_entry(out, staging, job.key)
            files, card, error = entry["files"], entry["card"], entry["error"]
            report.reused.append(job.slug)
        else:
            result = fresh[job.key]
            files, card, error = result.files, result.card, result.error
            cache.write_entry(staging, job.key, job.slug, str(job.path), files, card, error)
            for stage, seconds in result.seconds.items():
                report.seconds[stage] = report.seconds.get(stage, 0.0) + seconds
            report.built.append(job.slug)
        for name, data in files.items():
            (staging / name).write_bytes(data)
        if error is not None:
            failures.append((str(job.path), error))
            report.failed.append((str(job.path), error))
        elif card is not None:
            cards.append(card)
    return cards, failures


def _write_site_pages(
    staging: Path,
    paths: Sequence[str],
    cards: list[dict],
    failures: list[tuple[str, str]],
    version: str,
) -> None:
    from sitegen.pages.site_pages import Failure, render_brief, render_compare, render_index

    narrative = _narrative(paths)
    fails = [Failure(path, message) for path, message in failures]
    pages = {
        "index.html": render_index(cards, fails, version),
        "compare.html": render_compare(cards, version),
        "brief.html": render_brief(cards, narrative, version),
    }
    for name, text in pages.items():
        (staging / name).write_text(text, encoding="utf-8")


def _narrative(paths: Sequence[str]) -> str | None:
    """The brief's front text: ``brief.md`` in the first folder given that has one."""
    from sitegen.scenario.narrative import read_narrative

    for text in paths:
        if Path(text).is_dir() and (found := read_narrative(Path(text))) is not None:
            return found
    return None


def _carry_hidden_files(out: Path, staging: Path) -> None:
    if not out.is_dir():
        return
    for item in out.iterdir():
        if item.is_file() and item.name.startswith(".") and item.name != MARKER:
            shutil.copy2(item, staging / item.name)


def default_jobs() -> int:
    return max(1, min(os.cpu_count() or 1, 8))
