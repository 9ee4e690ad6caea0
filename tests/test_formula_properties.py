"""Properties of the formula parser and the loader, checked on generated input.

Round trip: a random expression tree, printed with :func:`to_formula` and read
back with :func:`parse_formula`, is the same SymPy expression. Robustness: any
text gives an expression or a :class:`FormulaError`; any bytes give a scenario
or a :class:`ScenarioError`, never another exception.
"""

from __future__ import annotations

import re

import sympy
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from scenario_support import BASE

from sitegen.errors import FormulaError, ScenarioError
from sitegen.scenario.formula import MAX_LITERAL_DIGITS, parse_formula, to_formula
from sitegen.scenario.loader import load_bytes

SYMBOLS = {
    "B": sympy.Symbol("B", real=True),
    "r": sympy.Symbol("r", positive=True),
    "K": sympy.Symbol("K", positive=True),
    "H": sympy.Symbol("H", positive=True),
}
QUICK = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])

constants = st.builds(
    sympy.Rational, st.integers(min_value=-9, max_value=9), st.integers(min_value=1, max_value=9)
)
leaves = st.one_of(st.sampled_from(list(SYMBOLS.values())), constants)
UNARY = (sympy.exp, sympy.log, sympy.sqrt, sympy.Abs, sympy.tanh)


def _extremum(function: type[sympy.Min] | type[sympy.Max], args: list[sympy.Expr]) -> sympy.Expr:
    """``function(*args)``, or nan (filtered out later) when SymPy refuses a complex value."""
    try:
        return function(*args)
    except ValueError:
        return sympy.nan


def _extend(children: st.SearchStrategy[sympy.Expr]) -> st.SearchStrategy[sympy.Expr]:
    pairs = st.tuples(children, children)
    return st.one_of(
        pairs.map(lambda p: p[0] + p[1]),
        pairs.map(lambda p: p[0] - p[1]),
        pairs.map(lambda p: p[0] * p[1]),
        pairs.map(lambda p: p[0] / p[1]),
        st.tuples(children, st.integers(min_value=-3, max_value=3)).map(
            lambda p: sympy.Pow(p[0], p[1])
        ),
        st.tuples(st.sampled_from(UNARY), children).map(lambda p: p[0](p[1])),
        st.lists(children, min_size=2, max_size=3).map(lambda args: _extremum(sympy.Min, args)),
        st.lists(children, min_size=2, max_size=3).map(lambda args: _extremum(sympy.Max, args)),
    )


expressions = st.recursive(leaves, _extend, max_leaves=8)


def _printable(expr: sympy.Expr) -> bool:
    """Finite, real, and every printed number within the parser's digit limit.

    The parser refuses the others on purpose (see test_hostile.py).
    """
    if expr.has(sympy.zoo, sympy.oo, -sympy.oo, sympy.nan):
        return False
    if any(part.is_number and part.is_real is False for part in sympy.preorder_traversal(expr)):
        return False
    longest = max((len(d) for d in re.findall(r"\d+", to_formula(expr))), default=0)
    return longest <= MAX_LITERAL_DIGITS


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(expressions)
def test_printed_formula_reads_back_as_the_same_expression(expr: sympy.Expr) -> None:
    assume(_printable(expr))
    text = to_formula(expr)
    back = parse_formula(text, SYMBOLS).expr
    assert back == expr or sympy.simplify(back - expr) == 0, text


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(leaves, min_size=9, max_size=12))
def test_min_and_max_of_many_arguments_round_trip(args: list[sympy.Expr]) -> None:
    for function in (sympy.Min, sympy.Max):
        expr = function(*args)
        assert parse_formula(to_formula(expr), SYMBOLS).expr == expr


def test_round_trip_of_known_forms() -> None:
    B, r, K, H = (SYMBOLS[name] for name in "BrKH")
    for expr in (
        r * B * (1 - B / K) - H,
        sympy.exp(-B / K) * r,
        sympy.log(B, 2),
        sympy.sqrt(B) / K,
        sympy.E * B,
        sympy.Rational(-3, 7) * B ** sympy.Rational(2, 3),
        sympy.Max(0, r * B - H),
        sympy.Abs(B - K),
        sympy.tanh(B / K) * sympy.pi,
    ):
        assert parse_formula(to_formula(expr), SYMBOLS).expr == expr, to_formula(expr)


@QUICK
@given(st.text(max_size=60))
def test_any_text_gives_an_expression_or_a_formula_error(text: str) -> None:
    try:
        parse_formula(text, SYMBOLS)
    except FormulaError as error:
        assert error.message
        assert error.column is None or 1 <= error.column <= max(1, len(text))


formula_pieces = st.sampled_from(
    [
        *"BrKH0123456789.e+-*/^(), ",
        "**",
        "exp(",
        "log(",
        "sqrt(",
        "min(",
        "max(",
        "abs(",
        "tanh(",
        "pi",
        "1e",
        "t",
        "_",
        "__",
        "[",
        "]",
        "lambda",
        ":",
        "=",
        "'",
        "#",
        "x",
    ]
)


@settings(max_examples=400, deadline=None)
@given(st.lists(formula_pieces, max_size=25).map("".join))
def test_formula_like_text_gives_an_expression_or_a_formula_error(text: str) -> None:
    try:
        parse_formula(text, SYMBOLS)
    except FormulaError as error:
        assert error.message


@QUICK
@given(st.binary(max_size=300))
def test_any_bytes_give_a_scenario_or_a_scenario_error(raw: bytes) -> None:
    try:
        load_bytes(raw, "random.toml")
    except ScenarioError as error:
        assert error.render().startswith("random.toml")


VALUES = [
    "1",
    "0",
    "-1",
    "1e308",
    "1" + "0" * 400,
    '"x"',
    '"B"',
    '"r*B - H"',
    '"max(0, B) - H"',
    "[]",
    "{}",
    "[1, 2]",
    '["a"]',
    "true",
    "2020-01-01",
    "nan",
    "inf",
    "{ H = 1 }",
    '{ Q = "x" }',
    '"1/yr"',
    '"kt"',
    '"kt/yr"',
    '"normal"',
    "[0, 0]",
    "[1, 0]",
    "0.5",
    '"exp(B)"',
    '"B^0.5"',
    '"t"',
    '"min(B)"',
    '"""\nr*B\n - xx"""',
]
LINES = [
    "[parameters.Z]",
    "[[policies]]",
    "[uncertainty]",
    "[uncertainty.r]",
    "[[history]]",
    "[[maps]]",
    "[reference]",
    "[economics]",
    "[policies.parameters.G]",
    "value = 1",
    'distribution = "normal"',
    "sd = 0.1",
    'name = "n"',
    'unit = "1"',
    'x = "r"',
    "year = 1",
]


@st.composite
def mutated_scenarios(draw: st.DrawFn) -> bytes:
    lines = BASE.splitlines()
    for _ in range(draw(st.integers(min_value=1, max_value=4))):
        index = draw(st.integers(min_value=0, max_value=len(lines) - 1))
        action = draw(st.sampled_from(["value", "insert", "delete"]))
        if action == "value" and "=" in lines[index]:
            lines[index] = lines[index].split("=")[0] + "= " + draw(st.sampled_from(VALUES))
        elif action == "insert":
            lines.insert(index, draw(st.sampled_from(LINES)))
        else:
            del lines[index]
    return "\n".join(lines).encode()


@settings(max_examples=300, deadline=None)
@given(mutated_scenarios())
def test_mutated_scenarios_give_a_scenario_or_a_scenario_error(raw: bytes) -> None:
    try:
        scenario = load_bytes(raw, "mutated.toml")
    except ScenarioError as error:
        assert error.render().startswith("mutated.toml")
    else:
        assert scenario.model.rate.expr.free_symbols <= set(scenario.symbols.values())
