"""The in-page explorer: consecutive slider updates in headless Chromium, timed in the page.

Each update is one ``input`` event on a slider; the handler recomputes everything
synchronously (equilibria, lever limit by continuation and bisection, trajectory,
readouts, both SVG plots), so ``performance.now()`` around ``dispatchEvent`` times the
whole update. The sweep moves the growth rate of the insect-outbreak scenario
(scenarios/quillan-defoliator.toml) across its range, through both folds, then the
spraying lever, so the expensive case (a lever limit found by bisection) is included.
Target: mean under 16 ms, one frame at 60 Hz (issue 7).
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

from bench.registry import Result, benchmark
from sitegen.model.model import build_model
from sitegen.pages.explorer import explorer_panel
from sitegen.pages.render import content_security_policy
from sitegen.scenario.loader import load_scenario

SCENARIO = Path(__file__).resolve().parent.parent / "scenarios" / "quillan-defoliator.toml"
TARGET_MS = 16.0

SWEEP = """([count, ids]) => {
  const times = [];
  const sliders = ids.map(id => document.getElementById(id));
  for (let i = 0; i < count; i++) {
    const slider = sliders[i < count / 2 ? 0 : 1];
    const lo = Number(slider.min), hi = Number(slider.max), half = count / 2;
    slider.value = String(lo + ((hi - lo) * (i % half)) / (half - 1));
    const start = performance.now();
    slider.dispatchEvent(new Event('input', { bubbles: true }));
    times.push(performance.now() - start);
  }
  return times;
}"""


def _page(folder: Path) -> tuple[Path, list[str]]:
    """The bench page, and the ids of the growth-rate and lever sliders."""
    scenario = load_scenario(str(SCENARIO))
    model = build_model(scenario)
    panel = explorer_panel(scenario, model, {})
    assert panel is not None and model.lever is not None
    ids = [f"explorer-range-{model.ranged.index(name)}" for name in ("r", model.lever)]
    path = folder / "explorer-bench.html"
    policy = content_security_policy((panel.script,))
    path.write_text(
        '<!doctype html><html lang="en"><head><meta charset="utf-8">'
        f'<meta http-equiv="Content-Security-Policy" content="{policy}"><title>bench</title>'
        f"</head><body>{panel.html}<script>{panel.script}</script></body></html>",
        encoding="utf-8",
    )
    return path, ids


@benchmark("explorer")
def explorer_updates(quick: bool) -> list[Result]:
    """Mean and worst time per slider update, in the page (ms)."""
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
    from browser_support import launch_browser
    from playwright.sync_api import sync_playwright

    count = 40 if quick else 200
    with tempfile.TemporaryDirectory() as folder, sync_playwright() as playwright:
        browser = launch_browser(playwright)
        try:
            page = browser.new_page()
            path, ids = _page(Path(folder))
            page.goto(path.as_uri())
            page.evaluate(SWEEP, [20, ids])  # warm the JIT before timing
            times = page.evaluate(SWEEP, [count, ids])
        finally:
            browser.close()
    mean = sum(times) / len(times)
    worst = max(times)
    detail = f"{count} updates (r then m swept across their ranges); worst {worst:.3g} ms"
    return [
        Result(
            "explorer: slider update, mean",
            mean,
            "ms",
            None,
            "",
            None,
            f"< {TARGET_MS:g} ms",
            mean < TARGET_MS,
            detail,
        ),
        Result(
            "explorer: slider update, worst",
            worst,
            "ms",
            None,
            "",
            None,
            "recorded",
            True,
            f"{count} updates",
        ),
    ]
