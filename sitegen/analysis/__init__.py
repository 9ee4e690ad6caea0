"""Stage 3: analysis (equilibria, stability, bifurcations, continuation, maps)."""
