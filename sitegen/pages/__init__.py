"""Stage 7: pages. Self-contained HTML from the earlier stages' records, via Jinja2 templates."""
