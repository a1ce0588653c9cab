"""The sections of a rail spec read and checked: rail, supply, load, ambient, resistor
and search, each from its entries (:mod:`selector.spec.spec_entries`) to the fields of
:class:`~selector.spec.rail_spec.RailSpec` it sets, with every clash between values named.
"""

from __future__ import annotations

import re

from selector.spec import units
from selector.spec.eseries import SERIES_STEPS, series_values
from selector.spec.list_statuses import LIST_STATUSES, UNUSABLE_STATUSES
from selector.spec.part_fields import FAMILIES
from selector.spec.spec_entries import (
    Entry,
    amps,
    blame,
    celsius,
    check_order,
    check_scalar,
    entry_fraction,
    entry_quantity,
    entry_text,
    fail,
    ohms,
    split_entry,
    unknown_name,
    volts,
    word_list,
)
from selector.spec.spec_keys import OPTION_FOR_KEY, RAIL_FORMS

#: Largest load current a spec may ask for [A]; beyond it a typo is far likelier than a design.
MAX_LOAD_CURRENT_A = 100.0
LOAD_KINDS: tuple[str, ...] = ("current", "resistance")
MAX_PARTS_LIMIT = 12
#: Ambient range the tool accepts [°C]: the usual military/automotive component span,
#: common practice (no source).
AMBIENT_LIMITS_C = (-55.0, 150.0)
#: The resistor window of the physics contract (DESIGN §3) [Ω].
RESISTOR_LIMITS_OHM = (1.0, 10e6)
#: Resistor tolerance must be below this fraction.
RESISTOR_TOLERANCE_LIMIT = 0.5
#: The resistor's derating knees when the spec gives none [°C]: full rating up to the
#: first ambient, none from the second (the defaults of RailSpec).
FULL_POWER_AMBIENT_C, ZERO_POWER_AMBIENT_C = 70.0, 155.0


def choose_rail_form(entries: dict[str, Entry]) -> None:
    """Keep one way of writing the rail: options override the file, so a form given only on
    the command line replaces the file's other form; two forms from one place clash."""
    given = [[entries[d] for d in form if d in entries] for form in RAIL_FORMS]
    if not (given[0] and given[1]):
        return
    from_options = [all(e.from_option for e in form) for form in given]
    if from_options[0] != from_options[1]:
        dropped = RAIL_FORMS[0] if from_options[1] else RAIL_FORMS[1]
        for dotted in dropped:
            entries.pop(dotted, None)
        return
    first = given[0][0]
    raise fail(first, "give the rail either as target and tolerance or as min and max, not both", given[1][0])


def _rail_window(entries: dict[str, Entry]) -> dict:
    low_entry, high_entry = entries["rail.min"], entries["rail.max"]
    low, high = entry_quantity(low_entry, units.VOLTAGE), entry_quantity(high_entry, units.VOLTAGE)
    if low <= 0:
        raise fail(low_entry, f"{volts(low)} must be above 0 V")
    if high <= low:
        if blame(high_entry, low_entry)[0] is high_entry:
            raise fail(high_entry, f"{volts(high)} is not above {low_entry.label} ({volts(low)})")
        raise fail(low_entry, f"{volts(low)} is not below {high_entry.label} ({volts(high)})")
    return {"target_v": (low + high) / 2.0, "tolerance_v": (high - low) / 2.0, "rail_window": True}


def rail_fields(entries: dict[str, Entry]) -> dict:
    fields = _rail_window(entries) if "rail.min" in entries else _rail_target(entries)
    if "rail.nominal" in entries:
        entry = entries["rail.nominal"]
        nominal = entry_quantity(entry, units.VOLTAGE)
        low, high = fields["target_v"] - fields["tolerance_v"], fields["target_v"] + fields["tolerance_v"]
        if not low <= nominal <= high:
            raise fail(entry, f"{volts(nominal)} is outside the rail window {volts(low)} … {volts(high)}")
        fields["rail_nominal_v"] = nominal
    return fields


def _rail_target(entries: dict[str, Entry]) -> dict:
    target_entry = entries["rail.target"]
    target = entry_quantity(target_entry, units.VOLTAGE)
    if target <= 0:
        raise fail(target_entry, f"{volts(target)} must be above 0 V")
    tolerance_entry = entries["rail.tolerance"]
    value, kind = split_entry(tolerance_entry)
    if kind is units.PERCENT:
        tolerance = target * value / 100
    elif kind is None or kind is units.VOLTAGE:
        tolerance = value
    else:
        raise fail(
            tolerance_entry,
            f"'{entry_text(tolerance_entry)}' is {kind.article} {kind.name}; "
            "a voltage or a percentage is expected",
        )
    if tolerance <= 0:
        raise fail(tolerance_entry, f"{volts(tolerance)} must be above 0 V (e.g. '3 %' or '0.1 V')")
    if kind is units.PERCENT and value >= 100:
        raise fail(tolerance_entry, f"{value:g} %: a tolerance must be below 100 % of the target")
    if tolerance >= target:
        if blame(tolerance_entry, target_entry)[0] is target_entry:
            raise fail(target_entry, f"{volts(target)} is not above {tolerance_entry.label} ({volts(tolerance)})")
        raise fail(
            tolerance_entry,
            f"{volts(tolerance)} is not below {target_entry.label} ({volts(target)})",
        )
    return {"target_v": target, "tolerance_v": tolerance}


def supply_fields(entries: dict[str, Entry], target_v: float) -> dict:
    low_entry, high_entry = entries["supply.min"], entries["supply.max"]
    low = entry_quantity(low_entry, units.VOLTAGE)
    high = entry_quantity(high_entry, units.VOLTAGE)
    for entry, value in ((low_entry, low), (high_entry, high)):
        if value <= 0:
            raise fail(entry, f"{volts(value)} must be above 0 V")
    check_order(low_entry, low, high_entry, high, volts)
    nominal = (low + high) / 2
    if "supply.nominal" in entries:
        nominal_entry = entries["supply.nominal"]
        nominal = entry_quantity(nominal_entry, units.VOLTAGE)
        if not low <= nominal <= high:
            raise fail(
                nominal_entry,
                f"{volts(nominal)} is outside the supply range {volts(low)} … {volts(high)}"
                + (f" ({low_entry.label} … {high_entry.label})" if low_entry.from_option or high_entry.from_option else ""),
                low_entry, high_entry,
            )
    if target_v >= low:
        target_entry = entries["rail.target"]
        first, second = blame(target_entry, low_entry)
        if first is target_entry:
            clash = f"the target {volts(target_v)} is not below the least supply {volts(low)}"
        else:
            clash = f"the least supply {volts(low)} is not above the target {volts(target_v)}"
        raise fail(
            first, f"{clash} ({second.label}): a series resistor can only drop voltage"
        )
    return {"supply_min_v": low, "supply_max_v": high, "supply_nominal_v": nominal}


def _written_load_kind(entry: Entry) -> tuple[float, str | None]:
    value, kind = split_entry(entry)
    if kind is None:
        return value, None
    if kind is units.CURRENT:
        return value, "current"
    if kind is units.RESISTANCE:
        return value, "resistance"
    raise fail(
        entry,
        f"'{entry_text(entry)}' is {kind.article} {kind.name}; a current or a resistance is expected",
    )


def load_fields(entries: dict[str, Entry]) -> dict:
    low_entry, high_entry = entries["load.min"], entries["load.max"]
    low, low_kind = _written_load_kind(low_entry)
    high, high_kind = _written_load_kind(high_entry)
    kind_entry = entries.get("load.kind")
    if kind_entry is not None:
        if not isinstance(kind_entry.raw, str) or kind_entry.raw.strip().lower() not in LOAD_KINDS:
            raise fail(kind_entry, f"'{entry_text(kind_entry)}' must be 'current' or 'resistance'")
        kind = kind_entry.raw.strip().lower()
        for entry, written in ((low_entry, low_kind), (high_entry, high_kind)):
            if written not in (None, kind):
                first, _ = blame(entry, kind_entry)
                if first is entry:
                    clash = f"'{entry_text(entry)}' is a {written} but {kind_entry.label} says {kind}"
                else:
                    clash = f"'{kind}' contradicts {entry.label} '{entry_text(entry)}', a {written}"
                raise fail(first, clash)
    else:
        if low_kind and high_kind and low_kind != high_kind:
            pair = ((high_entry, high_kind), (low_entry, low_kind))
            if blame(high_entry, low_entry)[0] is low_entry:
                pair = pair[::-1]
            (first, first_kind), (second, second_kind) = pair
            raise fail(
                first,
                f"'{entry_text(first)}' is a {first_kind} but {second.label} is a {second_kind}; "
                "write both in amperes or both in ohms",
            )
        # A bare number is amperes unless the other end says ohms.
        kind = low_kind or high_kind or "current"
    if kind == "current":
        for entry, value in ((low_entry, low), (high_entry, high)):
            if value < 0:
                raise fail(entry, f"{amps(value)} must not be negative")
            if value > MAX_LOAD_CURRENT_A:
                # A diode-stack rail never carries this; most likely "1k" meant ohms.
                raise fail(
                    entry,
                    f"{amps(value)} is above {amps(MAX_LOAD_CURRENT_A)}: for a resistive load write "
                    "ohms, e.g. '1 kohm'",
                )
        check_order(low_entry, low, high_entry, high, amps)
    else:
        for entry, value in ((low_entry, low), (high_entry, high)):
            if value <= 0:
                raise fail(entry, f"a load resistance of {ohms(value)} must be above 0 \u03a9")
        check_order(low_entry, low, high_entry, high, ohms)
    return {"load_kind": kind, "load_min": low, "load_max": high}


_KELVIN = re.compile(r"^[+-]?[\d.eE+-]+\s*K$")


def _temperature(entry: Entry) -> float:
    if isinstance(entry.raw, str) and _KELVIN.match(entry.raw.strip()):
        # "K" would otherwise read as the kilo prefix.
        raise fail(entry, f"'{entry_text(entry)}': write the ambient in \u00b0C, not kelvin")
    value = entry_quantity(entry, units.TEMPERATURE)
    low, high = AMBIENT_LIMITS_C
    if not low <= value <= high:
        raise fail(entry, f"{celsius(value)} is outside {celsius(low)} … {celsius(high)}")
    return value


def ambient_fields(entries: dict[str, Entry]) -> dict:
    low_entry, high_entry = entries["ambient.min"], entries["ambient.max"]
    low, high = _temperature(low_entry), _temperature(high_entry)
    check_order(low_entry, low, high_entry, high, celsius)
    return {"ambient_min_c": low, "ambient_max_c": high}


def _resistance_in_window(entry: Entry) -> float:
    value = entry_quantity(entry, units.RESISTANCE)
    low, high = RESISTOR_LIMITS_OHM
    if value <= 0:
        raise fail(entry, f"{ohms(value)} must be above 0 \u03a9")
    if not low <= value <= high:
        raise fail(entry, f"{ohms(value)} is outside {ohms(low)} … {ohms(high)}")
    return value


def resistor_fields(entries: dict[str, Entry]) -> dict:
    fields: dict = {}
    series_entry = entries.get("resistor.series")
    series = "E24"
    if series_entry is not None:
        if not isinstance(series_entry.raw, str):
            raise fail(series_entry, "expected a series name such as 'E24'")
        series = series_entry.raw.strip().upper()
        if series not in SERIES_STEPS:
            raise fail(series_entry, f"unknown series {unknown_name(series, list(SERIES_STEPS))}")
    fields["resistor_series"] = series

    if "resistor.tolerance" in entries:
        entry = entries["resistor.tolerance"]
        fields["resistor_tolerance"] = entry_fraction(
            entry, "a percentage", 0.0, RESISTOR_TOLERANCE_LIMIT, inclusive_low=False
        )

    if "resistor.rating" in entries:
        entry = entries["resistor.rating"]
        rating = entry_quantity(entry, units.POWER)
        if rating <= 0:
            raise fail(entry, f"{units.format_quantity(rating, 'W')} must be above 0 W")
        fields["resistor_rating_w"] = rating

    if "resistor.tcr" in entries:
        fields["resistor_tcr_per_k"] = _temperature_coefficient(entries["resistor.tcr"])
    fields.update(_resistor_derating(entries))

    low_entry, high_entry = entries.get("resistor.min"), entries.get("resistor.max")
    low, high = RESISTOR_LIMITS_OHM
    if low_entry is not None:
        low = fields["resistor_min_ohm"] = _resistance_in_window(low_entry)
    if high_entry is not None:
        high = fields["resistor_max_ohm"] = _resistance_in_window(high_entry)
    if low_entry is not None and high_entry is not None:
        check_order(low_entry, low, high_entry, high, ohms)

    fixed_entry = entries.get("resistor.fixed")
    if fixed_entry is not None:
        fixed = fields["resistor_fixed_ohm"] = _resistance_in_window(fixed_entry)
        for bound_entry, inside in ((low_entry, fixed >= low), (high_entry, fixed <= high)):
            if bound_entry is not None and not inside:
                raise fail(
                    fixed_entry,
                    f"{ohms(fixed)} is outside the range {ohms(low)} … {ohms(high)} "
                    f"({bound_entry.label})",
                    bound_entry,
                )
    elif series_values(series, low, high).size == 0:
        blame = high_entry or low_entry or series_entry
        raise fail(blame, f"no {series} value lies in {ohms(low)} … {ohms(high)}", low_entry, series_entry)
    return fields


#: Resistor TCR spellings and how many of them make 1/K.
_TCR_UNITS: dict[str, float] = {"": 1.0, "/K": 1.0, "1/K": 1.0, "ppm/K": 1e6, "ppm/°C": 1e6, "ppm/C": 1e6,
                                "ppm": 1e6, "%/K": 1e2, "%/°C": 1e2}  # fmt: skip
_TCR = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(\S*)\s*$")
#: Largest resistor TCR accepted [1/K] (10,000 ppm/K: beyond any fixed resistor).
MAX_RESISTOR_TCR_PER_K = 1e-2


def _temperature_coefficient(entry: Entry) -> float:
    """A resistor TCR: ``"100 ppm/K"``, ``"0.01 %/K"`` or a bare number in 1/K."""
    check_scalar(entry)
    raw = entry.raw
    if isinstance(raw, str):
        match = _TCR.match(raw)
        if not match or match.group(2) not in _TCR_UNITS:
            raise fail(entry, f"'{entry_text(entry)}' is not a temperature coefficient such as '100 ppm/K'")
        value = float(match.group(1)) / _TCR_UNITS[match.group(2)]
    else:
        value = float(raw)
    if not 0.0 <= value <= MAX_RESISTOR_TCR_PER_K:
        raise fail(entry, f"{value * 1e6:g} ppm/K must be from 0 to {MAX_RESISTOR_TCR_PER_K * 1e6:g} ppm/K")
    return value


def _resistor_derating(entries: dict[str, Entry]) -> dict:
    """The resistor's derating knees: full rating to the first ambient, none from the second."""
    full_entry, zero_entry = entries.get("resistor.full_power_ambient"), entries.get("resistor.zero_power_ambient")
    full, zero = FULL_POWER_AMBIENT_C, ZERO_POWER_AMBIENT_C
    fields = {}
    if full_entry is not None:
        full = fields["resistor_full_power_ambient_c"] = entry_quantity(full_entry, units.TEMPERATURE)
    if zero_entry is not None:
        zero = fields["resistor_zero_power_ambient_c"] = entry_quantity(zero_entry, units.TEMPERATURE)
    for entry, value in ((full_entry, full), (zero_entry, zero)):
        if entry is not None and not -55.0 <= value <= 300.0:
            raise fail(entry, f"{celsius(value)} is outside {celsius(-55.0)} … {celsius(300.0)}")
    if zero <= full:
        blame = zero_entry or full_entry
        raise fail(blame, f"the zero-power ambient {celsius(zero)} must be above the full-power ambient "
                           f"{celsius(full)}", full_entry, zero_entry)  # fmt: skip
    return fields


def _izt_limit(entry: Entry) -> float:
    value, kind = split_entry(entry)
    if kind is not None or not 1.0 <= value <= 1000.0:
        raise fail(entry, f"'{entry_text(entry)}' must be a plain multiple of the test current from 1 to 1000, e.g. 5")
    return value


def _max_parts(entry: Entry) -> int:
    raw = entry.raw
    if isinstance(raw, str) and re.fullmatch(r"\s*\+?\d{1,6}\s*", raw):
        count = int(raw)
    elif isinstance(raw, int) and not isinstance(raw, bool):
        count = raw
    else:
        raise fail(entry, f"'{entry_text(entry)}' is not a whole number of parts")
    if not 1 <= count <= MAX_PARTS_LIMIT:
        raise fail(entry, f"{count} must be from 1 to {MAX_PARTS_LIMIT}")
    return count


def _list_name(entry: Entry) -> str:
    if not isinstance(entry.raw, str) or entry.raw.strip() == "":
        raise fail(entry, "expected the name of an approved-parts list")
    name = entry.raw.strip()
    if len(name) > 100 or not name.isprintable():
        raise fail(entry, f"'{units.shown(name[:40])}' is not a usable list name")
    return name


def search_fields(entries: dict[str, Entry]) -> dict:
    fields: dict = {}
    if "search.max_parts" in entries:
        fields["max_parts"] = _max_parts(entries["search.max_parts"])
    if "search.families" in entries:
        fields["families"] = word_list(entries["search.families"], FAMILIES, "family")
    if "search.list" in entries:
        fields["list_name"] = _list_name(entries["search.list"])
    if "search.statuses" in entries:
        entry = entries["search.statuses"]
        statuses = word_list(entry, LIST_STATUSES, "status")
        refused = [s for s in statuses if s in UNUSABLE_STATUSES]
        if refused:
            usable = ", ".join(s for s in LIST_STATUSES if s not in UNUSABLE_STATUSES)
            raise fail(
                entry, f"'{refused[0]}' parts may never be designed in; usable: {usable}"
            )
        if "list_name" not in fields:
            raise fail(
                entry,
                f"statuses apply to an approved-parts list; give {OPTION_FOR_KEY['search.list']}"
                " or [search] list",
            )
        fields["statuses"] = statuses
    if "search.min_current" in entries:
        entry = entries["search.min_current"]
        current = entry_quantity(entry, units.CURRENT)
        if current < 0:
            raise fail(entry, f"{amps(current)} must not be negative")
        fields["min_current_a"] = current
    if "search.min_margin" in entries:
        entry = entries["search.min_margin"]
        fields["min_margin"] = entry_fraction(
            entry, "a percentage or a fraction", 0.0, 1.0, inclusive_low=True
        )
    if "search.zener_izt_limit" in entries:
        fields["zener_izt_limit"] = _izt_limit(entries["search.zener_izt_limit"])
    return fields
