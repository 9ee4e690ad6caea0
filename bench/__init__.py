"""Benchmarks of sitegen: run them all with ``python -m bench`` (``--quick`` for a short run)."""
