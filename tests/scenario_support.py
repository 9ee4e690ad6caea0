"""A small valid scenario text for the stage-1 tests, and ways to vary it.

The tests build hostile and faulty files from this text instead of from the
bundled examples, so that editing an example never changes what they check.
"""

from __future__ import annotations

import json

BASE = """\
[scenario]
title = "Test stock under a catch limit"
summary = "A logistic stock fished under a fixed catch."
assessment_year = 2026
tags = ["test"]

[state]
symbol = "B"
name = "biomass"
unit = "kt"
current = 640

[parameters.r]
value = 0.5
unit = "1/yr"
name = "growth rate"
range = [0.3, 0.7]

[parameters.K]
value = 1000
unit = "kt"
name = "carrying capacity"

[parameters.H]
value = 100
unit = "kt/yr"
name = "catch limit"
range = [0, 160]

[model]
rate = "r*B*(1 - B/K) - H"
lever = "H"
yield = "H"
"""

RATE_LINE = 'rate = "r*B*(1 - B/K) - H"'
RATE_LINE_NUMBER = BASE.splitlines().index(RATE_LINE) + 1


def varied(old: str, new: str, text: str = BASE) -> str:
    """``text`` with the one occurrence of ``old`` replaced by ``new``."""
    assert text.count(old) == 1, f"{old!r} must occur exactly once"
    return text.replace(old, new)


def toml_string(value: str) -> str:
    """``value`` as a TOML basic string (JSON's escapes are valid TOML)."""
    return json.dumps(value)


def with_rate(rate: str) -> str:
    """The base scenario with another ``rate`` (any text, quoted for TOML)."""
    return varied(RATE_LINE, "rate = " + toml_string(rate))
