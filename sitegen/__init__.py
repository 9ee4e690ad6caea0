"""sitegen: sustainability dossiers for one-dimensional resource models.

The public surface: :func:`load_scenario` reads and validates one scenario file
and :class:`ScenarioError` is the one error users see. ``load_scenario`` is
imported on first use, so that light commands (a rebuild with nothing changed)
do not pay for SymPy.
"""

from typing import Any

from sitegen.errors import ScenarioError as ScenarioError

__version__ = "0.1.0"
__all__ = ["ScenarioError", "__version__", "load_scenario"]


def __getattr__(name: str) -> Any:
    if name == "load_scenario":
        from sitegen.scenario.loader import load_scenario

        return load_scenario
    raise AttributeError(f"module 'sitegen' has no attribute {name!r}")
