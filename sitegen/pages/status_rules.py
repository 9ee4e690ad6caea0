"""The status words and their rules: a module of constants with no heavy imports.

The index page states these rules beside the status of each scenario; it is
rendered on every build, including a rebuild with nothing changed, which must
not load NumPy, SymPy or Matplotlib. :mod:`sitegen.pages.sentences` applies
the rules.
"""

from __future__ import annotations

NEAR_PERCENT = 10.0  # margin below this percentage of the limit reads "near"
CLEAR, NEAR, PAST, NOT_ASSESSED = "clear", "near the limit", "past the limit", "not assessed"
DEFAULT_TOLERANCE = 0.05  # used only when the summary states none (as in stage 4)

STATUS_RULES: tuple[tuple[str, str], ...] = (
    (
        PAST,
        "today's lever setting is beyond its sustainable limit (or today's state is already "
        "falling past a tipping point, or flipping up for a pollutant or pest), or the state "
        "is on the wrong side of its limit reference level, or today's lever setting is "
        "beyond the setting at which the resting state reaches that level",
    ),
    (
        NEAR,
        f"not past the limit, but the margin to the lever limit (or to the setting at which "
        f"the resting state reaches its limit reference level) is under {NEAR_PERCENT:g}% of "
        "that setting, or, allowing for the uncertainty in the model's parameters, the risk "
        "of collapse (or of a flip, for a pollutant or pest) under today's setting is above "
        "the scenario's risk tolerance (5% unless the scenario states another), or, for a "
        "model with one stable state that cannot collapse or flip, more than that share of "
        "the samples rest on the wrong side of the limit reference level, or the state is on "
        "the right side of its limit reference level today but is moving to cross it",
    ),
    (
        CLEAR,
        f"a margin of at least {NEAR_PERCENT:g}% to the lever limit (or no limit inside the "
        "range studied), the state on the right side of its limit reference level, and any "
        "risk of collapse or flip within the tolerance; without a limit level, a state "
        "that reaches its target level (the reason says when) or comes to rest on its good "
        "side (the wrong side reads near the limit)",
    ),
    (
        NOT_ASSESSED,
        "nothing to judge against: no lever limit, no limit reference level and no "
        "uncertainty analysis (for example a model without a lever)",
    ),
)
