"""The keys of a rail spec: each ``"section.key"`` with the command-line option that
overrides it, the keys the spec must give, and the two ways to write the rail."""

from __future__ import annotations

#: Every spec key as ``"section.key"`` → the command-line option that overrides it.
OPTION_FOR_KEY: dict[str, str] = {
    "rail.target": "--target",
    "rail.tolerance": "--tolerance",
    "rail.min": "--rail-min",
    "rail.max": "--rail-max",
    "rail.nominal": "--rail-nominal",
    "supply.min": "--supply-min",
    "supply.max": "--supply-max",
    "supply.nominal": "--supply-nominal",
    "load.min": "--load-min",
    "load.max": "--load-max",
    "load.kind": "--load-kind",
    "ambient.min": "--ambient-min",
    "ambient.max": "--ambient-max",
    "resistor.series": "--series",
    "resistor.tolerance": "--resistor-tolerance",
    "resistor.rating": "--resistor-rating",
    "resistor.fixed": "--resistor",
    "resistor.min": "--resistor-min",
    "resistor.max": "--resistor-max",
    "resistor.tcr": "--resistor-tcr",
    "resistor.full_power_ambient": "--full-power-ambient",
    "resistor.zero_power_ambient": "--zero-power-ambient",
    "search.max_parts": "--max-parts",
    "search.families": "--families",
    "search.list": "--list",
    "search.statuses": "--statuses",
    "search.min_current": "--min-current",
    "search.min_margin": "--min-margin",
    "search.zener_izt_limit": "--zener-izt-limit",
}

#: The two ways to write the rail: target ± tolerance, or a window.
RAIL_FORMS: tuple[tuple[str, str], ...] = (("rail.target", "rail.tolerance"), ("rail.min", "rail.max"))
#: Keys without a default: the file or an option must give each (the rail's keys as one
#: of :data:`RAIL_FORMS`).
REQUIRED_KEYS: tuple[str, ...] = (
    "rail.target",
    "rail.tolerance",
    "supply.min",
    "supply.max",
    "load.min",
    "load.max",
    "ambient.min",
    "ambient.max",
)

#: Section → its keys, in the order of :data:`OPTION_FOR_KEY`.
SECTION_KEYS: dict[str, tuple[str, ...]] = {
    section: tuple(d.split(".")[1] for d in OPTION_FOR_KEY if d.split(".")[0] == section)
    for section in dict.fromkeys(d.split(".")[0] for d in OPTION_FOR_KEY)
}
