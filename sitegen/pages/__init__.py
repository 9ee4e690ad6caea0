"""Stage 7: pages. Self-contained HTML from the earlier stages' records, through Jinja2 templates."""
