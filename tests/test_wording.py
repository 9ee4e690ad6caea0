"""Number wording on hand cases.

Conventions checked here are common practice, no source: 3 significant figures,
rounding half up on the shortest decimal form, a comma between thousands, the
minus sign U+2212, powers of ten for very small and very large values.
"""

from __future__ import annotations

import math

import pytest

from sitegen.pages import wording

MINUS = "\u2212"


@pytest.mark.parametrize(
    ("value", "text"),
    [
        (125.0, "125"),
        (124.99999999999999, "125"),  # binary noise from K*r/4 must not show
        (0.30000000000000004, "0.3"),
        (12_500.0, "12,500"),
        (1234.5, "1,230"),
        (99_999.0, "100,000"),
        (999.6, "1,000"),  # rounding carries into a new digit
        (0.00123, "0.00123"),
        (0.125, "0.125"),
        (2.675, "2.68"),  # half up on the decimal form (2.675 is 2.67499... in binary)
        (0.0125, "0.0125"),
        (1.005, "1.01"),
        (7.0, "7"),  # no trailing zeros
        (0.0, "0"),
        (-0.0, "0"),
        (1.25e-7, "1.25 × 10⁻⁷"),
        (3.4e12, "3.4 × 10¹²"),
        (1e9, "1 × 10⁹"),
        (999_000_000.0, "999,000,000"),
        (0.0001, "0.0001"),
        (0.00009, "9 × 10⁻⁵"),
    ],
)
def test_number_hand_cases(value: float, text: str) -> None:
    assert wording.number(value) == text


def test_negative_numbers_use_the_minus_sign() -> None:
    assert wording.number(-3.14159) == MINUS + "3.14"
    assert wording.number(-12_500) == MINUS + "12,500"
    assert wording.number(-1.25e-7) == MINUS + "1.25 × 10⁻⁷"
    assert "-" not in wording.number(-5.0)


def test_half_up_not_half_even() -> None:
    # Half even would give 0.124 and 12; half up gives 0.125 and 13 (common practice).
    assert wording.number(0.1245) == "0.125"
    assert wording.number(12.5, sig=2) == "13"
    assert wording.number(-12.5, sig=2) == MINUS + "13"


def test_other_significant_figures() -> None:
    assert wording.number(3.14159, sig=5) == "3.1416"
    assert wording.number(123_456.0, sig=1) == "100,000"
    with pytest.raises(ValueError):
        wording.number(1.0, sig=0)


@pytest.mark.parametrize("value", [None, math.nan])
def test_missing_values(value: float | None) -> None:
    assert wording.number(value) == "not available"
    assert wording.quantity(value, "kt") == "not available"
    assert wording.percent(value, given="fraction") == "not available"
    assert wording.duration(value, "yr") == "not available"


def test_infinities() -> None:
    assert wording.number(math.inf) == "unbounded"
    assert wording.number(-math.inf) == MINUS + "unbounded"


def test_units() -> None:
    assert wording.quantity(125, "kt/yr") == "125 kt/yr"
    assert wording.quantity(0.32, "g/m^2/yr") == "0.32 g/m²/yr"
    assert wording.quantity(0.2, "1/yr") == "0.2 per year"  # a rate in words, not "1/yr"
    assert wording.quantity(0.03, "1/h") == "0.03 per hour"
    assert wording.quantity(3.0, "1/m") == "3 per m"  # not a time unit: kept as written
    assert wording.quantity(4.0, "1") == "4"
    assert wording.quantity(4.0, "") == "4"
    assert wording.quantity(9.81, "kg*m/s^2") == "9.81 kg·m/s²"
    assert wording.quantity(4.5, "°C") == "4.5 °C"
    assert wording.quantity(-4.5, "°C") == MINUS + "4.5 °C"
    assert wording.quantity(20, "%") == "20%"
    assert wording.quantity(3.0, "m^-1") == "3 m⁻¹"
    assert wording.quantity(1850, "animal") == "1,850 animals"
    assert wording.quantity(1, "animal") == "1 animal"
    assert wording.quantity(10, "pair/yr") == "10 pairs/yr"


def test_percent_says_what_it_is_given() -> None:
    assert wording.percent(0.1741, given="fraction") == "17.4%"
    assert wording.percent(19.999999999999993, given="percent") == "20%"
    assert wording.percent(0.0004, given="fraction") == "0.04%"
    with pytest.raises(ValueError):
        wording.percent(0.2, given="share")
    with pytest.raises(TypeError):
        wording.percent(0.2)  # type: ignore[call-arg]


def test_durations_in_words() -> None:
    assert wording.duration(12.44, "yr") == "12.4 years"
    assert wording.duration(1.0, "h") == "1 hour"
    assert wording.duration(1.0004, "yr") == "1 year"  # rounds to exactly 1
    assert wording.duration(3.2, "h") == "3.2 hours"
    assert wording.duration(2.535, "s") == "2.54 seconds"
    assert wording.duration(147.43, "h") == "147 hours"
    assert wording.duration(5.0, "fortnight") == "5 fortnight"  # unknown units kept as written


def test_rounded_is_exact_decimal() -> None:
    assert str(wording.rounded(124.99999999999999)) == "125"
    assert float(wording.rounded(0.30000000000000004)) == 0.3
    with pytest.raises(ValueError):
        wording.rounded(math.inf)
