"""Stage 1: reading and validating scenario files (the only stage that reads input)."""
