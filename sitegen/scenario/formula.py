"""Safe formulas: text in, SymPy expression out, with nothing ever executed.

The text is parsed by :func:`ast.parse` into a syntax tree, and the tree is
walked against an allowlist: numbers, declared names, ``+ - * / ** ^``, unary
signs, parentheses, the functions in :data:`FUNCTIONS` and the constant ``pi``.
Everything else is refused with a :class:`~sitegen.errors.FormulaError` that
points at the column. Nothing is passed to ``eval``, ``sympify`` or
``parse_expr`` (each of those runs Python code).

Conventions: ``^`` means power (as ``**``); ``log`` is the natural logarithm,
``log(x, b)`` the logarithm to base ``b``; decimal literals become exact
rationals (``0.5`` is 1/2) so that closed forms stay exact.
"""

from __future__ import annotations

import ast
import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import sympy
from sympy.printing.str import StrPrinter

from sitegen.errors import FormulaError, did_you_mean

MAX_LENGTH = 2000
MAX_NODES = 500
MAX_DEPTH = 50
MAX_LITERAL_DIGITS = 30
MAX_CONSTANT_POWER_DIGITS = 300
MAX_EXPONENT = 100

FUNCTIONS: dict[str, tuple[int, int]] = {
    # name -> (fewest, most) arguments
    "abs": (1, 1),
    "exp": (1, 1),
    "log": (1, 2),
    "max": (2, 8),
    "min": (2, 8),
    "sqrt": (1, 1),
    "tanh": (1, 1),
}
_SYMPY_FUNCTIONS = {
    "abs": sympy.Abs,
    "exp": sympy.exp,
    "log": sympy.log,
    "max": sympy.Max,
    "min": sympy.Min,
    "sqrt": sympy.sqrt,
    "tanh": sympy.tanh,
}
CONSTANTS = {"pi": sympy.pi}
TIME_NAMES = ("t", "time")

_NODE_WORDS = {
    ast.Attribute: "attribute access (a.b)",
    ast.Subscript: "subscripts (a[...])",
    ast.Lambda: "lambda functions",
    ast.ListComp: "comprehensions",
    ast.SetComp: "comprehensions",
    ast.DictComp: "comprehensions",
    ast.GeneratorExp: "comprehensions",
    ast.JoinedStr: "text strings",
    ast.FormattedValue: "text strings",
    ast.Starred: "starred arguments (*args)",
    ast.Compare: "comparisons (<, >, ==)",
    ast.BoolOp: "'and'/'or'",
    ast.IfExp: "'if ... else' expressions",
    ast.NamedExpr: "assignments (:=)",
    ast.List: "lists",
    ast.Tuple: "tuples or commas",
    ast.Set: "sets",
    ast.Dict: "dictionaries",
    ast.Await: "'await'",
    ast.Yield: "'yield'",
    ast.YieldFrom: "'yield'",
    ast.Slice: "slices",
}
_BINARY = {
    ast.Add: "+",
    ast.Sub: "-",
    ast.Mult: "*",
    ast.Div: "/",
    ast.Pow: "**",
}


@dataclass(frozen=True)
class ParsedFormula:
    """A checked formula: the SymPy expression and the tree it was built from.

    ``tree`` is the allowlisted syntax tree of ``python_text`` (the text with
    ``^`` written as ``**``); :meth:`segment` gives back a node's text as the
    user typed it, for messages.
    """

    text: str
    python_text: str
    expr: sympy.Expr
    tree: ast.Expression = field(compare=False, repr=False)
    column_map: tuple[int, ...] = field(compare=False, repr=False)

    def original_column(self, python_offset: int) -> int:
        """1-based column in ``text`` for a 0-based offset into ``python_text``."""
        index = min(max(python_offset, 0), len(self.column_map) - 1)
        return self.column_map[index] + 1

    def segment(self, node: ast.AST) -> str:
        """The user's own text for ``node``."""
        start = self.original_column(node.col_offset) - 1  # type: ignore[attr-defined]
        end_offset = node.end_col_offset  # type: ignore[attr-defined]
        end = self.column_map[end_offset] if end_offset < len(self.column_map) else len(self.text)
        return self.text[start:end].strip()


def _caret_to_python(text: str) -> tuple[str, tuple[int, ...]]:
    """Rewrite ``^`` as ``**``; map each offset of the new text to the old one.

    The map has one entry per character of the new text plus one for its end.
    """
    out: list[str] = []
    mapping: list[int] = []
    for index, char in enumerate(text):
        if char == "^":
            out.append("**")
            mapping.extend((index, index))
        else:
            out.append(char)
            mapping.append(index)
    mapping.append(len(text))
    return "".join(out), tuple(mapping)


def _precheck(text: str) -> None:
    """Refuse what must never reach :func:`ast.parse` (size, bytes, nesting)."""
    if not isinstance(text, str):
        raise FormulaError("a formula must be a text string in quotes")
    if len(text) > MAX_LENGTH:
        raise FormulaError(
            f"the formula is {len(text):,} characters long; the limit is {MAX_LENGTH:,}",
            hint="split the model into shorter parameters or simplify it",
        )
    if not text.strip():
        raise FormulaError("the formula is empty", hint="write an expression such as r*B*(1 - B/K)")
    for index, char in enumerate(text):
        if char in "\n\r\t":
            continue
        if not char.isascii() or not char.isprintable():
            shown = repr(char)
            raise FormulaError(
                f"the character {shown} is not allowed in a formula",
                column=index + 1,
                hint="use plain ASCII letters, digits, spaces and + - * / ^ ( ) , .",
            )
        if char in "'\"":
            raise FormulaError(
                "text strings are not allowed in a formula",
                column=index + 1,
                hint="a formula uses numbers, declared names and the allowed functions only",
            )
        if char == "#":
            raise FormulaError(
                "comments ('#') are not allowed in a formula",
                column=index + 1,
                hint="everything after '#' would be ignored; write notes in the note key",
            )
    depth = deepest = 0
    for index, char in enumerate(text):
        if char in "([{":
            depth += 1
            if depth > deepest:
                deepest = depth
            if deepest > MAX_DEPTH:
                raise FormulaError(
                    f"parentheses are nested more than {MAX_DEPTH} deep",
                    column=index + 1,
                    hint="simplify the expression",
                )
        elif char in ")]}":
            depth -= 1


class _Builder:
    """Walks an allowlisted tree and builds the SymPy expression."""

    def __init__(
        self,
        formula_text: str,
        column_map: tuple[int, ...],
        symbols: Mapping[str, sympy.Symbol],
        python_text: str,
    ) -> None:
        self.text = formula_text
        self.column_map = column_map
        self.symbols = symbols
        self.python_text = python_text
        self.nodes = 0

    def fail(self, node: ast.AST, message: str, hint: str | None = None) -> FormulaError:
        start = getattr(node, "col_offset", 0)
        end = getattr(node, "end_col_offset", start + 1) or start + 1
        column = self.column_map[min(start, len(self.column_map) - 1)] + 1
        end_column = self.column_map[min(end, len(self.column_map) - 1)] + 1
        return FormulaError(message, column=column, width=max(1, end_column - column), hint=hint)

    def build(self, node: ast.AST, depth: int = 0) -> sympy.Expr:
        self.nodes += 1
        if self.nodes > MAX_NODES:
            raise self.fail(node, f"the formula has more than {MAX_NODES} parts", "simplify it")
        if depth > MAX_DEPTH:
            raise self.fail(
                node, f"the formula is nested more than {MAX_DEPTH} deep", "simplify it"
            )
        method = getattr(self, "_build_" + type(node).__name__, None)
        if method is None:
            word = _NODE_WORDS.get(type(node), f"'{type(node).__name__}' expressions")
            hint = "formulas allow numbers, declared names, + - * / ^, parentheses and " + (
                ", ".join(sorted(FUNCTIONS))
            )
            if isinstance(node, ast.Compare | ast.IfExp | ast.BoolOp):
                hint = "write threshold rules with min() and max(), e.g. min(1, B/Btrig)*F*B"
            raise self.fail(node, f"a formula may not contain {word}", hint)
        expr = method(node, depth + 1)
        coefficient = expr.as_coeff_Mul()[0] if expr.is_Mul else expr
        if coefficient.is_Rational and max(
            abs(coefficient.p).bit_length(), coefficient.q.bit_length()
        ) > MAX_CONSTANT_POWER_DIGITS * math.log2(10):
            raise self.fail(
                node,
                f"a number in this formula has more than {MAX_CONSTANT_POWER_DIGITS} digits",
                "rescale the model so that numbers stay moderate",
            )
        return expr

    def _build_Constant(self, node: ast.Constant, depth: int) -> sympy.Expr:
        value = node.value
        if isinstance(value, bool) or not isinstance(value, int | float):
            if isinstance(value, str | bytes):
                raise self.fail(node, "text strings are not allowed in a formula")
            raise self.fail(node, f"the value {value!r} is not a number")
        literal = ast.get_source_segment(self.python_text, node) or repr(value)
        if literal[:2].lower() in ("0x", "0o", "0b"):
            raise self.fail(
                node,
                f"the number {literal[:20]} is not written in decimal",
                "write numbers with the digits 0-9, e.g. 16 rather than 0x10",
            )
        mantissa = literal.split("e")[0].split("E")[0]
        digits = sum(ch.isdigit() for ch in mantissa)
        if digits > MAX_LITERAL_DIGITS:
            raise self.fail(
                node,
                f"the number {literal[:20]}... has more than {MAX_LITERAL_DIGITS} digits",
                "write it in scientific notation such as 1.5e40",
            )
        if isinstance(value, float) and not math.isfinite(value):
            raise self.fail(
                node, f"the number {literal[:20]} is too large", "numbers must be finite"
            )
        if isinstance(value, int):
            return sympy.Integer(value)
        underflow = value == 0 and any(ch in "123456789" for ch in mantissa)
        if underflow or (value != 0 and abs(math.log10(abs(value))) > MAX_CONSTANT_POWER_DIGITS):
            # Checked on the float, before the exact value is built: 1e-9999999
            # would otherwise cost seconds of big-integer arithmetic.
            raise self.fail(node, f"the number {literal[:20]} is out of range")
        return sympy.Rational(literal.replace("_", ""))

    def _build_Name(self, node: ast.Name, depth: int) -> sympy.Expr:
        name = node.id
        if name in self.symbols:
            return self.symbols[name]
        if name in CONSTANTS:
            return CONSTANTS[name]
        if name in TIME_NAMES:
            raise self.fail(
                node,
                f"the rate may not depend on time ('{name}')",
                "sitegen analyses autonomous models, where the rate depends only on the "
                "state and the parameters; make a time-varying quantity a parameter",
            )
        if name in FUNCTIONS:
            raise self.fail(node, f"'{name}' is a function; call it with parentheses, {name}(...)")
        if name.startswith("__"):
            raise self.fail(node, f"the name '{name}' is not allowed in a formula")
        raise self.fail(
            node,
            f"unknown name '{name}'",
            did_you_mean(name, list(self.symbols) + list(CONSTANTS)),
        )

    def _build_UnaryOp(self, node: ast.UnaryOp, depth: int) -> sympy.Expr:
        operand = self.build(node.operand, depth)
        if isinstance(node.op, ast.USub):
            return -operand
        if isinstance(node.op, ast.UAdd):
            return operand
        raise self.fail(
            node,
            "only + and - may stand before a value",
            "'not' and '~' have no meaning in a rate; write threshold rules with min() and max()",
        )

    def _build_BinOp(self, node: ast.BinOp, depth: int) -> sympy.Expr:
        if type(node.op) not in _BINARY:
            raise self.fail(
                node,
                "only + - * / and ^ (or **) are allowed as operators",
                "for a remainder or integer division, restate the model without it",
            )
        # A chain a + b + c nests to the left; it is long, not deep.
        left = self.build(node.left, depth - isinstance(node.left, ast.BinOp))
        right = self.build(node.right, depth)
        if isinstance(node.op, ast.Add):
            return left + right
        if isinstance(node.op, ast.Sub):
            return left - right
        if isinstance(node.op, ast.Mult):
            return left * right
        if isinstance(node.op, ast.Div):
            if right == 0:
                raise self.fail(node, "division by zero", "check the denominator")
            return left / right
        return self._power(node, left, right)

    def _power(self, node: ast.AST, base: sympy.Expr, exponent: sympy.Expr) -> sympy.Expr:
        if exponent.is_number:
            magnitude = abs(complex(exponent.evalf(15)))
            if magnitude > MAX_EXPONENT:
                shown = str(exponent) if len(str(exponent)) <= 20 else f"{magnitude:.3g}"
                raise self.fail(
                    node,
                    f"the exponent {shown} is too large (the limit is {MAX_EXPONENT})",
                    "rescale the model so that exponents stay moderate",
                )
            if base.is_number:
                base_size = abs(complex(base.evalf(15)))
                if base == 0 and exponent.is_extended_negative:
                    raise self.fail(node, "zero raised to a negative power")
                if base_size > 0 and magnitude * abs(math.log10(base_size)) > (
                    MAX_CONSTANT_POWER_DIGITS
                ):
                    raise self.fail(node, "this power of numbers is out of range")
        return sympy.Pow(base, exponent)

    def _build_Call(self, node: ast.Call, depth: int) -> sympy.Expr:
        if not isinstance(node.func, ast.Name):
            raise self.fail(
                node.func, "only the allowed functions may be called", did_you_mean("", FUNCTIONS)
            )
        name = node.func.id
        if name not in FUNCTIONS:
            if name in self.symbols:
                raise self.fail(
                    node.func,
                    f"'{name}' is a declared name, not a function",
                    f"write a '*' for multiplication: {name}*(...)",
                )
            raise self.fail(node.func, f"unknown function '{name}'", did_you_mean(name, FUNCTIONS))
        if node.keywords:
            raise self.fail(node.keywords[0].value, "keyword arguments are not allowed")
        if any(isinstance(arg, ast.Starred) for arg in node.args):
            raise self.fail(node, "starred arguments (*args) are not allowed")
        fewest, most = FUNCTIONS[name]
        if not fewest <= len(node.args) <= most:
            wanted = str(fewest) if fewest == most else f"{fewest} to {most}"
            raise self.fail(node, f"{name}() takes {wanted} argument(s), not {len(node.args)}")
        args = [self.build(arg, depth) for arg in node.args]
        base = args[1] if name == "log" and len(args) == 2 else None
        if base is not None and base.is_number and not (base.is_positive and base != 1):
            raise self.fail(
                node.args[1],
                "the base of log() must be a positive number other than 1",
                "log(x) is the natural logarithm; log(x, 10) is to base 10",
            )
        try:
            return _SYMPY_FUNCTIONS[name](*args)
        except ValueError:  # Min and Max refuse what is not real, such as sqrt(-1)
            raise self.fail(node, f"the arguments of {name}() must be real numbers") from None


def parse_formula(text: str, symbols: Mapping[str, sympy.Symbol]) -> ParsedFormula:
    """Parse ``text`` into a SymPy expression over ``symbols``; never executes it.

    ``symbols`` maps each declared name to its SymPy symbol. Raises
    :class:`FormulaError` (with a 1-based column) for anything not allowed.
    """
    _precheck(text)
    flat = text.replace("\n", " ").replace("\r", " ").replace("\t", " ")
    python_text, column_map = _caret_to_python(flat)
    lead = len(python_text) - len(python_text.lstrip())
    python_text, column_map = python_text[lead:], column_map[lead:]
    try:
        tree = ast.parse(python_text, mode="eval")
    except SyntaxError as error:
        offset = (error.offset or 1) - 1
        column = column_map[min(max(offset, 0), len(column_map) - 1)] + 1
        reason = (error.msg or "invalid syntax").split(" (")[0]
        raise FormulaError(
            f"this is not a valid formula ({reason})",
            column=column,
            hint="check for a missing operator or parenthesis; multiplication needs '*'",
        ) from None
    except (MemoryError, RecursionError, ValueError):
        raise FormulaError("this formula is too complex to read", hint="simplify it") from None
    builder = _Builder(text, column_map, symbols, python_text)
    try:
        expr = builder.build(tree.body)
    except RecursionError:
        raise FormulaError("this formula is too complex to read", hint="simplify it") from None
    if expr.has(sympy.zoo, sympy.nan, sympy.oo, -sympy.oo):
        raise FormulaError("the formula is undefined (it divides by zero)", hint="check it")
    if any(part.is_number and part.is_real is False for part in sympy.preorder_traversal(expr)):
        hint = "square roots, logarithms and fractional powers of negative numbers are not real"
        raise FormulaError("the formula has a value that is not a real number", hint=hint)
    return ParsedFormula(text, python_text, expr, tree, column_map)


class FormulaPrinter(StrPrinter):
    """Prints a SymPy expression in the formula syntax :func:`parse_formula` reads."""

    def _print_Abs(self, expr: sympy.Abs) -> str:
        return f"abs({self._print(expr.args[0])})"

    def _print_Min(self, expr: sympy.Min) -> str:
        return self._print_extremum("min", expr.args)

    def _print_Max(self, expr: sympy.Max) -> str:
        return self._print_extremum("max", expr.args)

    def _print_extremum(self, name: str, args: tuple[sympy.Expr, ...]) -> str:
        shown, most = [self._print(arg) for arg in args], FUNCTIONS[name][1]
        while len(shown) > most:  # parse_formula reads at most `most` arguments: nest
            shown = [*shown[:-most], f"{name}(" + ", ".join(shown[-most:]) + ")"]
        return f"{name}(" + ", ".join(shown) + ")"

    def _print_Exp1(self, expr: sympy.Expr) -> str:
        return "exp(1)"

    def _print_ImaginaryUnit(self, expr: sympy.Expr) -> str:
        return "sqrt(-1)"


def to_formula(expr: sympy.Expr) -> str:
    """The formula text for ``expr`` (``**`` for powers, lowercase functions)."""
    return FormulaPrinter({"order": "none"}).doprint(expr)
