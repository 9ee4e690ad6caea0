"""Stage 5: figures (analysis records in, deterministic SVG text out)."""
