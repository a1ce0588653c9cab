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


def spec_toml(spec: RailSpec) -> str:
    """The spec as a spec TOML file that reads back to the same :class:`RailSpec`: every
    key written out, numbers in SI units with Python's exact float repr (``seek --csv``
    keeps it beside the shortlist, so the run can be repeated)."""

    def quantity(value: float, unit: str) -> str:
        return f'"{value!r} {unit}"' if unit else repr(float(value))

    load_unit = "ohm" if spec.load_kind == "resistance" else "A"
    lines = ["# The spec of this shortlist, every key as the search read it (SI units).", "[rail]"]
    if spec.rail_window:
        lines += [f"min = {quantity(spec.rail_min_v, 'V')}", f"max = {quantity(spec.rail_max_v, 'V')}"]
    else:
        lines += [f"target = {quantity(spec.target_v, 'V')}", f"tolerance = {quantity(spec.tolerance_v, 'V')}"]
    if spec.rail_nominal_v is not None:
        lines.append(f"nominal = {quantity(spec.rail_nominal_v, 'V')}")
    lines += ["[supply]", f"min = {quantity(spec.supply_min_v, 'V')}", f"max = {quantity(spec.supply_max_v, 'V')}",
              f"nominal = {quantity(spec.supply_nominal_v, 'V')}",
              "[load]", f'kind = "{spec.load_kind}"', f"min = {quantity(spec.load_min, load_unit)}",
              f"max = {quantity(spec.load_max, load_unit)}",
              "[ambient]", f"min = {spec.ambient_min_c!r}", f"max = {spec.ambient_max_c!r}",
              "[resistor]", f'series = "{spec.resistor_series}"', f"tolerance = {spec.resistor_tolerance!r}",
              f"rating = {quantity(spec.resistor_rating_w, 'W')}", f"tcr = {spec.resistor_tcr_per_k!r}",
              f"full_power_ambient = {spec.resistor_full_power_ambient_c!r}",
              f"zero_power_ambient = {spec.resistor_zero_power_ambient_c!r}"]  # fmt: skip
    if spec.resistor_fixed_ohm is not None:
        lines.append(f"fixed = {quantity(spec.resistor_fixed_ohm, 'ohm')}")
    lines += [f"min = {quantity(spec.resistor_min_ohm, 'ohm')}", f"max = {quantity(spec.resistor_max_ohm, 'ohm')}",
              "[search]", f"max_parts = {spec.max_parts}", f"min_current = {quantity(spec.min_current_a, 'A')}",
              f"min_margin = {spec.min_margin!r}"]  # fmt: skip
    if spec.families is not None:
        lines.append("families = [" + ", ".join(f'"{family}"' for family in spec.families) + "]")
    if spec.list_name is not None:
        lines.append(f'list = "{spec.list_name}"')
    if spec.statuses is not None:
        lines.append("statuses = [" + ", ".join(f'"{status}"' for status in spec.statuses) + "]")
    if spec.zener_izt_limit is not None:
        lines.append(f"zener_izt_limit = {spec.zener_izt_limit!r}")
    return "\n".join(lines) + "\n"
