"""The cautions every page carries, in our own words, and the extra ones of each field.

Every dossier and the brief state that the results come from a simplified model
and defer to the agency's own assessment procedures, local regulations and
qualified, licensed professionals. Scenarios outside resource management (a
cold store, an airdrop, drinking water, contaminated land) add the cautions of
their own field; the field is recognised from the scenario's ``tags``
(:data:`FIELD_TAGS`, matched case-insensitively).
"""

from __future__ import annotations

from collections.abc import Iterable

GENERAL: tuple[str, ...] = (
    "These results come from a simplified model of one quantity with illustrative or "
    "estimated inputs. They are no substitute for the agency's own assessment procedures, "
    "the applicable local regulations, or the judgement of qualified, licensed "
    "professionals; decisions about harvest, loading, pumping or any other use rest with "
    "them.",
    "A brief is a snapshot: monitoring data arrive late, and reference levels are often "
    "proxies for quantities nobody measures directly.",
    "Equilibrium results assume constant parameters, no time lags and no chance events: "
    "a system that fluctuates can cross a threshold that the deterministic model calls "
    "safe. Keep a margin.",
    "A maximum sustainable yield is a limit, not a target: a fixed removal set at the "
    "computed maximum sits exactly on the tipping point.",
    "Once a tipping point is crossed, recovery may need much more than undoing the change "
    "(hysteresis), and slow systems such as lakes and aquifers can hide for years a change "
    "that is already committed.",
)

FIELD_CAUTIONS: dict[str, tuple[str, ...]] = {
    "cooling": (
        "Stored food and medicines are governed by the applicable storage and cold-chain "
        "rules and the manufacturer's instructions. A modelled time to a temperature never "
        "replaces measured temperatures from a calibrated logger, and stock that may have "
        "been exposed must be assessed by the responsible professional (for example a "
        "pharmacist or food-safety officer) before it is used or discarded.",
    ),
    "falling": (
        "Airdrops and parachute descents must follow the applicable aviation rules and the "
        "equipment maker's limits and be planned and approved by qualified personnel. A "
        "terminal-speed estimate ignores wind and gusts, canopy opening, oscillation, "
        "altitude and air density, and the ground at the landing site.",
    ),
    "water": (
        "Drinking-water and water-quality decisions follow the applicable standards and the "
        "instructions of the competent authority; a model of a well-mixed volume cannot "
        "show layering, short-circuiting or local hot spots.",
    ),
    "land": (
        "Contaminated-land decisions follow the applicable remediation standards and the "
        "advice of a qualified assessor; first-order decay is an idealisation, and real "
        "degradation can stall at low concentrations.",
    ),
    "wildlife": (
        "Hunting and culling follow the applicable game and wildlife laws, seasons and "
        "permits; counts of animals are estimates with wide errors.",
    ),
    "forestry": (
        "Spraying and other pest control follow the applicable plant-protection rules and "
        "product labels, applied by licensed operators; outbreaks also depend on weather and "
        "stand age, which the model holds constant.",
    ),
    "fisheries": (
        "Catch limits are set under the applicable fisheries law and management plan; "
        "removals here mean all removals, including discards and unreported catch.",
    ),
}

FIELD_TAGS: dict[str, frozenset[str]] = {
    "cooling": frozenset({"cold chain", "cold store", "cooling", "food safety", "vaccines"}),
    "falling": frozenset({"airdrop", "parachute", "falling body", "drag"}),
    "water": frozenset({"water quality", "drinking water", "groundwater", "water supply"}),
    "land": frozenset({"contaminated land", "remediation", "soil"}),
    "wildlife": frozenset({"wildlife", "hunting", "game"}),
    "forestry": frozenset({"forestry", "pests", "forest"}),
    "fisheries": frozenset({"fisheries", "fishery", "shellfish"}),
}


def fields_of(tags: Iterable[str]) -> tuple[str, ...]:
    """The fields whose cautions apply to a scenario with these tags, in a fixed order."""
    lowered = {tag.strip().lower() for tag in tags}
    return tuple(name for name, words in FIELD_TAGS.items() if lowered & words)


def cautions_for(tags: Iterable[str]) -> tuple[str, ...]:
    """The general cautions followed by those of every field the tags name."""
    extra = [text for name in fields_of(tags) for text in FIELD_CAUTIONS[name]]
    return (*GENERAL, *extra)
