"""A rail spec's values as written, each with its place for messages: the spec file and
the options read into entries, one value read as a quantity, fraction or word list, and
the messages of a clash (which value to name, a value shown in its unit).
"""

from __future__ import annotations

import difflib
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from selector.errors import QuantityError, SpecError, SpecOptionError
from selector.files.input_files import InputFileProblem, read_bounded
from selector.spec import units
from selector.spec.spec_keys import OPTION_FOR_KEY, SECTION_KEYS

#: Largest spec file read [bytes].
MAX_SPEC_BYTES = 1_000_000
#: Largest magnitude a spec quantity may have, by kind: far past any rail this tool can
#: prove, and small enough that every later product stays finite.
QUANTITY_LIMITS: dict[str, float] = {"voltage": 1e5, "current": 1e3, "resistance": 1e12, "power": 1e6}


@dataclass(frozen=True)
class Entry:
    """One spec value as written, with where it came from for messages."""

    raw: object
    place: str  # prefix of an error about this value: "rail.toml: [supply] min"
    label: str  # how another message refers to it: "[supply] min" or "--supply-min"
    from_option: bool = False


def _file_entry(file_label: str, section: str, key: str, raw: object) -> Entry:
    return Entry(raw, f"{file_label}: [{section}] {key}", f"[{section}] {key}")


def _option_entry(dotted: str, raw: object) -> Entry:
    option = OPTION_FOR_KEY[dotted]
    return Entry(raw, option, option, from_option=True)


def fail(entry: Entry, message: str, *involved: Entry | None) -> SpecError:
    """The error about ``entry``; a usage error (exit 2) when it, or any other value the
    clash ``involved``, came from a command-line option."""
    from_option = entry.from_option or any(other is not None and other.from_option for other in involved)
    return (SpecOptionError if from_option else SpecError)(f"{entry.place}: {message}")


def read_toml(path: str | Path) -> tuple[str, dict]:
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


def unknown_name(name: str, known: tuple[str, ...] | list[str]) -> str:
    guess = difflib.get_close_matches(name, known, n=1)
    hint = f" (did you mean '{guess[0]}'?)" if guess else ""
    return f"'{units.shown(name)}'{hint}; known: {', '.join(known)}"


def file_entries(label: str, table: dict) -> dict[str, Entry]:
    entries: dict[str, Entry] = {}
    sections = tuple(SECTION_KEYS)
    for section, body in table.items():
        if section not in SECTION_KEYS:
            raise SpecError(f"{label}: unknown section {unknown_name(section, sections)}")
        if not isinstance(body, dict):
            raise SpecError(f"{label}: '{section}' must be a [{section}] table of keys")
        for key, raw in body.items():
            if key not in SECTION_KEYS[section]:
                raise SpecError(
                    f"{label}: [{section}]: unknown key {unknown_name(key, SECTION_KEYS[section])}"
                )
            entries[f"{section}.{key}"] = _file_entry(label, section, key, raw)
    return entries


def option_entries(overrides: Mapping[str, object]) -> dict[str, Entry]:
    entries: dict[str, Entry] = {}
    for dotted, raw in overrides.items():
        if dotted not in OPTION_FOR_KEY:
            raise SpecError(f"unknown spec override {unknown_name(dotted, list(OPTION_FOR_KEY))}")
        if raw is not None:
            entries[dotted] = _option_entry(dotted, raw)
    return entries


def missing_message(file_label: str | None, missing: list[str]) -> str:
    options = ", ".join(OPTION_FOR_KEY[d] for d in missing)
    if file_label is None:
        return f"missing {options} (or give them in a --spec FILE)"
    keys = ", ".join("[{}] {}".format(*d.split(".")) for d in missing)
    return f"{file_label}: missing {keys} (add to the file, or give {options})"


# --- reading single values -------------------------------------------------------------


def check_scalar(entry: Entry) -> None:
    if isinstance(entry.raw, bool) or not isinstance(entry.raw, (str, int, float)):
        kind = "true/false" if isinstance(entry.raw, bool) else type(entry.raw).__name__
        kind = {"list": "a list", "dict": "a table"}.get(kind, kind)
        raise fail(entry, f"expected a number or a quantity text, got {kind}")


def split_entry(entry: Entry) -> tuple[float, units.Kind | None]:
    """Value and written kind of an entry; a bare TOML number has no written kind."""
    check_scalar(entry)
    try:
        if isinstance(entry.raw, str):
            return units.split_quantity(entry.raw)
        return units.parse_quantity(entry.raw, units.DIMENSIONLESS), None
    except QuantityError as error:
        raise fail(entry, str(error)) from None


def entry_quantity(entry: Entry, kind: units.Kind) -> float:
    check_scalar(entry)
    try:
        value = units.parse_quantity(entry.raw, kind)
    except QuantityError as error:
        raise fail(entry, str(error)) from None
    limit = QUANTITY_LIMITS.get(kind.name)
    if limit is not None and abs(value) > limit:
        raise fail(entry, f"{units.format_quantity(value, kind.symbol)} is beyond {units.format_quantity(limit, kind.symbol)}, "
                           f"the largest {kind.name} a rail spec may have")  # fmt: skip
    return value


def entry_fraction(entry: Entry, what: str, low: float, high: float, inclusive_low: bool) -> float:
    """A fraction written as ``"20 %"`` or as a bare number (0.2), checked against a range."""
    value, kind = split_entry(entry)
    if kind is units.PERCENT:
        value /= 100
    elif kind is not None:
        raise fail(entry, f"'{entry_text(entry)}' is {kind.article} {kind.name}; {what} is expected")
    above_low = value >= low if inclusive_low else value > low
    if not (above_low and value < high):
        lowest = "from" if inclusive_low else "above"
        message = f"{value * 100:g} % must be {lowest} {low * 100:g} % and below {high * 100:g} %"
        if kind is None and value >= 1:
            # "5" meant as 5 % is the likely slip: a bare number is a fraction.
            message += f" (a bare number is a fraction; write '{entry_text(entry)} %' for percent)"
        raise fail(entry, message)
    return value


def entry_text(entry: Entry) -> str:
    return units.shown(str(entry.raw).strip())


def word_list(entry: Entry, known: tuple[str, ...], what: str) -> tuple[str, ...]:
    raw = entry.raw
    if isinstance(raw, str):
        items = raw.split(",")
    elif isinstance(raw, list) and all(isinstance(item, str) for item in raw):
        items = raw
    else:
        raise fail(entry, f"expected a list of {what} names or a comma-separated text")
    words: list[str] = []
    for item in items:
        word = item.strip().lower()
        if word == "":
            continue
        if word not in known:
            raise fail(entry, f"unknown {what} {unknown_name(word, known)}")
        if word not in words:
            words.append(word)
    if not words:
        raise fail(entry, f"no {what} given; leave the key out to allow every {what}")
    return tuple(words)


# --- clashes and units in messages --------------------------------------------------------


def blame(first: Entry, second: Entry) -> tuple[Entry, Entry]:
    """Which of two clashing values to name first: the one typed on the command line."""
    if first.from_option or not second.from_option:
        return first, second
    return second, first


def check_order(low: Entry, low_value: float, high: Entry, high_value: float, show) -> None:
    if low_value > high_value:
        if blame(low, high)[0] is high:
            raise fail(high, f"{show(high_value)} is below {low.label} ({show(low_value)})")
        raise fail(low, f"{show(low_value)} is above {high.label} ({show(high_value)})")


def volts(value: float) -> str:
    return units.format_quantity(value, "V")


def amps(value: float) -> str:
    return units.format_quantity(value, "A")


def ohms(value: float) -> str:
    return units.format_quantity(value, "\u03a9")


def celsius(value: float) -> str:
    return f"{value:g} \u00b0C"
