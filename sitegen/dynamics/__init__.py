"""Stage 4: time behaviour and sustainability figures of one model (imports nothing)."""
