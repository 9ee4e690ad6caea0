"""Page load: each bundled dossier opened from ``file://`` in headless Chromium.

Debian's ``/usr/bin/chromium`` through Python playwright (never a downloaded
browser), every host name but localhost resolving to nothing, so a page that
reached for the network would fail rather than wait. The figure is the time
from navigation start to the end of the load event, read in the page from the
Navigation Timing entry (``loadEventEnd``), best of a few loads of each page in
a fresh page object; the baseline is the same for a one-line HTML file, loaded
in the same browser in the same run (the browser's own cost). The slider
update timing of the in-page explorer is the explorer benchmark's, not this one's.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from bench.bundled_site import bundled
from bench.registry import Result, benchmark

CHROMIUM = "/usr/bin/chromium"
FLAGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--host-resolver-rules=MAP * ~NOTFOUND , EXCLUDE localhost",
]
SITE_PAGES = {"index", "compare", "brief"}
TARGET_MS = 1000.0  # our own: a dossier on a file share opens within a second
LOAD_END = "performance.getEntriesByType('navigation')[0].loadEventEnd"


def load_ms(browser: Any, path: Path, repeats: int) -> float:
    """Best time to the end of the load event of ``path`` (milliseconds)."""
    best = float("inf")
    for _ in range(repeats):
        page = browser.new_page()
        try:
            page.goto(path.as_uri(), wait_until="load")
            page.wait_for_function(f"{LOAD_END} > 0")
            best = min(best, float(page.evaluate(LOAD_END)))
        finally:
            page.close()
    return best


def _not_run(reason: str) -> list[Result]:
    return [
        Result(
            "page load of each dossier in headless Chromium",
            float("nan"),
            "ms",
            None,
            "",
            None,
            f"worst < {TARGET_MS:g} ms",
            False,
            f"not measured: {reason}",
        )
    ]


@benchmark("page load")
def run(quick: bool) -> list[Result]:
    if not os.path.exists(CHROMIUM):
        return _not_run(f"{CHROMIUM} is missing (apt-get install -y chromium)")
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        return _not_run("Python playwright is missing (pip install -e '.[test]')")
    build = bundled(quick, jobs=2)
    pages = sorted(p for p in build.out.glob("*.html") if p.stem not in SITE_PAGES)
    blank = build.out.parent / "bench-blank.html"
    blank.write_text("<!doctype html><title>blank</title><p>blank</p>\n", encoding="utf-8")
    repeats = 2 if quick else 5
    with sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=FLAGS)
        try:
            load_ms(browser, blank, 1)  # the first page of a browser pays its start-up
            baseline = load_ms(browser, blank, repeats)
            times = {p.stem: load_ms(browser, p, repeats) for p in pages}
        finally:
            browser.close()
    worst_name = max(times, key=lambda name: times[name])
    worst = times[worst_name]
    mean = sum(times.values()) / len(times)
    return [
        Result(
            f"page load (to the load event) of the {len(times)} dossiers, worst",
            worst,
            "ms",
            baseline,
            "one-line page",
            worst / baseline,
            f"worst < {TARGET_MS:g} ms",
            worst < TARGET_MS,
            f"worst {worst_name}; mean {mean:.0f} ms; best of {repeats} loads each from "
            "file:// (ratio = worst / one-line page)",
        ),
        Result(
            f"page load (to the load event) of the {len(times)} dossiers, mean",
            mean,
            "ms",
            baseline,
            "one-line page",
            mean / baseline,
            "reference only",
            True,
            ", ".join(f"{name} {value:.0f}" for name, value in sorted(times.items())) + " (ms)",
        ),
    ]
