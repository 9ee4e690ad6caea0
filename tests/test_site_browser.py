"""The demo site in a real browser: Debian's Chromium, headless, driven by Playwright.

Every page is opened from ``file://`` as a user would open it from a share: no
console error, no request to anything but ``file:`` and ``data:`` URLs, no
horizontal overflow on a phone (390 px) or a desktop (1280 px) screen, and
printing to PDF in A4 and Letter works. The browser is the system one
(/usr/bin/chromium); nothing is downloaded.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from browser_support import PageVisit, open_page

WIDTHS = (390, 1280)


def _pages(out: Path) -> list[Path]:
    return sorted(out.glob("*.html"))


def _open(browser, page_path: Path, width: int) -> PageVisit:
    visit = open_page(browser, page_path)
    visit.page.set_viewport_size({"width": width, "height": 900})
    return visit


def test_demo_site_built_every_scenario(demo_site) -> None:
    out, report = demo_site
    assert report.failed == [], report.failed
    assert len(_pages(out)) >= 13  # at least ten dossiers and the three site pages


@pytest.mark.parametrize("width", WIDTHS)
def test_every_page_opens_clean_and_fits_the_screen(demo_site, browser, width: int) -> None:
    out, _ = demo_site
    failures = []
    for path in _pages(out):
        visit = _open(browser, path, width)
        problems = visit.problems()
        overflow = visit.page.evaluate(
            "document.documentElement.scrollWidth - document.documentElement.clientWidth"
        )
        if overflow > 0:
            problems.append(f"horizontal overflow of {overflow}px")
        failures.extend(f"{path.name} at {width}px: {p}" for p in problems)
        visit.close()
    assert failures == []


def test_links_between_pages_resolve(demo_site, browser) -> None:
    out, _ = demo_site
    visit = _open(browser, out / "index.html", 1280)
    hrefs = visit.page.eval_on_selector_all(
        "main a[href]", "els => els.map(e => e.getAttribute('href'))"
    )
    local = {h.split("#")[0] for h in hrefs if h and not h.startswith(("#", "data:"))}
    assert {"compare.html", "brief.html"} <= local
    for href in sorted(local):
        assert (out / href).is_file(), href
    # every dossier is reachable from the index
    dossiers = {p.name for p in _pages(out)} - {"index.html", "compare.html", "brief.html"}
    assert dossiers <= local
    visit.close()
    assert visit.problems() == []


@pytest.mark.parametrize("paper", ["A4", "Letter"])
def test_brief_and_a_dossier_print_to_pdf(demo_site, browser, paper: str) -> None:
    out, _ = demo_site
    for name in ("brief.html", "coastal-sprat.html"):
        visit = _open(browser, out / name, 1280)
        visit.page.emulate_media(media="print")
        pdf = visit.page.pdf(format=paper, print_background=True)
        assert pdf.startswith(b"%PDF-") and len(pdf) > 20_000, name
        pages = pdf.count(b"/Type /Page") - pdf.count(b"/Type /Pages")
        assert pages >= 2, f"{name} printed to {pages} page(s)"
        visit.close()
        assert visit.problems() == []


def test_scripts_off_the_dossier_is_complete(demo_site, browser) -> None:
    out, _ = demo_site
    visit = open_page(browser, out / "coastal-sprat.html", javascript=False)
    text = visit.page.inner_text("main")
    for heading in ("The model", "Equilibria and stability", "Limits and margins", "Cautions"):
        assert heading in text
    assert visit.page.locator("figure svg").count() >= 5
    visit.close()


def test_compare_tables_sort_by_a_column(demo_site, browser) -> None:
    out, _ = demo_site
    visit = _open(browser, out / "compare.html", 1280)
    tables = visit.page.locator("table.sortable")
    assert tables.count() >= 1, "the bundled fisheries scenarios share a tag and have policies"
    first = tables.first
    button = first.locator("thead button").nth(1)  # the stable-state column
    button.click()
    heading = first.locator("thead th").nth(1)
    assert heading.get_attribute("aria-sort") == "ascending"
    button.click()
    assert heading.get_attribute("aria-sort") == "descending"
    visit.close()
    assert visit.problems() == []
