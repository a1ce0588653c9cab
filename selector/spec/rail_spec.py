"""The rail requirement: what the rail must hold, over which conditions.

:class:`RailSpec` is the validated, SI-unit form every physics and search function takes.
:func:`load_spec` builds it from the spec TOML of DESIGN §4 and from command-line
overrides, and refuses anything malformed, contradictory or absurd with one
:class:`~selector.errors.SpecError` line that names the file and key, or the option.
"""

from __future__ import annotations

import difflib
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from selector.errors import QuantityError, SpecError, SpecOptionError
from selector.files.input_files import InputFileProblem, read_bounded
from selector.spec import units
from selector.spec.eseries import SERIES_STEPS, series_values
from selector.spec.list_statuses import LIST_STATUSES, UNUSABLE_STATUSES
from selector.spec.part_fields import FAMILIES


@dataclass(frozen=True)
class RailSpec:
    """A validated rail requirement, all quantities in SI units.

    Attributes
    ----------
    target_v : float [V]
        Wanted rail voltage: as written, or the middle of a ``[rail] min, max`` window.
    tolerance_v : float [V]
        Allowed worst-case deviation from ``target_v`` (a percentage is converted; for a
        window, half its width).
    supply_min_v, supply_max_v : float [V]
        Supply range.
    supply_nominal_v : float [V]
        Nominal supply; the midpoint of the range unless the spec gives one.
    load_kind : str
        ``"current"`` (``load_min``/``load_max`` in A) or ``"resistance"`` (in Ω).
    load_min, load_max : float [A] or [Ω]
        Load range as written. For a resistive load the least current is at ``load_max``.
    ambient_min_c, ambient_max_c : float [°C]
        Ambient temperature range.
    resistor_series : str
        IEC 60063 series name, ``"E3"`` … ``"E192"``; default ``"E24"``.
    resistor_tolerance : float [1]
        Fractional tolerance, 0.01 for 1 %.
    resistor_rating_w : float [W]
        Power rating of the series resistor; default 0.25 W.
    max_parts : int
        Most elements in one stack; default 3.
    families : tuple of str or None
        Families the search may use; None for all.
    list_name : str or None
        Approved-parts list the search must respect; None for the whole library.
    statuses : tuple of str or None
        Usable list statuses; None for the default (approved, conditional).
    min_current_a : float [A]
        Least stack current at every corner; default 0.
    min_margin : float [1]
        Least dissipation margin at every corner; default 0.
    resistor_fixed_ohm : float or None [Ω]
        A resistor fixed by the user instead of chosen.
    resistor_min_ohm, resistor_max_ohm : float [Ω]
        Range the resistor choice may use; default 1 Ω … 10 MΩ.
    resistor_tcr_per_k : float [1/K]
        Series-resistor temperature coefficient (``"100 ppm/K"`` is 1e-4); default 0.
    resistor_full_power_ambient_c, resistor_zero_power_ambient_c : float [°C]
        The resistor's derating: full rating up to the first, none from the second,
        linear between (DESIGN §3); defaults 70 °C and 155 °C.
    zener_izt_limit : float or None [1]
        Most zener current as a multiple of its test current, a feasibility limit; None
        (the default) sets none.
    rail_window : bool
        Whether the spec gave the rail as ``[rail] min, max`` (then shown that way).
    rail_nominal_v : float or None [V]
        A nominal rail voltage given for display only.
    """

    target_v: float
    tolerance_v: float
    supply_min_v: float
    supply_max_v: float
    supply_nominal_v: float
    load_kind: str
    load_min: float
    load_max: float
    ambient_min_c: float
    ambient_max_c: float
    resistor_series: str = "E24"
    resistor_tolerance: float = 0.01
    resistor_rating_w: float = 0.25
    max_parts: int = 3
    families: tuple[str, ...] | None = None
    list_name: str | None = None
    statuses: tuple[str, ...] | None = None
    min_current_a: float = 0.0
    min_margin: float = 0.0
    resistor_fixed_ohm: float | None = None
    resistor_min_ohm: float = 1.0
    resistor_max_ohm: float = 10e6
    resistor_tcr_per_k: float = 0.0
    resistor_full_power_ambient_c: float = 70.0
    resistor_zero_power_ambient_c: float = 155.0
    zener_izt_limit: float | None = None
    rail_window: bool = False
    rail_nominal_v: float | None = None

    @property
    def rail_min_v(self) -> float:
        """Least rail voltage the window allows [V]."""
        return self.target_v - self.tolerance_v

    @property
    def rail_max_v(self) -> float:
        """Greatest rail voltage the window allows [V]."""
        return self.target_v + self.tolerance_v


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

#: Largest load current a spec may ask for [A]; beyond it a typo is far likelier than a design.
MAX_LOAD_CURRENT_A = 100.0

LOAD_KINDS: tuple[str, ...] = ("current", "resistance")
MAX_SPEC_BYTES = 1_000_000
MAX_PARTS_LIMIT = 12
#: Ambient range the tool accepts [°C]: the usual military/automotive component span,
#: common practice (no source).
AMBIENT_LIMITS_C = (-55.0, 150.0)
#: The resistor window of the physics contract (DESIGN §3) [Ω].
RESISTOR_LIMITS_OHM = (1.0, 10e6)
#: Resistor tolerance must be below this fraction.
RESISTOR_TOLERANCE_LIMIT = 0.5
#: IEC 62368-1:2018, Table 4: ES1 limit for DC voltage [V].
ES1_DC_LIMIT_V = 60.0

#: Section → its keys, in the order of :data:`OPTION_FOR_KEY`.
_SECTIONS: dict[str, tuple[str, ...]] = {
    section: tuple(d.split(".")[1] for d in OPTION_FOR_KEY if d.split(".")[0] == section)
    for section in dict.fromkeys(d.split(".")[0] for d in OPTION_FOR_KEY)
}


@dataclass(frozen=True)
class _Entry:
    """One spec value as written, with where it came from for messages."""

    raw: object
    place: str  # prefix of an error about this value: "rail.toml: [supply] min"
    label: str  # how another message refers to it: "[supply] min" or "--supply-min"
    from_option: bool = False


def _file_entry(file_label: str, section: str, key: str, raw: object) -> _Entry:
    return _Entry(raw, f"{file_label}: [{section}] {key}", f"[{section}] {key}")


def _option_entry(dotted: str, raw: object) -> _Entry:
    option = OPTION_FOR_KEY[dotted]
    return _Entry(raw, option, option, from_option=True)


def _fail(entry: _Entry, message: str, *involved: _Entry | None) -> SpecError:
    """The error about ``entry``; a usage error (exit 2) when it, or any other value the
    clash ``involved``, came from a command-line option."""
    from_option = entry.from_option or any(other is not None and other.from_option for other in involved)
    return (SpecOptionError if from_option else SpecError)(f"{entry.place}: {message}")


def _read_toml(path: str | Path) -> tuple[str, dict]:
    """Read a spec file as a TOML table, refusing oversized, binary or malformed files."""
    label = str(path)
    try:
        data = read_bounded(path, MAX_SPEC_BYTES)
    except InputFileProblem as problem:
        if str(problem).startswith("larger than"):
            raise SpecError(f"{label}: larger than 1 MB; a spec file is a few lines of TOML") from None
        raise SpecError(f"{label}: {problem}") from None
    if b"\0" in data:
        line = data[: data.index(b"\0")].count(b"\n") + 1
        raise SpecError(f"{label}: line {line}: contains a NUL byte; a spec file is text")
    try:
        # utf-8-sig: a byte-order mark from a Windows editor is harmless.
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        line = data[: error.start].count(b"\n") + 1
        raise SpecError(f"{label}: line {line}: not UTF-8 text") from None
    try:
        return label, tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise SpecError(f"{label}: invalid TOML: {error}") from None
    except RecursionError:
        raise SpecError(f"{label}: invalid TOML: values nested too deeply") from None
    except ValueError:  # an integer of thousands of digits (Python's conversion limit)
        raise SpecError(f"{label}: invalid TOML: a number far too long for any quantity") from None


def _unknown(name: str, known: tuple[str, ...] | list[str]) -> str:
    guess = difflib.get_close_matches(name, known, n=1)
    hint = f" (did you mean '{guess[0]}'?)" if guess else ""
    return f"'{units.shown(name)}'{hint}; known: {', '.join(known)}"


def _file_entries(label: str, table: dict) -> dict[str, _Entry]:
    entries: dict[str, _Entry] = {}
    sections = tuple(_SECTIONS)
    for section, body in table.items():
        if section not in _SECTIONS:
            raise SpecError(f"{label}: unknown section {_unknown(section, sections)}")
        if not isinstance(body, dict):
            raise SpecError(f"{label}: '{section}' must be a [{section}] table of keys")
        for key, raw in body.items():
            if key not in _SECTIONS[section]:
                raise SpecError(
                    f"{label}: [{section}]: unknown key {_unknown(key, _SECTIONS[section])}"
                )
            entries[f"{section}.{key}"] = _file_entry(label, section, key, raw)
    return entries


def _option_entries(overrides: Mapping[str, object]) -> dict[str, _Entry]:
    entries: dict[str, _Entry] = {}
    for dotted, raw in overrides.items():
        if dotted not in OPTION_FOR_KEY:
            raise SpecError(f"unknown spec override {_unknown(dotted, list(OPTION_FOR_KEY))}")
        if raw is not None:
            entries[dotted] = _option_entry(dotted, raw)
    return entries


def _missing_message(file_label: str | None, missing: list[str]) -> str:
    options = ", ".join(OPTION_FOR_KEY[d] for d in missing)
    if file_label is None:
        return f"missing {options} (or give them in a --spec FILE)"
    keys = ", ".join("[{}] {}".format(*d.split(".")) for d in missing)
    return f"{file_label}: missing {keys} (add to the file, or give {options})"


# --- reading single values -------------------------------------------------------------


def _check_scalar(entry: _Entry) -> None:
    if isinstance(entry.raw, bool) or not isinstance(entry.raw, (str, int, float)):
        kind = "true/false" if isinstance(entry.raw, bool) else type(entry.raw).__name__
        kind = {"list": "a list", "dict": "a table"}.get(kind, kind)
        raise _fail(entry, f"expected a number or a quantity text, got {kind}")


def _split(entry: _Entry) -> tuple[float, units.Kind | None]:
    """Value and written kind of an entry; a bare TOML number has no written kind."""
    _check_scalar(entry)
    try:
        if isinstance(entry.raw, str):
            return units.split_quantity(entry.raw)
        return units.parse_quantity(entry.raw, units.DIMENSIONLESS), None
    except QuantityError as error:
        raise _fail(entry, str(error)) from None


#: Largest magnitude a spec quantity may have, by kind: far past any rail this tool can
#: prove, and small enough that every later product stays finite.
QUANTITY_LIMITS: dict[str, float] = {"voltage": 1e5, "current": 1e3, "resistance": 1e12, "power": 1e6}


def _quantity(entry: _Entry, kind: units.Kind) -> float:
    _check_scalar(entry)
    try:
        value = units.parse_quantity(entry.raw, kind)
    except QuantityError as error:
        raise _fail(entry, str(error)) from None
    limit = QUANTITY_LIMITS.get(kind.name)
    if limit is not None and abs(value) > limit:
        raise _fail(entry, f"{units.format_quantity(value, kind.symbol)} is beyond {units.format_quantity(limit, kind.symbol)}, "
                           f"the largest {kind.name} a rail spec may have")  # fmt: skip
    return value


def _fraction(entry: _Entry, what: str, low: float, high: float, inclusive_low: bool) -> float:
    """A fraction written as ``"20 %"`` or as a bare number (0.2), checked against a range."""
    value, kind = _split(entry)
    if kind is units.PERCENT:
        value /= 100
    elif kind is not None:
        raise _fail(entry, f"'{_text(entry)}' is {kind.article} {kind.name}; {what} is expected")
    above_low = value >= low if inclusive_low else value > low
    if not (above_low and value < high):
        lowest = "from" if inclusive_low else "above"
        message = f"{value * 100:g} % must be {lowest} {low * 100:g} % and below {high * 100:g} %"
        if kind is None and value >= 1:
            # "5" meant as 5 % is the likely slip: a bare number is a fraction.
            message += f" (a bare number is a fraction; write '{_text(entry)} %' for percent)"
        raise _fail(entry, message)
    return value


def _text(entry: _Entry) -> str:
    return units.shown(str(entry.raw).strip())


def _word_list(entry: _Entry, known: tuple[str, ...], what: str) -> tuple[str, ...]:
    raw = entry.raw
    if isinstance(raw, str):
        items = raw.split(",")
    elif isinstance(raw, list) and all(isinstance(item, str) for item in raw):
        items = raw
    else:
        raise _fail(entry, f"expected a list of {what} names or a comma-separated text")
    words: list[str] = []
    for item in items:
        word = item.strip().lower()
        if word == "":
            continue
        if word not in known:
            raise _fail(entry, f"unknown {what} {_unknown(word, known)}")
        if word not in words:
            words.append(word)
    if not words:
        raise _fail(entry, f"no {what} given; leave the key out to allow every {what}")
    return tuple(words)


# --- cross checks ----------------------------------------------------------------------


def _blame(first: _Entry, second: _Entry) -> tuple[_Entry, _Entry]:
    """Which of two clashing values to name first: the one typed on the command line."""
    if first.from_option or not second.from_option:
        return first, second
    return second, first


def _check_order(low: _Entry, low_value: float, high: _Entry, high_value: float, show) -> None:
    if low_value > high_value:
        if _blame(low, high)[0] is high:
            raise _fail(high, f"{show(high_value)} is below {low.label} ({show(low_value)})")
        raise _fail(low, f"{show(low_value)} is above {high.label} ({show(high_value)})")


def _volts(value: float) -> str:
    return units.format_quantity(value, "V")


def _amps(value: float) -> str:
    return units.format_quantity(value, "A")


def _ohms(value: float) -> str:
    return units.format_quantity(value, "\u03a9")


def _celsius(value: float) -> str:
    return f"{value:g} \u00b0C"


# --- sections --------------------------------------------------------------------------


def _choose_rail_form(entries: dict[str, _Entry]) -> None:
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
    raise _fail(first, "give the rail either as target and tolerance or as min and max, not both", given[1][0])


def _rail_window(entries: dict[str, _Entry]) -> dict:
    low_entry, high_entry = entries["rail.min"], entries["rail.max"]
    low, high = _quantity(low_entry, units.VOLTAGE), _quantity(high_entry, units.VOLTAGE)
    if low <= 0:
        raise _fail(low_entry, f"{_volts(low)} must be above 0 V")
    if high <= low:
        if _blame(high_entry, low_entry)[0] is high_entry:
            raise _fail(high_entry, f"{_volts(high)} is not above {low_entry.label} ({_volts(low)})")
        raise _fail(low_entry, f"{_volts(low)} is not below {high_entry.label} ({_volts(high)})")
    return {"target_v": (low + high) / 2.0, "tolerance_v": (high - low) / 2.0, "rail_window": True}


def _rail(entries: dict[str, _Entry]) -> dict:
    fields = _rail_window(entries) if "rail.min" in entries else _rail_target(entries)
    if "rail.nominal" in entries:
        entry = entries["rail.nominal"]
        nominal = _quantity(entry, units.VOLTAGE)
        low, high = fields["target_v"] - fields["tolerance_v"], fields["target_v"] + fields["tolerance_v"]
        if not low <= nominal <= high:
            raise _fail(entry, f"{_volts(nominal)} is outside the rail window {_volts(low)} … {_volts(high)}")
        fields["rail_nominal_v"] = nominal
    return fields


def _rail_target(entries: dict[str, _Entry]) -> dict:
    target_entry = entries["rail.target"]
    target = _quantity(target_entry, units.VOLTAGE)
    if target <= 0:
        raise _fail(target_entry, f"{_volts(target)} must be above 0 V")
    tolerance_entry = entries["rail.tolerance"]
    value, kind = _split(tolerance_entry)
    if kind is units.PERCENT:
        tolerance = target * value / 100
    elif kind is None or kind is units.VOLTAGE:
        tolerance = value
    else:
        raise _fail(
            tolerance_entry,
            f"'{_text(tolerance_entry)}' is {kind.article} {kind.name}; "
            "a voltage or a percentage is expected",
        )
    if tolerance <= 0:
        raise _fail(tolerance_entry, f"{_volts(tolerance)} must be above 0 V (e.g. '3 %' or '0.1 V')")
    if kind is units.PERCENT and value >= 100:
        raise _fail(tolerance_entry, f"{value:g} %: a tolerance must be below 100 % of the target")
    if tolerance >= target:
        if _blame(tolerance_entry, target_entry)[0] is target_entry:
            raise _fail(target_entry, f"{_volts(target)} is not above {tolerance_entry.label} ({_volts(tolerance)})")
        raise _fail(
            tolerance_entry,
            f"{_volts(tolerance)} is not below {target_entry.label} ({_volts(target)})",
        )
    return {"target_v": target, "tolerance_v": tolerance}


def _supply(entries: dict[str, _Entry], target_v: float) -> dict:
    low_entry, high_entry = entries["supply.min"], entries["supply.max"]
    low = _quantity(low_entry, units.VOLTAGE)
    high = _quantity(high_entry, units.VOLTAGE)
    for entry, value in ((low_entry, low), (high_entry, high)):
        if value <= 0:
            raise _fail(entry, f"{_volts(value)} must be above 0 V")
    _check_order(low_entry, low, high_entry, high, _volts)
    nominal = (low + high) / 2
    if "supply.nominal" in entries:
        nominal_entry = entries["supply.nominal"]
        nominal = _quantity(nominal_entry, units.VOLTAGE)
        if not low <= nominal <= high:
            raise _fail(
                nominal_entry,
                f"{_volts(nominal)} is outside the supply range {_volts(low)} … {_volts(high)}"
                + (f" ({low_entry.label} … {high_entry.label})" if low_entry.from_option or high_entry.from_option else ""),
                low_entry, high_entry,
            )
    if target_v >= low:
        target_entry = entries["rail.target"]
        first, second = _blame(target_entry, low_entry)
        if first is target_entry:
            clash = f"the target {_volts(target_v)} is not below the least supply {_volts(low)}"
        else:
            clash = f"the least supply {_volts(low)} is not above the target {_volts(target_v)}"
        raise _fail(
            first, f"{clash} ({second.label}): a series resistor can only drop voltage"
        )
    return {"supply_min_v": low, "supply_max_v": high, "supply_nominal_v": nominal}


def _written_load_kind(entry: _Entry) -> tuple[float, str | None]:
    value, kind = _split(entry)
    if kind is None:
        return value, None
    if kind is units.CURRENT:
        return value, "current"
    if kind is units.RESISTANCE:
        return value, "resistance"
    raise _fail(
        entry,
        f"'{_text(entry)}' is {kind.article} {kind.name}; a current or a resistance is expected",
    )


def _load(entries: dict[str, _Entry]) -> dict:
    low_entry, high_entry = entries["load.min"], entries["load.max"]
    low, low_kind = _written_load_kind(low_entry)
    high, high_kind = _written_load_kind(high_entry)
    kind_entry = entries.get("load.kind")
    if kind_entry is not None:
        if not isinstance(kind_entry.raw, str) or kind_entry.raw.strip().lower() not in LOAD_KINDS:
            raise _fail(kind_entry, f"'{_text(kind_entry)}' must be 'current' or 'resistance'")
        kind = kind_entry.raw.strip().lower()
        for entry, written in ((low_entry, low_kind), (high_entry, high_kind)):
            if written not in (None, kind):
                first, _ = _blame(entry, kind_entry)
                if first is entry:
                    clash = f"'{_text(entry)}' is a {written} but {kind_entry.label} says {kind}"
                else:
                    clash = f"'{kind}' contradicts {entry.label} '{_text(entry)}', a {written}"
                raise _fail(first, clash)
    else:
        if low_kind and high_kind and low_kind != high_kind:
            pair = ((high_entry, high_kind), (low_entry, low_kind))
            if _blame(high_entry, low_entry)[0] is low_entry:
                pair = pair[::-1]
            (first, first_kind), (second, second_kind) = pair
            raise _fail(
                first,
                f"'{_text(first)}' is a {first_kind} but {second.label} is a {second_kind}; "
                "write both in amperes or both in ohms",
            )
        # A bare number is amperes unless the other end says ohms.
        kind = low_kind or high_kind or "current"
    if kind == "current":
        for entry, value in ((low_entry, low), (high_entry, high)):
            if value < 0:
                raise _fail(entry, f"{_amps(value)} must not be negative")
            if value > MAX_LOAD_CURRENT_A:
                # A diode-stack rail never carries this; most likely "1k" meant ohms.
                raise _fail(
                    entry,
                    f"{_amps(value)} is above {_amps(MAX_LOAD_CURRENT_A)}: for a resistive load write "
                    "ohms, e.g. '1 kohm'",
                )
        _check_order(low_entry, low, high_entry, high, _amps)
    else:
        for entry, value in ((low_entry, low), (high_entry, high)):
            if value <= 0:
                raise _fail(entry, f"a load resistance of {_ohms(value)} must be above 0 \u03a9")
        _check_order(low_entry, low, high_entry, high, _ohms)
    return {"load_kind": kind, "load_min": low, "load_max": high}


_KELVIN = re.compile(r"^[+-]?[\d.eE+-]+\s*K$")


def _temperature(entry: _Entry) -> float:
    if isinstance(entry.raw, str) and _KELVIN.match(entry.raw.strip()):
        # "K" would otherwise read as the kilo prefix.
        raise _fail(entry, f"'{_text(entry)}': write the ambient in \u00b0C, not kelvin")
    value = _quantity(entry, units.TEMPERATURE)
    low, high = AMBIENT_LIMITS_C
    if not low <= value <= high:
        raise _fail(entry, f"{_celsius(value)} is outside {_celsius(low)} … {_celsius(high)}")
    return value


def _ambient(entries: dict[str, _Entry]) -> dict:
    low_entry, high_entry = entries["ambient.min"], entries["ambient.max"]
    low, high = _temperature(low_entry), _temperature(high_entry)
    _check_order(low_entry, low, high_entry, high, _celsius)
    return {"ambient_min_c": low, "ambient_max_c": high}


def _resistance_in_window(entry: _Entry) -> float:
    value = _quantity(entry, units.RESISTANCE)
    low, high = RESISTOR_LIMITS_OHM
    if value <= 0:
        raise _fail(entry, f"{_ohms(value)} must be above 0 \u03a9")
    if not low <= value <= high:
        raise _fail(entry, f"{_ohms(value)} is outside {_ohms(low)} … {_ohms(high)}")
    return value


def _resistor(entries: dict[str, _Entry]) -> dict:
    fields: dict = {}
    series_entry = entries.get("resistor.series")
    series = "E24"
    if series_entry is not None:
        if not isinstance(series_entry.raw, str):
            raise _fail(series_entry, "expected a series name such as 'E24'")
        series = series_entry.raw.strip().upper()
        if series not in SERIES_STEPS:
            raise _fail(series_entry, f"unknown series {_unknown(series, list(SERIES_STEPS))}")
    fields["resistor_series"] = series

    if "resistor.tolerance" in entries:
        entry = entries["resistor.tolerance"]
        fields["resistor_tolerance"] = _fraction(
            entry, "a percentage", 0.0, RESISTOR_TOLERANCE_LIMIT, inclusive_low=False
        )

    if "resistor.rating" in entries:
        entry = entries["resistor.rating"]
        rating = _quantity(entry, units.POWER)
        if rating <= 0:
            raise _fail(entry, f"{units.format_quantity(rating, 'W')} must be above 0 W")
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
        _check_order(low_entry, low, high_entry, high, _ohms)

    fixed_entry = entries.get("resistor.fixed")
    if fixed_entry is not None:
        fixed = fields["resistor_fixed_ohm"] = _resistance_in_window(fixed_entry)
        for bound_entry, inside in ((low_entry, fixed >= low), (high_entry, fixed <= high)):
            if bound_entry is not None and not inside:
                raise _fail(
                    fixed_entry,
                    f"{_ohms(fixed)} is outside the range {_ohms(low)} … {_ohms(high)} "
                    f"({bound_entry.label})",
                    bound_entry,
                )
    elif series_values(series, low, high).size == 0:
        blame = high_entry or low_entry or series_entry
        raise _fail(blame, f"no {series} value lies in {_ohms(low)} … {_ohms(high)}", low_entry, series_entry)
    return fields


#: Resistor TCR spellings and how many of them make 1/K.
_TCR_UNITS: dict[str, float] = {"": 1.0, "/K": 1.0, "1/K": 1.0, "ppm/K": 1e6, "ppm/°C": 1e6, "ppm/C": 1e6,
                                "ppm": 1e6, "%/K": 1e2, "%/°C": 1e2}  # fmt: skip
_TCR = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(\S*)\s*$")
#: Largest resistor TCR accepted [1/K] (10,000 ppm/K: beyond any fixed resistor).
MAX_RESISTOR_TCR_PER_K = 1e-2


def _temperature_coefficient(entry: _Entry) -> float:
    """A resistor TCR: ``"100 ppm/K"``, ``"0.01 %/K"`` or a bare number in 1/K."""
    _check_scalar(entry)
    raw = entry.raw
    if isinstance(raw, str):
        match = _TCR.match(raw)
        if not match or match.group(2) not in _TCR_UNITS:
            raise _fail(entry, f"'{_text(entry)}' is not a temperature coefficient such as '100 ppm/K'")
        value = float(match.group(1)) / _TCR_UNITS[match.group(2)]
    else:
        value = float(raw)
    if not 0.0 <= value <= MAX_RESISTOR_TCR_PER_K:
        raise _fail(entry, f"{value * 1e6:g} ppm/K must be from 0 to {MAX_RESISTOR_TCR_PER_K * 1e6:g} ppm/K")
    return value


def _resistor_derating(entries: dict[str, _Entry]) -> dict:
    """The resistor's derating knees: full rating to the first ambient, none from the second."""
    full_entry, zero_entry = entries.get("resistor.full_power_ambient"), entries.get("resistor.zero_power_ambient")
    full, zero = RailSpec.resistor_full_power_ambient_c, RailSpec.resistor_zero_power_ambient_c
    fields = {}
    if full_entry is not None:
        full = fields["resistor_full_power_ambient_c"] = _quantity(full_entry, units.TEMPERATURE)
    if zero_entry is not None:
        zero = fields["resistor_zero_power_ambient_c"] = _quantity(zero_entry, units.TEMPERATURE)
    for entry, value in ((full_entry, full), (zero_entry, zero)):
        if entry is not None and not -55.0 <= value <= 300.0:
            raise _fail(entry, f"{_celsius(value)} is outside {_celsius(-55.0)} … {_celsius(300.0)}")
    if zero <= full:
        blame = zero_entry or full_entry
        raise _fail(blame, f"the zero-power ambient {_celsius(zero)} must be above the full-power ambient "
                           f"{_celsius(full)}", full_entry, zero_entry)  # fmt: skip
    return fields


def _izt_limit(entry: _Entry) -> float:
    value, kind = _split(entry)
    if kind is not None or not 1.0 <= value <= 1000.0:
        raise _fail(entry, f"'{_text(entry)}' must be a plain multiple of the test current from 1 to 1000, e.g. 5")
    return value


def _max_parts(entry: _Entry) -> int:
    raw = entry.raw
    if isinstance(raw, str) and re.fullmatch(r"\s*\+?\d{1,6}\s*", raw):
        count = int(raw)
    elif isinstance(raw, int) and not isinstance(raw, bool):
        count = raw
    else:
        raise _fail(entry, f"'{_text(entry)}' is not a whole number of parts")
    if not 1 <= count <= MAX_PARTS_LIMIT:
        raise _fail(entry, f"{count} must be from 1 to {MAX_PARTS_LIMIT}")
    return count


def _list_name(entry: _Entry) -> str:
    if not isinstance(entry.raw, str) or entry.raw.strip() == "":
        raise _fail(entry, "expected the name of an approved-parts list")
    name = entry.raw.strip()
    if len(name) > 100 or not name.isprintable():
        raise _fail(entry, f"'{units.shown(name[:40])}' is not a usable list name")
    return name


def _search(entries: dict[str, _Entry]) -> dict:
    fields: dict = {}
    if "search.max_parts" in entries:
        fields["max_parts"] = _max_parts(entries["search.max_parts"])
    if "search.families" in entries:
        fields["families"] = _word_list(entries["search.families"], FAMILIES, "family")
    if "search.list" in entries:
        fields["list_name"] = _list_name(entries["search.list"])
    if "search.statuses" in entries:
        entry = entries["search.statuses"]
        statuses = _word_list(entry, LIST_STATUSES, "status")
        refused = [s for s in statuses if s in UNUSABLE_STATUSES]
        if refused:
            usable = ", ".join(s for s in LIST_STATUSES if s not in UNUSABLE_STATUSES)
            raise _fail(
                entry, f"'{refused[0]}' parts may never be designed in; usable: {usable}"
            )
        if "list_name" not in fields:
            raise _fail(
                entry,
                f"statuses apply to an approved-parts list; give {OPTION_FOR_KEY['search.list']}"
                " or [search] list",
            )
        fields["statuses"] = statuses
    if "search.min_current" in entries:
        entry = entries["search.min_current"]
        current = _quantity(entry, units.CURRENT)
        if current < 0:
            raise _fail(entry, f"{_amps(current)} must not be negative")
        fields["min_current_a"] = current
    if "search.min_margin" in entries:
        entry = entries["search.min_margin"]
        fields["min_margin"] = _fraction(
            entry, "a percentage or a fraction", 0.0, 1.0, inclusive_low=True
        )
    if "search.zener_izt_limit" in entries:
        fields["zener_izt_limit"] = _izt_limit(entries["search.zener_izt_limit"])
    return fields


def load_spec(
    path: str | Path | None = None,
    overrides: Mapping[str, object] | None = None,
    *,
    table: Mapping[str, object] | None = None,
    table_label: str = "spec",
) -> RailSpec:
    """Read and validate a rail requirement from a spec TOML file and/or overrides.

    Parameters
    ----------
    path : str or Path or None
        Spec TOML file (DESIGN §4); None when every required key comes from overrides.
    overrides : mapping of str to object, optional
        ``"section.key"`` (e.g. ``"supply.min"``) → the text or number the user typed;
        each replaces the file's value. ``None`` values are ignored.
    table : mapping, optional
        The spec as a dict shaped like the TOML (``{"rail": {"target": "5 V"}, …}``),
        instead of a file; messages name it ``table_label``.

    Returns
    -------
    RailSpec
        All quantities in SI units; a percent rail tolerance is converted to volts as
        ``target · pct / 100``.

    Raises
    ------
    SpecError
        One line naming the file and key (``rail.toml: [supply] min: …``), exit 1, or the
        option (``--supply-min: …``): then a :class:`~selector.errors.SpecOptionError`,
        exit 2.
    """
    entries: dict[str, _Entry] = {}
    file_label = None
    if path is not None:
        file_label, table = _read_toml(path)
    elif table is not None:
        file_label, table = table_label, dict(table)
    if table is not None:
        entries.update(_file_entries(file_label, table))
    entries.update(_option_entries(overrides or {}))
    _choose_rail_form(entries)
    window = "rail.min" in entries or "rail.max" in entries
    required = list(RAIL_FORMS[1 if window else 0]) + [d for d in REQUIRED_KEYS if not d.startswith("rail.")]
    missing = [dotted for dotted in required if dotted not in entries]
    if missing:
        raise (SpecError if file_label else SpecOptionError)(_missing_message(file_label, missing))
    fields = _rail(entries)
    fields.update(_supply(entries, fields["target_v"]))
    fields.update(_load(entries))
    fields.update(_ambient(entries))
    fields.update(_resistor(entries))
    fields.update(_search(entries))
    return RailSpec(**fields)


#: A rail tolerance above this fraction of the target is warned about: a bare number is
#: volts, so "3" meant as 3 % reads as 3 V (common practice, no source: few rails allow 20 %).
TOLERANCE_TYPO_FRACTION = 0.20


def spec_warnings(spec: RailSpec) -> list[str]:
    """Likely slips in a spec, one line each: a tolerance so wide it was probably meant as
    a percentage."""
    warnings = []
    if not spec.rail_window and spec.target_v > 0 and spec.tolerance_v > TOLERANCE_TYPO_FRACTION * spec.target_v:
        warnings.append(
            f"[rail] tolerance: {_volts(spec.tolerance_v)} is {spec.tolerance_v / spec.target_v:.0%} of the "
            f"{_volts(spec.target_v)} target (a bare number is volts); write '{spec.tolerance_v:g} %' if a "
            "percentage was meant"
        )
    return warnings


def spec_cautions(spec: RailSpec) -> list[str]:
    """Safety cautions a spec calls for, one line each (empty when none).

    A supply above 60 V DC exceeds the ES1 limit of IEC 62368-1:2018, Table 4.
    """
    cautions = []
    if spec.supply_max_v > ES1_DC_LIMIT_V:
        cautions.append(
            f"the supply reaches {_volts(spec.supply_max_v)}, above the 60 V DC ES1 limit of "
            "IEC 62368-1: follow local codes and licensed practice for hazardous voltages"
        )
    return cautions


__all__ = [
    "LIST_STATUSES",
    "OPTION_FOR_KEY",
    "REQUIRED_KEYS",
    "RailSpec",
    "UNUSABLE_STATUSES",
    "load_spec",
    "spec_cautions",
    "spec_warnings",
]

