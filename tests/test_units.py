"""Units: reading unit strings and checking every term of a rate, with the messages.

Every distinct unit name is its own base unit (kt and t differ on purpose), so a
model that mixes them is caught. The messages name the term and both units.
"""

from __future__ import annotations

from fractions import Fraction

import pytest
import sympy
from scenario_support import RATE_LINE_NUMBER, varied, with_rate

from sitegen.errors import FormulaError, ScenarioError
from sitegen.scenario import units
from sitegen.scenario.formula import parse_formula
from sitegen.scenario.loader import load_text
from sitegen.scenario.units import DIMENSIONLESS, Unit, UnitError, parse_unit

LOGISTIC_T = {"B": "t", "r": "1/yr", "K": "t", "H": "kt/yr"}
TERMS_HINT = "terms that are added or subtracted must have the same unit"


def check(formula: str, unit_of: dict[str, str], state: str, time: str = "yr") -> None:
    symbols = {name: sympy.Symbol(name, real=True) for name in unit_of}
    units.check_rate_units(parse_formula(formula, symbols), unit_of, state, time)


def unit_of_formula(formula: str, unit_of: dict[str, str]) -> str:
    symbols = {name: sympy.Symbol(name, real=True) for name in unit_of}
    return str(units.formula_unit(parse_formula(formula, symbols), unit_of))


def mismatch(formula: str, unit_of: dict[str, str], state: str, time: str = "yr") -> FormulaError:
    with pytest.raises(FormulaError) as info:
        check(formula, unit_of, state, time)
    return info.value


# Reading unit strings --------------------------------------------------------------
@pytest.mark.parametrize(
    ("text", "shown"),
    [
        ("t", "t"),
        ("kt/yr", "kt/yr"),
        ("1/yr", "1/yr"),
        ("1", "1"),
        ("kg*m/s^2", "kg*m/s^2"),
        ("kg m / s**2", "kg*m/s^2"),
        ("kg·m", "kg*m"),
        ("m.s", "m*s"),
        ("m^2", "m^2"),
        ("m^-2", "1/m^2"),
        ("m^(1/2)", "m^(1/2)"),
        ("m^(-1/2)", "1/m^(1/2)"),
        ("(kg/m)^2", "kg^2/m^2"),
        ("vessel-day/yr", "vessel-day/yr"),
        ("°C", "°C"),
        ("µg/l", "µg/l"),
        ("g/m^2/yr", "g/(m^2*yr)"),
        ("t/t", "1"),
        ("  t / yr  ", "t/yr"),
    ],
)
def test_unit_strings_are_read(text: str, shown: str) -> None:
    assert str(parse_unit(text)) == shown


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("", "the unit is empty"),
        ("   ", "the unit is empty"),
        ("kt//yr", "unexpected '/'"),
        ("2kt", "unexpected '2'"),
        ("m^x", "an exponent must be a whole number, e.g. m^3 or s^-2"),
        ("m^", "an exponent must be a whole number, e.g. m^3 or s^-2"),
        ("m^+2", "unexpected character '+'"),
        ("m^(1/0)", "an exponent divides by zero"),
        ("m^٣", "unexpected character '٣'"),
        ("(m", "a parenthesis is not closed"),
        ("m)", "unexpected ')'"),
        ("1/", "the unit ends too early"),
        ("m^2^3", "unexpected '^'"),
        ("t#", "unexpected character '#'"),
        ("a" * 101, "the unit is longer than 100 characters"),
    ],
)
def test_unreadable_unit_strings_say_why(text: str, message: str) -> None:
    with pytest.raises(UnitError) as info:
        parse_unit(text)
    assert info.value.message == message
    assert info.value.hint


def test_number_hint_only_for_numbers() -> None:
    with pytest.raises(UnitError) as info:
        parse_unit("2kt")
    assert info.value.hint == "numbers in units are not allowed except 1 and exponents (m^3)"
    with pytest.raises(UnitError) as info:
        parse_unit("kt//yr")
    assert info.value.hint == "write units like t, t/yr, 1/yr, kg*m/s^2 or 1 (dimensionless)"


def test_unit_arithmetic() -> None:
    metre, second = parse_unit("m"), parse_unit("s")
    assert metre / second == parse_unit("m/s")
    assert (metre * metre) ** Fraction(1, 2) == metre
    assert metre / metre == DIMENSIONLESS
    assert DIMENSIONLESS.dimensionless and not metre.dimensionless
    assert parse_unit("kt") != parse_unit("t")
    assert Unit.of({"m": Fraction(0)}) == DIMENSIONLESS


def test_unreadable_unit_in_a_file_names_the_key() -> None:
    text = varied('unit = "kt/yr"', 'unit = "kt//yr"')
    with pytest.raises(ScenarioError) as info:
        load_text(text, "stock.toml", "stock")
    assert info.value.render() == (
        "stock.toml:26: parameters.H.unit: cannot read the unit 'kt//yr': unexpected '/'\n"
        '    unit = "kt//yr"\n'
        "           ^\n"
        "  hint: write units like t, t/yr, 1/yr, kg*m/s^2 or 1 (dimensionless)"
    )


# Consistent models -------------------------------------------------------------------
@pytest.mark.parametrize(
    ("formula", "unit_of", "state", "time"),
    [
        ("r*B*(1 - B/K) - H", {"B": "kt", "r": "1/yr", "K": "kt", "H": "kt/yr"}, "kt", "yr"),
        (
            "r*B*(1 - B/K) - q*E*B",
            {"B": "t", "r": "1/yr", "K": "t", "q": "1/vessel-day", "E": "vessel-day/yr"},
            "t",
            "yr",
        ),
        ("r*p*(1 - p) - m*p", {"p": "1", "r": "1/yr", "m": "1/yr"}, "1", "yr"),
        ("-k*(T - Ta)", {"T": "°C", "Ta": "°C", "k": "1/min"}, "°C", "min"),
        ("g - c*v^2", {"v": "m/s", "g": "m/s^2", "c": "1/m"}, "m/s", "s"),
        ("R - k*sqrt(A)", {"h": "m", "R": "m/yr", "k": "1/yr", "A": "m^2"}, "m", "yr"),
        ("r*B*exp(-B/K)", {"B": "t", "r": "1/yr", "K": "t"}, "t", "yr"),
        ("r*B*log(K/B)", {"B": "t", "r": "1/yr", "K": "t"}, "t", "yr"),
        ("r*B*tanh(B/K)", {"B": "t", "r": "1/yr", "K": "t"}, "t", "yr"),
        ("r*B*(B/K)^p", {"B": "t", "r": "1/yr", "K": "t", "p": "1"}, "t", "yr"),
        ("r*B*(1 - (B/K)^(1/2))", {"B": "t", "r": "1/yr", "K": "t"}, "t", "yr"),
        ("r*B^2/K", {"B": "t", "r": "1/yr", "K": "t"}, "t", "yr"),
        ("max(0, r*B) - H", {"B": "t", "r": "1/yr", "H": "t/yr"}, "t", "yr"),
        ("min(H, r*B)", {"B": "t", "r": "1/yr", "H": "t/yr"}, "t", "yr"),
        ("(0 + r*B)*(1 - B/K)", {"B": "t", "r": "1/yr", "K": "t"}, "t", "yr"),
        ("r*B - 0", {"B": "t", "r": "1/yr"}, "t", "yr"),
        ("abs(r)*B + pi*H", {"B": "t", "r": "1/yr", "H": "t/yr"}, "t", "yr"),
        ("r*B*(1 - B/K) - H", {"B": "t", "r": "1/d", "K": "t", "H": "t/d"}, "t", "d"),
    ],
)
def test_consistent_models_pass(
    formula: str, unit_of: dict[str, str], state: str, time: str
) -> None:
    check(formula, unit_of, state, time)


def test_units_of_whole_formulas() -> None:
    area = {"A": "m^2", "k": "1/yr"}
    assert unit_of_formula("sqrt(A)", area) == "m"
    assert unit_of_formula("k*sqrt(A)", area) == "m/yr"
    assert unit_of_formula("A^(3/2)", area) == "m^3"
    assert unit_of_formula("abs(A)", area) == "m^2"
    assert unit_of_formula("exp(k/k)", area) == "1"
    assert unit_of_formula("max(A, 0)", area) == "m^2"


# Inconsistent models: the message names the term and both units. ---------------------
def test_quota_in_kt_against_biomass_in_t_word_for_word() -> None:
    error = mismatch("r*B*(1 - B/K) - H", LOGISTIC_T, "t")
    assert error.message == "term `H` is kt/yr but `r*B*(1 - B/K)` is t/yr"
    assert error.hint == TERMS_HINT
    assert (error.column, error.width) == (17, 1)


def test_quota_in_kt_in_a_file_renders_line_and_caret() -> None:
    text = varied('unit = "kt"\ncurrent', 'unit = "t"\ncurrent')
    text = varied('unit = "kt"\nname = "carrying', 'unit = "t"\nname = "carrying', text)
    with pytest.raises(ScenarioError) as info:
        load_text(text, "stock.toml", "stock")
    assert info.value.render() == (
        f"stock.toml:{RATE_LINE_NUMBER}: model.rate: "
        "term `H` is kt/yr but `r*B*(1 - B/K)` is t/yr\n"
        '    rate = "r*B*(1 - B/K) - H"\n'
        "                            ^\n"
        f"  hint: {TERMS_HINT}"
    )


@pytest.mark.parametrize(
    ("formula", "unit_of", "state", "message"),
    [
        ("r*B*(1 - B/K) - H", {**LOGISTIC_T, "K": "kt"}, "t", "term `B/K` is t/kt but `1` is 1"),
        (
            "r*p*(1 - p) - m",
            {"p": "1", "r": "1/yr", "m": "1"},
            "1",
            "term `m` is 1 but `r*p*(1 - p)` is 1/yr",
        ),
        ("r*B*(B - 5)", LOGISTIC_T, "t", "term `5` is 1 but `B` is t"),
        ("r*B*(1 - B^(1/2)/K)", LOGISTIC_T, "t", "term `B^(1/2)/K` is 1/t^(1/2) but `1` is 1"),
        ("r", LOGISTIC_T, "t", "term `r` is 1/yr but a rate of change of the state must be t/yr"),
    ],
)
def test_inconsistent_terms_are_named_with_both_units(
    formula: str, unit_of: dict[str, str], state: str, message: str
) -> None:
    assert mismatch(formula, unit_of, state).message == message


def test_falling_body_with_a_wrong_drag_unit() -> None:
    error = mismatch("g - c*v^2", {"v": "m/s", "g": "m/s^2", "c": "1/s"}, "m/s", time="s")
    assert error.message == "term `c*v^2` is m^2/s^3 but `g` is m/s^2"


def test_wrong_time_unit_names_the_expected_unit() -> None:
    error = mismatch("r*B*(1 - B/K) - H", {**LOGISTIC_T, "H": "t/yr"}, "t", time="d")
    assert error.message == (
        "term `r*B*(1 - B/K)` is t/yr but a rate of change of the state must be t/d"
    )
    assert error.hint == "every term of the rate must have the unit of the state per unit of time"


@pytest.mark.parametrize(
    ("formula", "message"),
    [
        ("r*B*exp(B)", "the argument of exp() `B` is t; it must be dimensionless"),
        ("r*B*log(K)", "the argument of log() `K` is t; it must be dimensionless"),
        ("r*B*log(B, K)", "the argument of log() `B` is t; it must be dimensionless"),
        ("r*B*tanh(B)", "the argument of tanh() `B` is t; it must be dimensionless"),
    ],
)
def test_exp_and_log_of_quantities_with_units_are_refused(formula: str, message: str) -> None:
    error = mismatch(formula, LOGISTIC_T, "t")
    assert error.message == message
    assert error.hint == "divide by a quantity of the same unit, e.g. log(K/B)"


def test_power_with_parameter_exponent_needs_a_dimensionless_base() -> None:
    error = mismatch("r*B^p", {**LOGISTIC_T, "p": "1"}, "t")
    assert error.message == (
        "`B` is t and is raised to a non-numeric power; it must be dimensionless"
    )
    assert error.hint == "divide it by a reference value first, e.g. (v/v1)^p with v1 = 1 m/s"


def test_exponent_with_a_unit_is_refused() -> None:
    error = mismatch("r*B^r", LOGISTIC_T, "t")
    assert error.message == "the exponent `r` is 1/yr but an exponent must be dimensionless"
    assert mismatch("2^B", LOGISTIC_T, "t").message == (
        "the exponent `B` is t but an exponent must be dimensionless"
    )


def test_sqrt_of_square_metres_is_metres() -> None:
    unit_of = {"h": "m", "k": "1/yr", "A": "m^2", "Q": "m/yr"}
    check("k*sqrt(A) - Q", unit_of, "m")
    error = mismatch("k*sqrt(A)*h/A - Q", unit_of, "m")
    assert error.message == "term `k*sqrt(A)*h/A` is 1/yr but `Q` is m/yr"


def test_min_and_max_arguments_must_agree() -> None:
    error = mismatch("min(H, B)", LOGISTIC_T, "t")
    assert error.message == "min() compares `B` (t) with `H` (kt/yr)"
    assert error.hint == "the arguments of min() must have the same unit"
    error = mismatch("max(r*B, H)", LOGISTIC_T, "t")
    assert error.message == "max() compares `H` (kt/yr) with `r*B` (t/yr)"


def test_a_literal_zero_fits_any_unit() -> None:
    unit_of = {"B": "t", "r": "1/yr", "H": "t/yr"}
    check("max(0, r*B - H)", unit_of, "t")
    check("min(0, r*B) + max(r*B, 0)", unit_of, "t")
    check("(0 + r*B) - H", unit_of, "t")


def test_long_terms_are_cut_short_in_messages() -> None:
    error = mismatch("B" + "*B" * 100, {"B": "t"}, "t")
    assert "..." in error.message
    assert len(error.message) < 200


def test_mismatch_in_a_policy_uses_its_own_parameters() -> None:
    policy = (
        '\n[[policies]]\nname = "effort"\nrate = "r*B*(1 - B/K) - F*B"\n'
        '[policies.parameters.F]\nvalue = 0.1\nunit = "kt/yr"\nname = "rate"\n'
    )
    with pytest.raises(ScenarioError) as info:
        load_text(with_rate("r*B*(1 - B/K) - H") + policy, "stock.toml", "stock")
    assert info.value.key == "policies[1].rate"
    assert info.value.message == "term `F*B` is kt^2/yr but `r*B*(1 - B/K)` is kt/yr"
    fixed = policy.replace('unit = "kt/yr"', 'unit = "1/yr"')
    scenario = load_text(with_rate("r*B*(1 - B/K) - H") + fixed, "stock.toml", "stock")
    assert [p.name for p in scenario.policies[0].parameters] == ["F"]


def test_yield_units_are_checked_too() -> None:
    text = varied('yield = "H"', 'yield = "r"')
    with pytest.raises(ScenarioError) as info:
        load_text(text, "stock.toml", "stock")
    assert info.value.key == "model.yield"
    assert info.value.message == (
        "term `r` is 1/yr but a rate of change of the state must be kt/yr"
    )
