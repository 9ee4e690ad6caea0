"""Units as products of named base units with rational powers, and their checking.

A unit string such as ``t/yr``, ``kg*m/s^2``, ``1/yr``, ``vessel-day`` or ``1``
(dimensionless) is read into a :class:`Unit`. Every distinct name is its own
base unit: ``kt`` and ``t`` differ, on purpose, because a model that mixes them
is wrong by a factor of 1000. :func:`check_rate_units` walks a formula's syntax
tree and checks that every additive term of a rate has the unit state/time and
that the arguments of ``exp``, ``log`` and ``tanh`` are dimensionless.
"""

from __future__ import annotations

import ast
import re
from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction

from sitegen.errors import FormulaError
from sitegen.scenario.formula import ParsedFormula

_TOKEN = re.compile(
    r"\s*(?:(?P<name>[A-Za-z°µ%$€£][A-Za-z0-9°µ%$€£_\-]*)|(?P<number>[0-9]+)|(?P<op>\*\*|[*/^()·.\-]))"
)


class UnitError(ValueError):
    """A unit string that cannot be read; ``hint`` says how to write it."""

    def __init__(self, message: str, hint: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.hint = hint or "write units like t, t/yr, 1/yr, kg*m/s^2 or 1 (dimensionless)"


@dataclass(frozen=True)
class Unit:
    """A product of base units, each to a rational power; empty means dimensionless."""

    powers: tuple[tuple[str, Fraction], ...] = ()

    @staticmethod
    def of(mapping: Mapping[str, Fraction]) -> Unit:
        return Unit(tuple(sorted((k, v) for k, v in mapping.items() if v != 0)))

    def __mul__(self, other: Unit) -> Unit:
        combined = dict(self.powers)
        for name, power in other.powers:
            combined[name] = combined.get(name, Fraction(0)) + power
        return Unit.of(combined)

    def __truediv__(self, other: Unit) -> Unit:
        return self * other ** Fraction(-1)

    def __pow__(self, exponent: Fraction) -> Unit:
        return Unit.of({name: power * exponent for name, power in self.powers})

    @property
    def dimensionless(self) -> bool:
        return not self.powers

    def __str__(self) -> str:
        if not self.powers:
            return "1"

        def show(name: str, power: Fraction) -> str:
            if power == 1:
                return name
            text = str(power) if power.denominator == 1 else f"({power})"
            return f"{name}^{text}"

        upper = [show(n, p) for n, p in self.powers if p > 0]
        lower = [show(n, -p) for n, p in self.powers if p < 0]
        top = "*".join(upper) if upper else "1"
        if not lower:
            return top
        bottom = lower[0] if len(lower) == 1 else "(" + "*".join(lower) + ")"
        return f"{top}/{bottom}"


DIMENSIONLESS = Unit()


class _UnitParser:
    def __init__(self, text: str) -> None:
        self.text = text
        self.tokens: list[tuple[str, str]] = []
        position = 0
        stripped = text.strip()
        while position < len(stripped):
            match = _TOKEN.match(stripped, position)
            if not match or match.end() == position:
                raise UnitError(f"unexpected character {stripped[position]!r}")
            kind = match.lastgroup or "op"
            self.tokens.append((kind, match.group(kind)))
            position = match.end()
        self.index = 0

    def peek(self) -> tuple[str, str] | None:
        return self.tokens[self.index] if self.index < len(self.tokens) else None

    def take(self) -> tuple[str, str]:
        token = self.tokens[self.index]
        self.index += 1
        return token

    def parse(self) -> Unit:
        if not self.tokens:
            raise UnitError("the unit is empty", "write 1 for a dimensionless quantity")
        unit = self.product()
        if self.peek() is not None:
            raise UnitError(f"unexpected {self.peek()[1]!r}")  # type: ignore[index]
        return unit

    def product(self) -> Unit:
        unit = self.factor()
        while True:
            token = self.peek()
            if token is None or token[1] == ")":
                return unit
            if token[1] in ("*", "·", "."):
                self.take()
                unit = unit * self.factor()
            elif token[1] == "/":
                self.take()
                unit = unit / self.factor()
            elif token[0] in ("name", "number") or token[1] == "(":
                unit = unit * self.factor()  # a space multiplies: "kg m"
            else:
                raise UnitError(f"unexpected {token[1]!r}")

    def factor(self) -> Unit:
        token = self.take() if self.peek() else None
        if token is None:
            raise UnitError("the unit ends too early")
        if token[1] == "(":
            unit = self.product()
            if not self.peek() or self.take()[1] != ")":
                raise UnitError("a parenthesis is not closed")
        elif token[0] == "name":
            unit = Unit.of({token[1]: Fraction(1)})
        elif token[0] == "number" and token[1] == "1":
            unit = DIMENSIONLESS
        elif token[0] == "number":
            raise UnitError(
                f"unexpected {token[1]!r}",
                "numbers in units are not allowed except 1 and exponents (m^3)",
            )
        else:
            raise UnitError(f"unexpected {token[1]!r}")
        nxt = self.peek()
        if nxt is not None and nxt[1] in ("^", "**"):
            self.take()
            unit = unit ** self.exponent()
        return unit

    def exponent(self) -> Fraction:
        sign = 1
        token = self.take() if self.peek() else ("", "")
        if token[1] == "(":
            inner = self.exponent()
            if self.peek() and self.peek()[1] == "/":  # type: ignore[index]
                self.take()
                divisor = self.exponent()
                if divisor == 0:
                    raise UnitError("an exponent divides by zero", "write e.g. m^(1/2)")
                inner = inner / divisor
            if not self.peek() or self.take()[1] != ")":
                raise UnitError("a parenthesis is not closed")
            return inner
        if token[1] == "-":
            sign = -1
            token = self.take() if self.peek() else ("", "")
        if token[0] != "number":
            raise UnitError("an exponent must be a whole number, e.g. m^3 or s^-2")
        return Fraction(sign * int(token[1]))


def parse_unit(text: str) -> Unit:
    """Read a unit string; raises :class:`UnitError` with a hint when it cannot."""
    if not isinstance(text, str):
        raise UnitError("a unit must be text in quotes")
    if len(text) > 100:
        raise UnitError("the unit is longer than 100 characters")
    return _UnitParser(text).parse()


def _constant_value(node: ast.AST) -> Fraction | None:
    """The exact value of a subtree made of numbers only, else None."""
    if isinstance(node, ast.Constant) and isinstance(node.value, int | float):
        return Fraction(str(node.value)) if isinstance(node.value, float) else Fraction(node.value)
    if isinstance(node, ast.UnaryOp):
        inner = _constant_value(node.operand)
        if inner is None:
            return None
        return -inner if isinstance(node.op, ast.USub) else inner
    if isinstance(node, ast.BinOp) and not isinstance(node.op, ast.Pow):
        left, right = _constant_value(node.left), _constant_value(node.right)
        if left is None or right is None:
            return None
        if isinstance(node.op, ast.Add):
            return left + right
        if isinstance(node.op, ast.Sub):
            return left - right
        if isinstance(node.op, ast.Mult):
            return left * right
        if isinstance(node.op, ast.Div) and right != 0:
            return left / right
    return None


def _additive_terms(node: ast.AST) -> list[ast.AST]:
    """The terms of a chain of + and - (signs dropped), left to right."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Add | ast.Sub):
        return _additive_terms(node.left) + _additive_terms(node.right)
    if isinstance(node, ast.UnaryOp):
        return _additive_terms(node.operand)
    return [node]


class _UnitWalker:
    def __init__(self, formula: ParsedFormula, units: Mapping[str, Unit]) -> None:
        self.formula = formula
        self.units = units

    def fail(self, node: ast.AST, message: str, hint: str | None = None) -> FormulaError:
        start = self.formula.original_column(node.col_offset)  # type: ignore[attr-defined]
        width = max(1, len(self.formula.segment(node)))
        return FormulaError(message, column=start, width=width, hint=hint)

    def text(self, node: ast.AST) -> str:
        """The user's text for ``node``, cut short for messages."""
        text = self.formula.segment(node)
        return text if len(text) <= 60 else text[:57] + "..."

    def same_terms(self, node: ast.AST, expected: Unit | None, what: str) -> Unit:
        terms = _additive_terms(node)
        found = [(term, self.unit(term)) for term in terms]
        if expected is None:
            # A literal 0 fits any unit, so it cannot set the unit of the sum.
            nonzero = [pair for pair in found if not _is_zero(pair[0])] or found
            reference_term, reference = nonzero[0]
        else:
            matching = [term for term, unit in found if unit == expected]
            reference_term, reference = (matching[0] if matching else None), expected
        for term, unit in found:
            if _is_zero(term) or unit == reference:
                continue
            text = self.text(term)
            if reference_term is None:
                raise self.fail(
                    term,
                    f"term `{text}` is {unit} but {what} must be {reference}",
                    "every term of the rate must have the unit of the state per unit of time",
                )
            other = self.text(reference_term)
            raise self.fail(
                term,
                f"term `{text}` is {unit} but `{other}` is {reference}",
                "terms that are added or subtracted must have the same unit",
            )
        return reference  # type: ignore[return-value]

    def unit(self, node: ast.AST) -> Unit:
        if isinstance(node, ast.Expression):
            return self.unit(node.body)
        if isinstance(node, ast.Constant):
            return DIMENSIONLESS
        if isinstance(node, ast.Name):
            return self.units.get(node.id, DIMENSIONLESS)
        if isinstance(node, ast.UnaryOp):
            return self.unit(node.operand)
        if isinstance(node, ast.BinOp):
            if isinstance(node.op, ast.Add | ast.Sub):
                return self.same_terms(node, None, "")
            if isinstance(node.op, ast.Mult):
                return self.unit(node.left) * self.unit(node.right)
            if isinstance(node.op, ast.Div):
                return self.unit(node.left) / self.unit(node.right)
            return self.power(node, node.left, node.right)
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Name):
            return self.call(node, node.func.id)
        return DIMENSIONLESS

    def power(self, node: ast.AST, base: ast.AST, exponent: ast.AST) -> Unit:
        exponent_unit = self.unit(exponent)
        if not exponent_unit.dimensionless:
            raise self.fail(
                exponent,
                f"the exponent `{self.text(exponent)}` is "
                f"{exponent_unit} but an exponent must be dimensionless",
            )
        base_unit = self.unit(base)
        value = _constant_value(exponent)
        if value is not None:
            return base_unit**value
        if not base_unit.dimensionless:
            raise self.fail(
                base,
                f"`{self.text(base)}` is {base_unit} and is raised to a non-numeric "
                "power; it must be dimensionless",
                "divide it by a reference value first, e.g. (v/v1)^p with v1 = 1 m/s",
            )
        return DIMENSIONLESS

    def call(self, node: ast.Call, name: str) -> Unit:
        if name in ("exp", "log", "tanh"):
            for argument in node.args:
                unit = self.unit(argument)
                if not unit.dimensionless:
                    raise self.fail(
                        argument,
                        f"the argument of {name}() `{self.text(argument)}` is {unit}; "
                        "it must be dimensionless",
                        "divide by a quantity of the same unit, e.g. log(K/B)",
                    )
            return DIMENSIONLESS
        if name == "sqrt":
            return self.unit(node.args[0]) ** Fraction(1, 2)
        if name == "abs":
            return self.unit(node.args[0])
        units = [(argument, self.unit(argument)) for argument in node.args]
        # A literal 0 fits any unit (max(0, x) clips at zero), so it sets none.
        first_node, first = next((pair for pair in units if not _is_zero(pair[0])), units[0])
        for argument, unit in units:
            if unit != first and not _is_zero(argument):
                raise self.fail(
                    argument,
                    f"{name}() compares `{self.text(argument)}` ({unit}) with "
                    f"`{self.text(first_node)}` ({first})",
                    f"the arguments of {name}() must have the same unit",
                )
        return first


def _is_zero(node: ast.AST) -> bool:
    return _constant_value(node) == 0


def formula_unit(formula: ParsedFormula, units: Mapping[str, str]) -> Unit:
    """The unit of a whole formula, given each name's unit string."""
    walker = _UnitWalker(formula, {name: parse_unit(text) for name, text in units.items()})
    return walker.unit(formula.tree)


def check_rate_units(
    formula: ParsedFormula, units: Mapping[str, str], state_unit: str, time_unit: str
) -> None:
    """Check that every term of a rate (or yield) has the unit state/time.

    Raises :class:`FormulaError` naming the offending term and both units.
    """
    parsed = {name: parse_unit(text) for name, text in units.items()}
    expected = parse_unit(state_unit) / parse_unit(time_unit)
    walker = _UnitWalker(formula, parsed)
    walker.same_terms(formula.tree.body, expected, "a rate of change of the state")
