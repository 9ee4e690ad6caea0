"""Formulas for display: the user's own term order, kept for printing only."""

from __future__ import annotations

from collections.abc import Mapping

import sympy

from sitegen.scenario.formula import ParsedFormula, _Builder


def display_expression(parsed: ParsedFormula, symbols: Mapping[str, sympy.Symbol]) -> sympy.Expr:
    """The formula as the user wrote it (term order and grouping kept), for printing only.

    SymPy sorts and merges terms when it builds an expression; rebuilding the
    checked tree with evaluation off keeps ``r*B*(1 - B/K) - H`` in that shape.
    Never compute with the result: use ``parsed.expr``.
    """
    builder = _Builder(parsed.text, parsed.column_map, symbols, parsed.python_text)
    with sympy.evaluate(False):
        return builder.build(parsed.tree.body)
