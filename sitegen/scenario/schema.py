"""One table per TOML section: the keys a scenario may use, their types and meaning.

These tables drive validation (types, required keys, "did you mean" hints for
unknown keys) and the key reference in ``docs/scenario-format.md``; a test fails
when the two differ. Key names are a contract: extend them, never rename them.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Key:
    """One allowed key: its type word, whether it is required, default and meaning."""

    name: str
    kind: str
    required: bool
    default: str
    description: str


def _key(name: str, kind: str, description: str, default: str = "", required: bool = False) -> Key:
    return Key(name, kind, required, default, description)


# kind words: text, markdown, integer, number, fraction, list of text, formula, name,
# range (two numbers), table of numbers, table, array of tables
SECTIONS: dict[str, tuple[Key, ...]] = {
    "scenario": (
        _key("title", "text", "Title shown on every page.", required=True),
        _key(
            "summary", "markdown", "One paragraph saying what the scenario is about.", required=True
        ),
        _key("assessment_year", "integer", "Year the assessment refers to.", required=True),
        _key("tags", "list of text", "Words that group scenarios for comparison.", "[]"),
        _key("notes", "markdown", "Longer notes for the dossier.", '""'),
        _key("sources", "list of text", "Where the parameter values came from.", "[]"),
    ),
    "state": (
        _key("symbol", "name", "The state's name in formulas, e.g. B.", required=True),
        _key("name", "text", "What the state is, in words.", required=True),
        _key("unit", "unit", "Unit of the state, e.g. t.", required=True),
        _key("min", "number", "Lower end of the region analysed.", "0"),
        _key("max", "number", "Upper end of the region analysed; derived when absent.", "derived"),
        _key("current", "number", "Today's observed value of the state.", "none"),
        _key(
            "collapse_level",
            "number",
            "Level at or below which the state counts as collapsed.",
            "min",
        ),
        _key(
            "better",
            "text",
            'Which way is good: "higher" (stocks, water) or "lower" (pollutants, pests).',
            '"higher"',
        ),
    ),
    "parameter": (
        _key("value", "number", "The parameter's value.", required=True),
        _key("unit", "unit", "Its unit (1 for dimensionless).", required=True),
        _key("name", "text", "What it is, in words.", required=True),
        _key("range", "range", "[low, high] explored in diagrams and sliders.", "none"),
        _key("note", "text", "A remark shown beside it.", '""'),
    ),
    "model": (
        _key(
            "rate",
            "formula",
            "Right-hand side f of d(state)/dt = f(state; parameters).",
            required=True,
        ),
        _key("lever", "name", "The parameter the manager sets (quota, effort, loading).", "none"),
        _key("yield", "formula", "What is taken per unit time, e.g. H or q*E*B.", "none"),
        _key("time_unit", "unit", "Unit of time of the rate.", '"yr"'),
        _key("shock", "fraction", "Share of the stable state removed in the recovery test.", "0.5"),
    ),
    "policy": (
        _key("name", "text", "Name of the policy.", required=True),
        _key(
            "values",
            "table of numbers",
            "Parameter settings that differ from the base model.",
            "{}",
        ),
        _key("rate", "formula", "A rate of its own (another harvest rule).", "base rate"),
        _key("yield", "formula", "A yield of its own.", "base yield"),
        _key(
            "parameters", "table", "Extra parameters of its own rate, as [parameters.NAME].", "{}"
        ),
    ),
    "uncertainty": (
        _key("samples", "integer", "How many parameter sets to draw.", "10000"),
        _key("seed", "integer", "Seed of the random draws, so results repeat.", "0"),
        _key("tolerance", "fraction", "Largest acceptable collapse risk.", "0.05"),
    ),
    "distribution": (
        _key("distribution", "text", "normal, lognormal, uniform or triangular.", required=True),
        _key("mean", "number", "normal: mean.", "parameter value"),
        _key("sd", "number", "normal: standard deviation.", "none"),
        _key("median", "number", "lognormal: median.", "parameter value"),
        _key("sdlog", "number", "lognormal: standard deviation of the natural log.", "none"),
        _key("low", "number", "uniform, triangular: lowest value.", "none"),
        _key("mode", "number", "triangular: most likely value.", "parameter value"),
        _key("high", "number", "uniform, triangular: highest value.", "none"),
    ),
    "history": (
        _key("year", "integer", "The year.", required=True),
        _key("values", "table of numbers", "That year's estimates and settings.", required=True),
    ),
    "reference": (
        _key("limit", "number", "Limit level of the state (below it: depleted).", "B_MSY/2"),
        _key("target", "number", "Target level of the state.", "none"),
        _key("trigger", "number", "Level below which removals are ramped down.", "none"),
    ),
    "economics": (
        _key("price", "number", "Price per unit of yield.", required=True),
        _key("cost", "number", "Cost per unit of lever per unit time.", required=True),
        _key("currency", "text", "Currency word shown with money figures.", '""'),
    ),
    "data": (
        _key("file", "text", "CSV file of the data, relative to this scenario file.", "none"),
        _key(
            "values",
            "table",
            "Inline data instead of a file: one list per column, e.g. year = [...].",
            "none",
        ),
        _key("year", "text", "Name of the year column.", '"year"'),
        _key(
            "removal",
            "text",
            "Name of the removal column (the lever's value that year, in its unit).",
            required=True,
        ),
        _key("index", "list of text", "Names of the abundance index columns.", required=True),
        _key(
            "estimate",
            "list of text",
            "Parameters to fit (each needs a range, the search bounds).",
            required=True,
        ),
        _key(
            "start",
            "text or number",
            'State at the start of the first year: a parameter name, a number or "estimate".',
            '"estimate"',
        ),
        _key("timing", "text", 'When the index is read: "start" or "mid" of the year.', '"start"'),
        _key("replicates", "integer", "Bootstrap replicates for the intervals (0: none).", "500"),
    ),
    "maps": (
        _key("x", "name", "Parameter on the horizontal axis.", required=True),
        _key("y", "name", "Parameter on the vertical axis.", required=True),
    ),
}

TOP_LEVEL: tuple[Key, ...] = (
    _key("scenario", "table", "Title, summary, year, tags, notes, sources.", required=True),
    _key("state", "table", "The state variable and its region.", required=True),
    _key("parameters", "table", "One [parameters.NAME] table per parameter.", required=True),
    _key("model", "table", "The rate, the lever and the yield.", required=True),
    _key("policies", "array of tables", "Alternative settings or rules, as [[policies]].", "[]"),
    _key(
        "uncertainty",
        "table",
        "Sampling settings and one [uncertainty.NAME] per parameter.",
        "none",
    ),
    _key("history", "array of tables", "Earlier years, as [[history]].", "[]"),
    _key("reference", "table", "Declared reference levels of the state.", "none"),
    _key("economics", "table", "Price and cost for economic yields.", "none"),
    _key("maps", "array of tables", "Extra parameter pairs for two-parameter maps.", "[]"),
    _key("data", "table", "Monitoring data (removals and an index) to fit the model to.", "none"),
)

DISTRIBUTION_NUMBERS: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    # distribution -> (required numbers, numbers that default to the parameter's value)
    "normal": (("sd",), ("mean",)),
    "lognormal": (("sdlog",), ("median",)),
    "uniform": (("low", "high"), ()),
    "triangular": (("low", "high"), ("mode",)),
}

RESERVED_NAMES = frozenset({"abs", "exp", "log", "max", "min", "sqrt", "tanh", "pi", "t", "time"})


def keys_of(section: str) -> dict[str, Key]:
    """Key name -> :class:`Key` for a section of :data:`SECTIONS` (or ``"top"``)."""
    table = TOP_LEVEL if section == "top" else SECTIONS[section]
    return {key.name: key for key in table}


def reference_markdown() -> str:
    """The key reference as Markdown tables, one per section (for the docs)."""
    titles = {
        "top": "Top level",
        "scenario": "[scenario]",
        "state": "[state]",
        "parameter": "[parameters.NAME]",
        "model": "[model]",
        "policy": "[[policies]]",
        "uncertainty": "[uncertainty]",
        "distribution": "[uncertainty.NAME]",
        "history": "[[history]]",
        "reference": "[reference]",
        "economics": "[economics]",
        "maps": "[[maps]]",
        "data": "[data]",
    }
    parts: list[str] = []
    for section, title in titles.items():
        table = TOP_LEVEL if section == "top" else SECTIONS[section]
        parts.append(f"### `{title}`\n")
        parts.append("| key | type | required | default | meaning |")
        parts.append("|---|---|---|---|---|")
        for key in table:
            required = "yes" if key.required else "no"
            default = key.default or ""
            parts.append(
                f"| `{key.name}` | {key.kind} | {required} | {default} | {key.description} |"
            )
        parts.append("")
    return "\n".join(parts)
