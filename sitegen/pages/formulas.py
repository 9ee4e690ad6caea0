"""Formulas on pages: presentation MathML from SymPy's printer, beside the plain text.

Browsers render presentation MathML natively, with no script or font download.
The expression printed is the user's formula rebuilt without SymPy's automatic
rewriting (:func:`sitegen.scenario.formula.display_expression`), so the page
shows the terms in the order the scenario wrote them. Minus signs are U+2212.
"""

from __future__ import annotations

from collections.abc import Mapping

import sympy
from markupsafe import Markup
from sympy.printing.mathml import mathml

from sitegen.scenario.formula import ParsedFormula
from sitegen.scenario.formula_display import display_expression

MINUS = "\u2212"


def formula_mathml(
    parsed: ParsedFormula, symbols: Mapping[str, sympy.Symbol], lhs: str | None = None
) -> Markup:
    """``<math display="block">`` for ``lhs = formula`` (``lhs`` is MathML, e.g. dB/dt)."""
    body = mathml(display_expression(parsed, symbols), printer="presentation", order="none")
    body = body.replace("<mo>-</mo>", f"<mo>{MINUS}</mo>")
    left = f"{lhs}<mo>=</mo>" if lhs else ""
    return Markup(  # SymPy's printer escapes names; symbols are checked identifiers anyway
        f'<math xmlns="http://www.w3.org/1998/Math/MathML" display="block">'
        f"<mrow>{left}{body}</mrow></math>"
    )


def derivative_lhs(state: str, time: str = "t") -> str:
    """MathML for d(state)/dt."""
    return (
        f"<mfrac><mrow><mi>d</mi><mi>{state}</mi></mrow>"
        f"<mrow><mi>d</mi><mi>{time}</mi></mrow></mfrac>"
    )
