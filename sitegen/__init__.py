"""sitegen: sustainability dossiers for one-dimensional resource models.

The public surface: :func:`load_scenario` reads and validates one scenario file
and :class:`ScenarioError` is the one error users see.
"""

from sitegen.errors import ScenarioError as ScenarioError
from sitegen.scenario.loader import load_scenario as load_scenario

__version__ = "0.1.0"
__all__ = ["ScenarioError", "__version__", "load_scenario"]
