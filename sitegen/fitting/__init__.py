"""Stage 5: fitting the model to monitoring data (removals and an abundance index)."""
