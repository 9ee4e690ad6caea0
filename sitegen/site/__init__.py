"""Stage 8: the site build: every stage per scenario, a cache, and an atomic write of the site."""
