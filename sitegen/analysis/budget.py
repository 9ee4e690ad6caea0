"""The default time budget of one SymPy step, in seconds.

A module of its own (no SymPy import) so that the command line can show the
default in its help without loading SymPy.
"""

DEFAULT_BUDGET_S = 5.0
