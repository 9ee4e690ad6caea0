"""Shared fixtures: the demo site, built once per test session from scenarios/.

Building the bundled scenarios is the slowest single step of the suite, so every
test that needs real pages shares this one build.
"""

from __future__ import annotations

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
# The headless-Chromium fixture (``browser``) for every test module that asks for it.
pytest_plugins = ("browser_support",)


@pytest.fixture(scope="session")
def demo_site(tmp_path_factory: pytest.TempPathFactory):
    """(output folder, BuildReport) of ``sitegen build scenarios/`` into a temporary folder."""
    from sitegen import __version__
    from sitegen.site.build import build_site, default_jobs

    out = tmp_path_factory.mktemp("demo") / "build"
    report = build_site([str(ROOT / "scenarios")], out, jobs=default_jobs(), version=__version__)
    return out, report
