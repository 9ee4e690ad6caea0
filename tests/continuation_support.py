"""Shared helper of the continuation and map tests: small dimensionless models from text."""

from __future__ import annotations

from sitegen.model.model import Model, build_model
from sitegen.scenario.loader import load_text


def make_model(
    rate: str,
    parameters: dict[str, tuple[float, tuple[float, float] | None]],
    low: float,
    high: float,
) -> Model:
    """A dimensionless model dx/dt = rate on [low, high] (state symbol x)."""
    parts = [
        '[scenario]\ntitle = "test"\nsummary = "test"\nassessment_year = 2026\n',
        f'[state]\nsymbol = "x"\nname = "state"\nunit = "1"\nmin = {low}\nmax = {high}\n',
    ]
    for name, (value, bounds) in parameters.items():
        parts.append(f'[parameters.{name}]\nvalue = {value}\nunit = "1"\nname = "{name}"\n')
        if bounds is not None:
            parts.append(f"range = [{bounds[0]}, {bounds[1]}]\n")
    parts.append(f'[model]\nrate = "{rate}"\ntime_unit = "1"\n')
    return build_model(load_text("".join(parts), "test.toml", "test"))


def relative(value: float, expected: float) -> float:
    return abs(value - expected) / abs(expected)
