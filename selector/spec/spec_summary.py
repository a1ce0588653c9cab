"""A spec told back to the user: a JSON-able echo and human lines in engineering notation."""

from __future__ import annotations

import dataclasses
import functools

from selector.spec.rail_spec import RailSpec, spec_cautions
from selector.spec.units import format_quantity


def spec_to_dict(spec: RailSpec) -> dict:
    """A plain, JSON-able echo of a spec: field names of :class:`RailSpec`, SI units."""
    return {
        name: list(value) if isinstance(value, tuple) else value
        for name, value in dataclasses.asdict(spec).items()
    }


def _percent(fraction: float) -> str:
    return f"{fraction * 100:.4g} %"


def describe_spec(spec: RailSpec) -> list[str]:
    """Human lines describing a spec, in engineering notation, cautions last."""
    volts = functools.partial(format_quantity, symbol="V")
    ohms = functools.partial(format_quantity, symbol="\u03a9")
    if spec.load_kind == "current":
        load = f"{format_quantity(spec.load_min, 'A')} … {format_quantity(spec.load_max, 'A')}"
    else:
        load = f"{ohms(spec.load_min)} … {ohms(spec.load_max)} (resistive)"
    if spec.resistor_fixed_ohm is not None:
        resistor = f"fixed {ohms(spec.resistor_fixed_ohm)}"
    else:
        resistor = f"{spec.resistor_series} from {ohms(spec.resistor_min_ohm)} to {ohms(spec.resistor_max_ohm)}"
    families = ", ".join(spec.families) if spec.families else "all families"
    if spec.list_name is None:
        parts_from = "the whole library"
    else:
        statuses = ", ".join(spec.statuses or ("approved", "conditional"))
        parts_from = f"list '{spec.list_name}' ({statuses})"
    lines = [
        f"Rail: {volts(spec.target_v)} ± {volts(spec.tolerance_v)} "
        f"({_percent(spec.tolerance_v / spec.target_v)})",
        f"Supply: {volts(spec.supply_min_v)} … {volts(spec.supply_max_v)} "
        f"(nominal {volts(spec.supply_nominal_v)})",
        f"Load: {load}",
        f"Ambient: {spec.ambient_min_c:g} °C … {spec.ambient_max_c:g} °C",
        f"Series resistor: {resistor}, ±{_percent(spec.resistor_tolerance)}, "
        f"{format_quantity(spec.resistor_rating_w, 'W')} rating",
        f"Stacks: up to {spec.max_parts} parts of {families} from {parts_from}; "
        f"least current {format_quantity(spec.min_current_a, 'A')}, "
        f"least margin {_percent(spec.min_margin)}",
    ]
    lines.extend(f"Caution: {caution}" for caution in spec_cautions(spec))
    return lines
