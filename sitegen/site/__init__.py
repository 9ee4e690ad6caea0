"""Stage 8: the site build. Runs every stage per scenario, caches, and writes the site atomically."""
