"""Shared helper of the page tests: one headless Debian Chromium per session, offline pages.

tests/conftest.py loads this module as a plugin, so every test module gets the one
session-wide ``browser`` fixture (importing the fixture into a module would start a
second Playwright session, which Playwright refuses). Use it with::

    from browser_support import open_page

    def test_something(browser, tmp_path):
        visit = open_page(browser, tmp_path / "page.html")
        assert visit.problems() == []

The browser is Debian's ``/usr/bin/chromium`` driven by Python playwright (never a
downloaded browser). Every host name except localhost resolves to nothing, so a page
that tries to reach the network fails loudly instead of hanging; :class:`PageVisit`
records console errors, uncaught page errors (including CSP violations, which Chromium
reports as console errors) and every request whose URL is neither ``file:`` nor
``data:``. A missing Chromium is a test failure with the fix in the message, not a skip:
CI installs it.
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pytest

CHROMIUM = "/usr/bin/chromium"
INSTALL_HINT = "run `apt-get install -y chromium chromium-driver` (CI installs it)"
CHROMIUM_FLAGS = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--host-resolver-rules=MAP * ~NOTFOUND , EXCLUDE localhost",
)
LOCAL_SCHEMES = ("file:", "data:", "about:")


def launch_browser(playwright: Any) -> Any:
    """Debian Chromium through playwright; fails (never skips) when it is not installed."""
    if not os.path.exists(CHROMIUM):
        pytest.fail(f"{CHROMIUM} is missing: {INSTALL_HINT}", pytrace=False)
    return playwright.chromium.launch(executable_path=CHROMIUM, args=list(CHROMIUM_FLAGS))


@pytest.fixture(scope="session")
def browser() -> Iterator[Any]:
    """One headless Chromium for the whole test session (page loads are the cost)."""
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:  # pragma: no cover - the test extra installs it
        pytest.fail("Python playwright is missing: pip install -e '.[test]'", pytrace=False)
    with sync_playwright() as playwright:
        chromium = launch_browser(playwright)
        try:
            yield chromium
        finally:
            chromium.close()


@dataclass
class PageVisit:
    """One opened page and what went wrong on it."""

    page: Any
    console_errors: list[str] = field(default_factory=list)
    page_errors: list[str] = field(default_factory=list)
    outside_requests: list[str] = field(default_factory=list)

    def problems(self) -> list[str]:
        """Everything recorded, one line each; an empty list means a clean page."""
        return (
            [f"console error: {text}" for text in self.console_errors]
            + [f"page error: {text}" for text in self.page_errors]
            + [f"request outside the file: {url}" for url in self.outside_requests]
        )

    def close(self) -> None:
        self.page.context.close()


def open_page(browser: Any, path: Path, *, javascript: bool = True) -> PageVisit:
    """Open ``path`` as a file:// URL in a fresh context and record its problems.

    Listeners are attached before navigation, so errors during load are caught. Close
    the visit (``visit.close()``) when done; contexts are cheap, browsers are not.
    """
    context = browser.new_context(java_script_enabled=javascript)
    page = context.new_page()
    visit = PageVisit(page)
    page.on(
        "console",
        lambda message: (
            visit.console_errors.append(message.text) if message.type == "error" else None
        ),
    )
    page.on("pageerror", lambda error: visit.page_errors.append(str(error)))
    page.on(
        "request",
        lambda request: (
            None
            if request.url.startswith(LOCAL_SCHEMES)
            else visit.outside_requests.append(request.url)
        ),
    )
    page.goto(Path(path).resolve().as_uri())
    page.wait_for_load_state("load")
    return visit
