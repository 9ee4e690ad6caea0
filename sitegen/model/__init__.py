"""Stage 2: the model (SymPy expressions and their numeric versions)."""
