"""The in-page explorer (issue 7): generated JavaScript against NumPy, readouts in headless
Chromium against the Python analysis and against published closed forms.

One browser for the module (tests/browser_support.py) and one page load per scenario:
each page is a minimal document with the site's Content-Security-Policy (the script is
allowed only by its SHA-256 hash), so a CSP violation shows up as a console error.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import html5lib
import numpy as np
import pytest
import sympy
from browser_support import open_page  # the browser fixture comes from conftest.py
from continuation_support import make_model
from scipy.integrate import solve_ivp
from scipy.optimize import minimize_scalar

from sitegen.analysis.equilibria import find_equilibria
from sitegen.model.model import Model, build_model
from sitegen.pages.explorer import (
    MAX_SCRIPT_BYTES,
    ExplorerError,
    explorer_panel,
    javascript_expression,
    javascript_functions,
)
from sitegen.pages.render import content_security_policy
from sitegen.scenario.loader import load_scenario, load_text

SCENARIOS = Path(__file__).resolve().parent.parent / "scenarios"
REL_TOL = 1e-6  # equilibria in the page against the Python analysis (issue 7)
LIMIT_TOL = 1e-8  # lever limits against closed forms / SciPy references
JS_TOL = 1e-12  # the printed JavaScript against NumPy, relative to the grid's scale

# Every function and operator the formula parser accepts (sitegen/scenario/formula.py:
# abs exp log log2 max min sqrt tanh pi, + - * / ^), over parameters whose names are
# JavaScript globals or keywords.
ALL_FUNCTIONS_RATE = (
    "new*abs(x - Math) + exp(-x/window) + log(x + 1) + log(x + 2, 10) + max(x, Math, 0.5)"
    " - min(x^2, constructor) + sqrt(x + 1)*tanh(x - 1) + pi*x^(3/2) - x^new/(1 + x^2)"
    " - constructor^2"
)
ALL_FUNCTIONS_PARAMETERS: dict[str, tuple[float, tuple[float, float] | None]] = {
    "new": (1.3, (1.0, 2.0)),
    "Math": (1.1, (0.5, 2.0)),
    "window": (2.0, None),
    "constructor": (2.2, (1.0, 3.0)),
}


def _page(tmp: Path, scenario: Any, model: Model, name: str) -> Path:
    panel = explorer_panel(scenario, model, {})
    assert panel is not None
    policy = content_security_policy((panel.script,))
    path = tmp / f"{name}.html"
    path.write_text(
        '<!doctype html><html lang="en"><head><meta charset="utf-8">'
        f'<meta http-equiv="Content-Security-Policy" content="{policy}">'
        f"<title>{name}</title></head><body><main>{panel.html}</main>"
        f"<script>{panel.script}</script></body></html>",
        encoding="utf-8",
    )
    return path


def _bundled(slug: str) -> tuple[Any, Model]:
    scenario = load_scenario(str(SCENARIOS / f"{slug}.toml"))
    return scenario, build_model(scenario)


@pytest.fixture(scope="module")
def pages(browser, tmp_path_factory) -> dict[str, Any]:
    """One open page per scenario (kept for the module), and what each is built from."""
    tmp = tmp_path_factory.mktemp("explorer")
    opened: dict[str, Any] = {}
    for slug in (
        "quillan-defoliator",
        "upland-deer",
        "coastal-sprat",
        "brindle-shrimp",
        "vellamere-lake",
    ):
        scenario, model = _bundled(slug)
        opened[slug] = (open_page(browser, _page(tmp, scenario, model, slug)), model)
    yield opened
    for visit, _ in opened.values():
        visit.close()


def _set(visit: Any, model: Model, values: dict[str, float]) -> None:
    """Reset, then type each value into its number field (an input event per field)."""
    visit.page.click("#explorer-reset-all")
    for name, value in values.items():
        visit.page.fill(f"#explorer-number-{model.ranged.index(name)}", repr(float(value)))


def _readout(visit: Any) -> dict[str, Any]:
    return visit.page.evaluate(
        """() => ({
          equilibria: Array.from(document.querySelectorAll('#explorer-equilibria li[data-value]'))
            .map(li => [Number(li.dataset.value), li.dataset.stability]),
          sentence: document.getElementById('explorer-sentence').textContent,
          fate: document.getElementById('explorer-sentence').dataset.fate,
          time: document.getElementById('explorer-sentence').dataset.time,
          lever: Object.assign({}, document.getElementById('explorer-lever').dataset),
          leverText: document.getElementById('explorer-lever').textContent,
        })"""
    )


# -- settings read in the page against find_equilibria at the same values ---------------

CASES = [
    # three positive equilibria, endemic / threshold / outbreak (Ludwig et al. 1978)
    ("quillan-defoliator", {}),
    ("quillan-defoliator", {"r": 1.5}),  # past the fold in r: the endemic state is gone
    ("quillan-defoliator", {"K": 150.0, "m": 0.2}),
    ("upland-deer", {}),  # Allee threshold below the stable herd
    ("upland-deer", {"H": 0.0, "A": 400.0}),  # 0 stable, A unstable, K stable
    ("upland-deer", {"H": 300.0}),  # past the fold in the lever
    ("coastal-sprat", {}),
    ("coastal-sprat", {"r": 0.4, "K": 1200.0}),
    ("coastal-sprat", {"H": 140.0}),
    ("coastal-sprat", {"H": 125.0}),  # at the fold H = rK/4: one double root, semi-stable
    ("coastal-sprat", {"H": 124.999}),  # just before it: two roots 2.8 kt apart, one cell
    ("vellamere-lake", {}),  # better = lower: clear-water state, threshold, turbid state
    ("brindle-shrimp", {"H": 0.0}),  # r B log(K/B) is undefined at 0 but tends to 0 there
]


@pytest.mark.parametrize(("slug", "values"), CASES)
def test_equilibria_match_the_python_analysis(pages, slug, values) -> None:
    visit, model = pages[slug]
    _set(visit, model, values)
    shown = _readout(visit)["equilibria"]
    expected, _ = find_equilibria(model.with_values(values))
    width = model.region[1] - model.region[0]
    assert [s for _, s in shown] == [e.stability for e in expected]
    for (value, _), reference in zip(shown, expected, strict=True):
        assert abs(value - reference.value) <= REL_TOL * max(abs(reference.value), 1e-9 * width)
    assert visit.problems() == []


def test_lever_limit_is_the_schaefer_msy(pages) -> None:
    """Logistic growth with a constant catch H: the stable state vanishes at H = rK/4, the
    maximum of the surplus production curve (Schaefer 1954; Clark 1990, sec. 1.2)."""
    visit, model = pages["coastal-sprat"]
    for values in ({}, {"r": 0.4, "K": 1200.0}):
        _set(visit, model, values)
        merged = {**model.values, **values}
        msy = merged["r"] * merged["K"] / 4.0
        lever = _readout(visit)["lever"]
        assert float(lever["limit"]) == pytest.approx(msy, rel=LIMIT_TOL)
        assert float(lever["margin"]) == pytest.approx(msy - merged["H"], rel=1e-6)
        assert lever["past"] == "false"


def test_allee_lever_limit_against_scipy(pages) -> None:
    """With an Allee effect the herd's stable state meets the threshold at the largest
    harvest the growth curve can supply, H* = max_N g(N) (Strogatz 2015, sec. 3.1: a
    saddle-node where the curve touches the harvest line); reference by SciPy."""
    visit, model = pages["upland-deer"]
    _set(visit, model, {"r": 0.12})
    p = {**model.values, "r": 0.12}

    def minus_growth(n: float) -> float:
        return -p["r"] * n * (n / p["A"] - 1.0) * (1.0 - n / p["K"])

    best = minimize_scalar(minus_growth, bounds=(p["A"], p["K"]), method="bounded",
                           options={"xatol": 1e-10})  # fmt: skip
    assert float(_readout(visit)["lever"]["limit"]) == pytest.approx(-best.fun, rel=LIMIT_TOL)


def test_past_the_fold_reads_as_collapse(pages) -> None:
    """A catch above rK/4 leaves no positive state: the page says collapse, with the time
    from today's state to the declared collapse level checked against an independent
    SciPy run (LSODA, rtol 1e-10)."""
    visit, model = pages["coastal-sprat"]
    _set(visit, model, {"H": 140.0})
    shown = _readout(visit)
    assert shown["fate"] == "collapse"
    assert shown["sentence"].startswith("No stable positive state: collapse in about")
    assert shown["lever"]["past"] == "true"
    assert float(shown["lever"]["margin"]) == pytest.approx(125.0 - 140.0, rel=1e-6)
    p = {**model.values, "H": 140.0}

    def fall(_t: float, b: np.ndarray) -> np.ndarray:
        return p["r"] * b * (1.0 - b / p["K"]) - p["H"]

    level = _bundled("coastal-sprat")[0].state.collapse_level  # declared: 100 kt

    def empty(_t: float, b: np.ndarray) -> float:
        return float(b[0]) - level

    empty.terminal = True  # type: ignore[attr-defined]
    run = solve_ivp(fall, (0.0, 500.0), [model.current_state], method="LSODA", events=empty,
                    rtol=1e-10, atol=1e-9)  # fmt: skip
    assert float(shown["time"]) == pytest.approx(float(run.t_events[0][0]), rel=1e-3)
    visit_deer, deer = pages["upland-deer"]
    _set(visit_deer, deer, {"H": 300.0})
    assert _readout(visit_deer)["fate"] == "collapse"


def test_lower_is_better_past_the_fold_reads_as_a_flip(pages) -> None:
    """A lake past the loading where the clear-water state vanishes (a fold) ends in the
    turbid state (Carpenter, Ludwig and Brock 1999, sec. 2): the page says it flips up."""
    visit, model = pages["vellamere-lake"]
    _set(visit, model, {})
    base = _readout(visit)
    assert base["fate"] == "settles"
    limit = float(base["lever"]["limit"])
    _set(visit, model, {model.lever: min(limit * 1.1, model.ranges[model.lever][1])})
    shown = _readout(visit)
    assert shown["fate"] == "flips"
    assert "flips up to the high state" in shown["sentence"]
    assert shown["lever"]["past"] == "true"
    assert float(shown["lever"]["limit"]) == pytest.approx(limit, rel=1e-8)


def test_keyboard_moves_a_slider_and_the_readout(pages) -> None:
    visit, model = pages["quillan-defoliator"]
    page = visit.page
    page.click("#explorer-reset-all")
    page.evaluate("() => document.activeElement && document.activeElement.blur()")
    page.evaluate("() => window.scrollTo(0, 0)")
    for _ in range(3):  # the first control on the page is the first slider
        page.keyboard.press("Tab")
        if page.evaluate("() => document.activeElement.id") == "explorer-range-0":
            break
    assert page.evaluate("() => document.activeElement.id") == "explorer-range-0"
    before = _readout(visit)
    page.keyboard.press("ArrowRight")
    after = _readout(visit)
    low, high = model.ranges["r"]
    moved = float(page.input_value("#explorer-number-0"))
    assert moved == pytest.approx(model.values["r"] + (high - low) / 200, rel=1e-12)
    assert after["equilibria"] != before["equilibria"]
    expected, _ = find_equilibria(model.with_values({"r": moved}))
    assert after["equilibria"][1][0] == pytest.approx(expected[1].value, rel=REL_TOL)


# -- the printed JavaScript against NumPy ---------------------------------------------


def test_every_parser_function_prints_to_working_javascript(browser, tmp_path) -> None:
    """f and f_x of a model using every function the parser accepts, with parameters
    named new, Math, window and constructor, evaluated in Chromium on a grid and compared
    with the model's NumPy functions; a Piecewise (SymPy's, not the parser's) as well."""
    model = make_model(ALL_FUNCTIONS_RATE, ALL_FUNCTIONS_PARAMETERS, 0.0, 3.0)
    scenario = load_text(_scenario_text(ALL_FUNCTIONS_RATE), "all.toml", "all")
    grid = np.linspace(0.0, 3.0, 61)
    args = model.args()
    x = model.state
    piecewise = sympy.Piecewise((x**2, x < 1), (2 * x - 1 + sympy.Abs(x - 2), True))
    piecewise_js = javascript_expression(model, piecewise)
    visit = open_page(browser, _page(tmp_path, scenario, model, "all-functions"))
    try:
        code = javascript_functions(model)
        result = visit.page.evaluate(
            "([grid, p]) => { " + code + f"var pw = function (x, p) {{ return {piecewise_js}; }}; "
            "return [grid.map(x => rate(x, p)), grid.map(x => slope(x, p)),"
            " grid.map(x => pw(x, p))]; }",
            [grid.tolist(), list(args)],
        )
        problems = visit.problems()
    finally:
        visit.close()
    with np.errstate(all="ignore"):  # 0/0 at x = 0 in the slope: NaN on both sides
        # Point by point: NumPy's lambdify of Heaviside(x - Max(1/2, Math)) fails on an
        # array x with scalar parameters (inhomogeneous select conditions).
        expected = [
            [float(model.numeric(order)(value, *args)) for value in grid] for order in (0, 1)
        ]
        expected.append(sympy.lambdify(x, piecewise, modules="numpy")(grid))
    for got, want in zip(result, expected, strict=True):
        got = np.array([np.nan if v is None else v for v in got], dtype=float)
        want = np.broadcast_to(np.asarray(want, dtype=float), grid.shape)
        scale = np.nanmax(np.abs(want))
        assert np.array_equal(np.isnan(got), np.isnan(want))
        assert np.nanmax(np.abs(got - want)) <= JS_TOL * scale
    assert problems == []  # the whole runtime ran with these names, under the CSP


def _scenario_text(rate: str) -> str:
    parts = [
        '[scenario]\ntitle = "t"\nsummary = "t"\nassessment_year = 2026\n',
        '[state]\nsymbol = "x"\nname = "state"\nunit = "1"\nmin = 0.0\nmax = 3.0\ncurrent = 1\n',
    ]
    for name, (value, bounds) in ALL_FUNCTIONS_PARAMETERS.items():
        parts.append(f'[parameters.{name}]\nvalue = {value}\nunit = "1"\nname = "{name}"\n')
        if bounds is not None:
            parts.append(f"range = [{bounds[0]}, {bounds[1]}]\n")
    parts.append(f'[model]\nrate = "{rate}"\ntime_unit = "1"\n')
    return "".join(parts)


def test_a_function_without_a_javascript_form_fails_at_build_time() -> None:
    model = make_model("r*x*(1 - x)", {"r": (1.0, (0.5, 2.0))}, 0.0, 1.0)
    with pytest.raises(ExplorerError, match="cannot print part of the rate to JavaScript"):
        javascript_expression(model, sympy.LambertW(model.state))


def test_an_oversized_script_fails_at_build_time(monkeypatch) -> None:
    from sitegen.pages import explorer

    scenario, model = _bundled("coastal-sprat")
    monkeypatch.setattr(explorer, "MAX_SCRIPT_BYTES", 5_000)
    with pytest.raises(ExplorerError, match="over the 5,000-byte limit"):
        explorer_panel(scenario, model, {})


def test_no_ranged_parameter_means_no_panel() -> None:
    text = (
        '[scenario]\ntitle = "t"\nsummary = "t"\nassessment_year = 2026\n'
        '[state]\nsymbol = "x"\nname = "state"\nunit = "1"\nmin = 0\nmax = 2\n'
        '[parameters.r]\nvalue = 1.0\nunit = "1"\nname = "r"\n'
        '[model]\nrate = "r*x*(1 - x)"\ntime_unit = "1"\n'
    )
    scenario = load_text(text, "fixed.toml", "fixed")
    assert explorer_panel(scenario, build_model(scenario), {}) is None


@pytest.mark.parametrize("path", sorted(SCENARIOS.glob("*.toml")), ids=lambda p: p.stem)
def test_panel_markup_and_script_rules(path: Path) -> None:
    """Size cap, ids, labels, no script in the markup, no scenario text in the script."""
    scenario = load_scenario(str(path))
    model = build_model(scenario)
    panel = explorer_panel(scenario, model, {})
    if not model.ranged:
        assert panel is None
        return
    assert panel is not None
    assert len(panel.script.encode("utf-8")) <= MAX_SCRIPT_BYTES
    assert "<script" not in panel.html.lower()
    tree = html5lib.parse(panel.html, namespaceHTMLElements=False)
    ids = [e.get("id") for e in tree.iter() if e.get("id")]
    assert ids and all(i.startswith("explorer-") for i in ids)
    assert len(ids) == len(set(ids))
    labelled = {e.get("for") for e in tree.iter("label")}
    for control in tree.iter("input"):
        assert control.get("id") in labelled
    assert len(tree.findall(".//input[@type='range']")) == len(model.ranged)
    assert tree.find(".//*[@aria-live='polite']") is not None
    for parameter in scenario.parameters:  # names and labels live in the markup only
        assert parameter.label not in panel.script
        if len(parameter.name) > 1:
            assert not _identifier_in(
                parameter.name, panel.script.split("function sitegenExplorer")[0]
            )


def _identifier_in(name: str, code: str) -> bool:
    return re.search(rf"(?<![\w.]){re.escape(name)}(?!\w)", code) is not None


def test_scripts_off_the_panel_says_it_needs_them(browser, tmp_path) -> None:
    scenario, model = _bundled("upland-deer")
    visit = open_page(browser, _page(tmp_path, scenario, model, "off"), javascript=False)
    try:
        assert visit.page.is_visible("#explorer-needs-script")
        assert "needs JavaScript" in visit.page.inner_text("#explorer-needs-script")
        assert not visit.page.is_visible("#explorer-body")
    finally:
        visit.close()


def test_in_a_real_dossier(browser, tmp_path) -> None:
    """The panel inside a page built by `sitegen build`, under the site's own CSP.

    Newton's law of cooling dT/dt = -k (T - A) rests at T = A for every k (Newton 1701;
    common practice): the readout follows the ambient-temperature slider.
    """
    from sitegen.site.build import build_site

    out = tmp_path / "site"
    build_site([str(SCENARIOS / "tamsin-cold-room.toml")], out, jobs=1)
    visit = open_page(browser, out / "tamsin-cold-room.html")
    try:
        model = _bundled("tamsin-cold-room")[1]
        assert visit.page.query_selector("#explorer-needs-script") is None
        _set(visit, model, {"A": 21.5})
        shown = _readout(visit)
        assert shown["equilibria"] == [[pytest.approx(21.5, rel=1e-12), "stable"]]
        assert shown["fate"] == "settles"
        assert visit.problems() == []
    finally:
        visit.close()
