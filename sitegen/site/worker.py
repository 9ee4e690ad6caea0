"""One scenario through every stage: load, assess, fit, figures, dossier, card.

:func:`build_scenario` runs in a worker process (or in the main process with
``--jobs 1``) and returns a :class:`ScenarioBuild` of plain data: the files to
write, the card for the site pages, the seconds spent in each stage, or the
error that stopped it. A :class:`~sitegen.errors.ScenarioError` is the user's
to fix and is reported as such; any other exception is a fault of ours and is
reported as one, with the scenario named, while the other scenarios build on.
"""

from __future__ import annotations

import json
import time
import traceback
from dataclasses import dataclass, field
from typing import Any

from markupsafe import Markup

from sitegen.errors import ScenarioError


@dataclass(frozen=True)
class ScenarioBuild:
    """What one scenario contributes to the site.

    ``files`` maps a file name in the output folder to its bytes; ``card`` is
    the JSON data the index, comparison and brief are made from; ``seconds``
    is the time of each stage (load, assess, fit, figures, pages).
    """

    path: str
    slug: str
    key: str
    files: dict[str, bytes] = field(default_factory=dict)
    card: dict[str, Any] | None = None
    error: str | None = None
    seconds: dict[str, float] = field(default_factory=dict)


def _fit(scenario: Any) -> tuple[dict[str, Any] | None, list[Any]]:
    """The fit section's data and figures, when the scenario has monitoring data."""
    from sitegen.figures.fit import fit_figures
    from sitegen.fitting.fit import fit_scenario
    from sitegen.fitting.summary import fit_summary
    from sitegen.pages.fit_section import fit_view

    report = fit_scenario(scenario)
    if report is None:
        return None, []
    return fit_view(fit_summary(report)), list(fit_figures(scenario, report))


def _explorer(
    scenario: Any, model: Any, summary: dict[str, Any]
) -> tuple[Markup | None, str | None, str | None]:
    """(panel markup, script, note): a model the page cannot carry gets a note instead."""
    from sitegen.pages.explorer import ExplorerError, explorer_panel

    try:
        panel = explorer_panel(scenario, model, summary)
    except ExplorerError as error:
        return None, None, f"The live explorer is not available for this model: {error}"
    if panel is None:
        return None, None, None
    return Markup(panel.html), panel.script, None


def preload() -> None:
    """Import every stage now, so worker processes forked afterwards start with them loaded.

    Called by the build only when there is something to build; a no-change rebuild
    never pays for these imports.
    """
    import sitegen.dynamics.assess
    import sitegen.dynamics.report
    import sitegen.figures.fit
    import sitegen.figures.registry
    import sitegen.fitting.fit
    import sitegen.pages.dossier
    import sitegen.pages.explorer
    import sitegen.scenario.loader  # noqa: F401  (imported for its side effect: loaded modules)


def build_scenario(path: str, slug: str, key: str, budget_s: float, version: str) -> ScenarioBuild:
    """Build one scenario's dossier, JSON summary and card (never raises for bad input)."""
    seconds: dict[str, float] = {}
    clock = time.perf_counter()

    def lap(stage: str) -> None:
        nonlocal clock
        now = time.perf_counter()
        seconds[stage] = seconds.get(stage, 0.0) + now - clock
        clock = now

    try:
        from sitegen.dynamics.assess import assess
        from sitegen.dynamics.report import assessment_json, assessment_summary
        from sitegen.figures.registry import figures_for
        from sitegen.model.model import build_model
        from sitegen.pages.dossier import DossierInput, render_dossier, scenario_card
        from sitegen.scenario.loader import load_scenario

        lap("imports")
        scenario = load_scenario(path)
        lap("load")
        assessment = assess(scenario, budget_s)
        summary = assessment_summary(assessment)
        summary_text = assessment_json(assessment)
        lap("assess")
        fit, fit_figures = _fit(scenario)
        lap("fit")
        figures = figures_for(scenario, assessment)
        lap("figures")
        explorer_html, explorer_script, explorer_note = _explorer(
            scenario, build_model(scenario), summary
        )
        dossier = DossierInput(
            scenario=scenario,
            summary=summary,
            figures=figures,
            version=version,
            input_hash=key,
            explorer_html=explorer_html,
            explorer_script=explorer_script,
            explorer_note=explorer_note,
            fit=fit,
            fit_figures=fit_figures,
        )
        page = render_dossier(dossier)
        card = scenario_card(dossier)
        lap("pages")
    except ScenarioError as error:
        return ScenarioBuild(path, slug, key, error=error.render(), seconds=seconds)
    except Exception:  # a fault of ours: report it with the scenario, build the rest
        detail = traceback.format_exc(limit=6)
        message = (
            f"{path}: internal error while building this scenario (please report it)\n{detail}"
        )
        return ScenarioBuild(path, slug, key, error=message, seconds=seconds)
    files = {
        f"{slug}.html": page.encode("utf-8"),
        f"{slug}.json": (summary_text + "\n").encode("utf-8"),
    }
    # The card goes through JSON now, so a cached card and a fresh one are the same data.
    card = json.loads(json.dumps(card, sort_keys=True, allow_nan=False))
    return ScenarioBuild(path, slug, key, files=files, card=card, seconds=seconds)
