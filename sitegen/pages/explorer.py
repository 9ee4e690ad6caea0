"""The in-page explorer: sliders for the ranged parameters, with the rate curve, phase line,
equilibria, lever limit and one trajectory recomputed in the reader's browser, no server.

The panel is two parts (:class:`ExplorerPanel`): markup with every scenario text escaped,
and one self-contained script the page places in a single inline ``<script>`` allowed by
its SHA-256 hash. The script is our runtime (``explorer.js``, package data) after a
prelude generated here, which holds only numbers and the rate f and its slope f_x
printed to JavaScript by SymPy's JavaScript code printer. Every symbol is renamed to
``x`` (the state) and ``p[i]`` (the i-th parameter in model order) before printing, so a
parameter named ``new``, ``Math`` or ``constructor`` cannot clash with the language; no
scenario text ever reaches the script (names and units are read from the markup).

Units: slider values in each parameter's unit, the state in the state unit, times in
the model's time unit; the script formats numbers to 3 significant figures as
:mod:`sitegen.pages.wording` does.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache
from importlib import resources
from typing import Any

import sympy
from markupsafe import escape
from sympy.printing.jscode import JavascriptCodePrinter

from sitegen.model.model import Model
from sitegen.pages import wording
from sitegen.scenario.records import Scenario

MAX_SCRIPT_BYTES = 30_000
SLIDER_STEPS = 200  # arrow-key steps across a slider's range (the slider is continuous)
STATE_NAME = "x"
PARAMETER_ARRAY = "p"
PLOT_ATTRIBUTES = 'viewBox="0 0 600 250" style="max-width:40rem;width:100%" role="img"'


class ExplorerError(ValueError):
    """The explorer cannot be built for this model (raised at build time, never at view).

    Raised when SymPy's JavaScript printer has no form for a function in the rate or
    its slope (e.g. LambertW), or when the script would exceed MAX_SCRIPT_BYTES. The
    message names the scenario and the fix; the page must never carry broken code.
    """


@dataclass(frozen=True)
class ExplorerPanel:
    """The panel's markup (a ``<section>``, no ``<script>``, every id "explorer-...")
    and its one self-contained script (our text, allowed by its hash)."""

    html: str
    script: str


class _Printer(JavascriptCodePrinter):
    """SymPy's JavaScript printer, strict (unknown functions raise), full precision."""

    def __init__(self) -> None:
        super().__init__({"strict": True, "precision": 17})

    def _print_Exp1(self, expr: sympy.Expr) -> str:
        return "Math.E"


def _renamed(model: Model, expr: sympy.Expr) -> sympy.Expr:
    """``expr`` over safe identifiers: the state -> x, parameter i -> p_i (then p[i])."""
    swap = {model.state: sympy.Symbol(STATE_NAME, **model.state.assumptions0)}
    for index, name in enumerate(model.parameters):
        symbol = model.symbols[name]
        swap[symbol] = sympy.Symbol(f"p_{index}", **symbol.assumptions0)
    return expr.xreplace(swap)


def javascript_expression(model: Model, expr: sympy.Expr) -> str:
    """``expr`` (over the model's symbols) as one JavaScript expression in ``x`` and ``p``.

    Raises :class:`ExplorerError` when the printer has no JavaScript form for a part.
    """
    renamed = _renamed(model, expr)
    try:
        code = _Printer().doprint(renamed)
    except (NotImplementedError, ValueError, TypeError) as error:
        raise ExplorerError(
            f"scenario {model.slug!r}: the in-page explorer cannot print part of the rate "
            f"to JavaScript ({str(error).splitlines()[0]}); rewrite the rate with the "
            "functions the formula syntax allows, or build without the explorer"
        ) from None
    names = {f"p_{i}": f"{PARAMETER_ARRAY}[{i}]" for i in range(len(model.parameters))}
    # Replace longest names first so p_1 never eats the front of p_12.
    for old in sorted(names, key=len, reverse=True):
        code = code.replace(old, names[old])
    return " ".join(code.split())  # the printer breaks Piecewise over lines


def javascript_functions(model: Model) -> str:
    """``function rate(x, p)`` and ``function slope(x, p)``: f and f_x of the model."""
    rate = javascript_expression(model, model.rate)
    slope = javascript_expression(model, model.derivative(1))
    return (
        f"function rate({STATE_NAME}, {PARAMETER_ARRAY}) {{ return {rate}; }}\n"
        f"function slope({STATE_NAME}, {PARAMETER_ARRAY}) {{ return {slope}; }}\n"
    )


@cache
def runtime() -> str:
    """Our hand-written runtime (``sitegen/pages/explorer.js``), as embedded in a page.

    Block comments and indentation are dropped to keep pages under the script budget;
    the runtime has no ``/*`` inside a string or regular expression, so this is exact.
    """
    text = resources.files("sitegen.pages").joinpath("explorer.js").read_text(encoding="utf-8")
    text = re.sub(r"/\*.*?\*/", " ", text, flags=re.DOTALL)
    return "\n".join(line.strip() for line in text.splitlines() if line.strip()) + "\n"


def _number(value: float | None) -> str:
    if value is None:
        return "null"
    if not math.isfinite(value):
        raise ExplorerError(f"a model number is not finite ({value!r})")
    return repr(float(value))


def model_data(model: Model, collapse_level: float | None) -> str:
    """The MODEL object of the prelude: numbers only (indices, values, ranges, region)."""
    ranges = {
        str(model.parameters.index(name)): [_number(low), _number(high)]
        for name, (low, high) in model.ranges.items()
    }
    lever = model.parameters.index(model.lever) if model.lever in model.ranges else None
    parts = {
        "values": "[" + ", ".join(_number(model.values[n]) for n in model.parameters) + "]",
        "ranges": "{" + ", ".join(f'"{k}": [{a}, {b}]' for k, (a, b) in ranges.items()) + "}",
        "region": f"[{_number(model.region[0])}, {_number(model.region[1])}]",
        "lever": json.dumps(lever),
        "current": _number(model.current_state),
        "collapse": _number(collapse_level),
        "better": json.dumps("lower" if model.better == "lower" else "higher"),
    }
    return "{" + ", ".join(f"{key}: {value}" for key, value in parts.items()) + "}"


def explorer_script(model: Model, collapse_level: float | None = None) -> str:
    """The whole script: prelude (MODEL, rate, slope), runtime, the call, in one closure."""
    script = (
        "(function () {\n"
        '"use strict";\n'
        f"var MODEL = {model_data(model, collapse_level)};\n"
        f"{javascript_functions(model)}"
        f"{runtime()}\n"
        "sitegenExplorer(MODEL, rate, slope);\n"
        "})();\n"
    )
    size = len(script.encode("utf-8"))
    if size > MAX_SCRIPT_BYTES:
        raise ExplorerError(
            f"scenario {model.slug!r}: the explorer script would be {size:,} bytes, over the "
            f"{MAX_SCRIPT_BYTES:,}-byte limit per page; simplify the rate (its slope is "
            "printed too) or build without the explorer"
        )
    if "</script" in script.lower() or "<!--" in script:
        raise ExplorerError("the explorer script would end its own <script> element")
    return script


def unit_words(unit: str) -> str:
    """A unit as read after a number other than 1 ("animal/yr" -> "animals/yr")."""
    words = wording.unit_text(unit)
    head, slash, rest = words.partition("/")
    return wording.COUNT_NOUNS.get(head, head) + slash + rest


def _control(index: int, parameter: int, name: str, label: str, model: Model) -> str:
    low, high = model.ranges[name]
    value = model.values[name]
    unit = unit_words(model.units[name])
    step = repr((high - low) / SLIDER_STEPS)
    title = f"{label} ({name})" if label and label != name else name
    shown = escape(title)
    reset = escape(f"Reset {title} to the scenario's value")
    return (
        f'<div class="explorer-control" id="explorer-control-{index}">\n'
        f'<label for="explorer-range-{index}">{shown}</label>\n'
        f'<input type="range" id="explorer-range-{index}" data-parameter="{parameter}" '
        f'min="{low!r}" max="{high!r}" step="any" data-step="{step}" value="{value!r}">\n'
        f'<label for="explorer-number-{index}" class="explorer-number-label">'
        f"{shown}, value</label>\n"
        f'<input type="number" id="explorer-number-{index}" min="{low!r}" max="{high!r}" '
        f'step="any" value="{value!r}" style="width:8em">\n'
        f'<span class="explorer-unit">{escape(unit)}</span>\n'
        f'<button type="button" id="explorer-reset-{index}" aria-label="{reset}">Reset</button>\n'
        f'<span class="explorer-range-note">range {escape(wording.number(low))} to '
        f"{escape(wording.number(high))}, scenario value {escape(wording.number(value))}"
        "</span>\n</div>\n"
    )


def explorer_html(scenario: Scenario, model: Model) -> str:
    """The panel's markup; scenario text only as escaped element content and attributes."""
    labels = {p.name: p.label for p in scenario.parameters}
    controls = "".join(
        _control(i, model.parameters.index(name), name, labels.get(name, name), model)
        for i, name in enumerate(model.ranged)
    )
    lever = model.lever if model.lever in model.ranges else None
    lever_words = (
        f'<span id="explorer-lever-name" hidden>{escape(labels.get(lever, lever))}</span>'
        f'<span id="explorer-lever-unit" hidden>{escape(unit_words(model.units[lever]))}'
        "</span>"
        if lever
        else ""
    )
    state_name = scenario.state.name or scenario.state.symbol
    time_words = wording.time_words(model.time_unit)
    time_word = wording.time_words(model.time_unit, plural=False)
    return (
        '<section class="explorer-panel" id="explorer-panel" aria-label="Parameter explorer">\n'
        '<p id="explorer-needs-script" class="meta">The explorer needs JavaScript, which is '
        "off in this browser; everything else on this page is complete without it.</p>\n"
        '<div id="explorer-body" hidden>\n'
        "<p>Move a slider or type a value within its range: the rate curve, the equilibria, "
        "the lever limit and the trajectory from today's state are recomputed in the browser "
        "from the same model. Filled circle: stable state; open circle: unstable (a "
        "threshold); square: semi-stable. Illustrative values.</p>\n"
        f'<span id="explorer-state-name" hidden>{escape(state_name)}</span>'
        f'<span id="explorer-state-unit" hidden>{escape(unit_words(model.state_unit))}'
        "</span>"
        f'<span id="explorer-time-words" hidden>{escape(time_words)}</span>'
        f'<span id="explorer-time-word" hidden>{escape(time_word)}</span>{lever_words}\n'
        f'<fieldset id="explorer-controls"><legend>Parameters</legend>\n{controls}'
        '<button type="button" id="explorer-reset-all">Reset all</button>\n</fieldset>\n'
        '<div id="explorer-readout" aria-live="polite">\n'
        '<p id="explorer-sentence"></p>\n'
        '<p id="explorer-lever"></p>\n'
        '<p>Equilibria at these values:</p><ul id="explorer-equilibria"></ul>\n'
        "</div>\n"
        f'<svg id="explorer-rate-plot" {PLOT_ATTRIBUTES} aria-label="Rate of change against '
        'the state at the slider values, with the equilibria and the direction of flow"></svg>\n'
        f'<svg id="explorer-trajectory-plot" {PLOT_ATTRIBUTES} aria-label="The state over time '
        "from today's state at the slider values\"></svg>\n"
        "</div>\n</section>\n"
    )


def explorer_panel(
    scenario: Scenario, model: Model, summary: Mapping[str, Any]
) -> ExplorerPanel | None:
    """The explorer for one scenario's base model, or None when no parameter has a range.

    With no ranged parameter there is nothing to move: the dossier's figures already
    show the single setting, and a panel of readouts without controls would only
    repeat them. ``summary`` is the assessment summary; the declared collapse level is
    taken from the scenario. Raises :class:`ExplorerError` when the model cannot be
    printed to JavaScript or the script would be too large.
    """
    del summary  # the runtime recomputes everything from the model at the slider values
    if not model.ranged:
        return None
    script = explorer_script(model, scenario.state.collapse_level)
    return ExplorerPanel(explorer_html(scenario, model), script)
