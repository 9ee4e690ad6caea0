"""Numbers, quantities, percentages and durations as a reader sees them on a page.

Conventions (common practice, no source):

- 3 significant figures by default, rounded half up on the number's shortest
  decimal form (``repr``), so a value computed as 124.99999999999999 reads
  "125" and 0.30000000000000004 reads "0.3"; trailing zeros after the decimal
  point are dropped ("2", not "2.00").
- A comma between thousands in the whole part ("12,500"); none in the decimals.
- Scientific form "1.25 × 10⁻⁷" below 0.0001 and from one thousand million up,
  where a row of zeros is harder to read than a power of ten.
- The minus sign is U+2212 ("−3"), never a hyphen; zero has no sign.
- ``None`` and NaN read "not available"; infinities read "unbounded".

Units are written as the scenario declares them, with the few ASCII spellings
tidied the same way everywhere: ``^2`` becomes ², ``*`` a middle dot, a bare
rate ``1/yr`` reads "per year" (the time unit as a word), and the dimensionless unit
"1" (or "") is left out.
"""

from __future__ import annotations

import math
import re
from decimal import ROUND_HALF_UP, Decimal

NOT_AVAILABLE = "not available"
UNBOUNDED = "unbounded"
MINUS = "\u2212"
SMALL = Decimal("0.0001")  # below this (after rounding) the power-of-ten form is used
LARGE = Decimal("1e9")  # from this up as well
_SUPERSCRIPT = str.maketrans("0123456789-", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻")
DIMENSIONLESS = ("", "1", "-")
# Units that are counted things read in the plural ("1,850 animals", "10 pairs/yr").
COUNT_NOUNS = {"animal": "animals", "pair": "pairs", "bird": "birds", "tree": "trees"}

# Time units as words: (singular, plural). Keys are the spellings scenarios use.
TIME_WORDS: dict[str, tuple[str, str]] = {
    "yr": ("year", "years"),
    "y": ("year", "years"),
    "a": ("year", "years"),
    "year": ("year", "years"),
    "month": ("month", "months"),
    "wk": ("week", "weeks"),
    "week": ("week", "weeks"),
    "d": ("day", "days"),
    "day": ("day", "days"),
    "h": ("hour", "hours"),
    "hr": ("hour", "hours"),
    "hour": ("hour", "hours"),
    "min": ("minute", "minutes"),
    "s": ("second", "seconds"),
    "sec": ("second", "seconds"),
}


def _missing(value: float | None) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value))


def rounded(value: float, sig: int = 3) -> Decimal:
    """``value`` rounded half up to ``sig`` significant figures, as an exact Decimal.

    The rounding starts from the shortest decimal form of the float (``repr``), so
    binary noise in the last place never decides a half. Raises ValueError for
    non-finite input.
    """
    if not math.isfinite(value):
        raise ValueError(f"not a finite number: {value!r}")
    if sig < 1:
        raise ValueError(f"sig must be at least 1, got {sig}")
    exact = Decimal(repr(float(value)))
    if exact == 0:
        return Decimal(0)
    exponent = exact.adjusted() - sig + 1
    result = exact.quantize(Decimal(1).scaleb(exponent), rounding=ROUND_HALF_UP)
    # 999.6 -> 1.00E+3: one more digit than asked for; requantize at the new magnitude.
    if result.adjusted() != exact.adjusted():
        result = result.quantize(Decimal(1).scaleb(exponent + 1), rounding=ROUND_HALF_UP)
    return result


def _plain(d: Decimal) -> str:
    """A non-negative Decimal in positional form, thousands separated, no trailing zeros."""
    text = format(d, "f")
    whole, _, decimals = text.partition(".")
    decimals = decimals.rstrip("0")
    whole = f"{int(whole):,}"
    return f"{whole}.{decimals}" if decimals else whole


def number(value: float | None, sig: int = 3) -> str:
    """A number for a sentence: ``sig`` significant figures (module conventions)."""
    if _missing(value):
        return NOT_AVAILABLE
    assert value is not None
    if math.isinf(value):
        return UNBOUNDED if value > 0 else MINUS + UNBOUNDED
    d = rounded(float(value), sig)
    if d == 0:
        return "0"
    sign = MINUS if d < 0 else ""
    d = abs(d)
    if d < SMALL or d >= LARGE:
        exponent = d.adjusted()
        mantissa = _plain(d.scaleb(-exponent))
        power = str(exponent).translate(_SUPERSCRIPT)
        return f"{sign}{mantissa} × 10{power}"
    return sign + _plain(d)


def unit_text(unit: str) -> str:
    """A declared unit tidied for reading ("g/m^2/yr" -> "g/m²/yr", "1/yr" -> "per year")."""
    unit = unit.strip()
    if unit in DIMENSIONLESS:
        return ""
    text = re.sub(r"\^(-?\d+)", lambda m: m.group(1).translate(_SUPERSCRIPT), unit)
    text = text.replace("*", "·")
    if text.startswith("1/"):
        rest = text[2:]
        text = "per " + (TIME_WORDS[rest][0] if rest in TIME_WORDS else rest)
    return text


def quantity(value: float | None, unit: str, sig: int = 3) -> str:
    """A number with its unit: "125 kt/yr", "4.5 °C", "0.2 per yr"; "not available" bare."""
    text = number(value, sig)
    if _missing(value):
        return text
    words = unit_text(unit)
    if not words:
        return text
    head, slash, rest = words.partition("/")
    if head in COUNT_NOUNS and rounded(float(value), sig) != 1:  # type: ignore[arg-type]
        words = COUNT_NOUNS[head] + slash + rest
    if words == "%":
        return text + "%"
    return f"{text} {words}"


def percent(value: float | None, *, given: str, sig: int = 3) -> str:
    """A percentage: "20%".

    ``given`` says what ``value`` is and is required, so no call is ambiguous:
    "fraction" (0.2 reads "20%") or "percent" (20 reads "20%").
    """
    if given not in ("fraction", "percent"):
        raise ValueError(f"given must be 'fraction' or 'percent', got {given!r}")
    if _missing(value):
        return NOT_AVAILABLE
    assert value is not None
    scaled = 100.0 * value if given == "fraction" else float(value)
    return number(scaled, sig) + "%"


def time_words(time_unit: str, plural: bool = True) -> str:
    """The time unit as a word ("yr" -> "years"); an unknown unit is kept as written."""
    words = TIME_WORDS.get(time_unit.strip())
    if words is None:
        return time_unit.strip()
    return words[1] if plural else words[0]


def duration(value: float | None, time_unit: str, sig: int = 3) -> str:
    """A length of time in the model's own time unit, as words: "12.4 years", "1 hour".

    The unit is not converted (a figure's time axis is in the same unit); the
    singular is used only when the rounded number is exactly 1.
    """
    text = number(value, sig)
    if _missing(value) or value is None or math.isinf(value):
        return text
    one = rounded(float(value), sig) == 1
    return f"{text} {time_words(time_unit, plural=not one)}"
