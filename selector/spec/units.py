"""Reading and writing physical quantities: SI prefixes, units and RKM codes.

Every quantity a user types or a spreadsheet holds passes through :func:`parse_quantity`:
``"4.7k"``, ``"4k7"``, ``"2R2"``, ``"500 mW"``, ``"2.6f"``, ``"1e-14"``, ``"-1.8 mV/K"``,
``"10 kohm"``, ``"4.7 kΩ"``, ``"3 %"``. A bare number (or a number with a prefix only) is
taken in the column's or option's own unit. A number with a unit of another kind is
refused, naming both kinds.

References
----------
.. [1] BIPM, *The International System of Units (SI)*, 9th ed., 2019, Table 7 (SI prefixes).
.. [2] IEC 60062:2016, *Marking codes for resistors and capacitors*, clause 5 (clause
       number from memory): the letter and digit ("RKM") code, where the multiplier letter
       stands in place of the decimal point and ``R`` means 1.
"""

from __future__ import annotations

import math
import numbers
import re
from dataclasses import dataclass
from decimal import Decimal, DecimalException

from selector.errors import QuantityError

#: SI prefixes [1] as powers of ten; ``u`` and both micro signs stand for 1e-6.
SI_PREFIXES: dict[str, int] = {
    "f": -15,
    "p": -12,
    "n": -9,
    "u": -6,
    "\u00b5": -6,
    "\u03bc": -6,
    "m": -3,
    "k": 3,
    "K": 3,
    "M": 6,
    "G": 9,
    "T": 12,
}

#: RKM multiplier letters [2]. ``R`` marks the decimal point of a value in base units.
RKM_LETTERS: dict[str, int] = {"R": 0, **SI_PREFIXES}


@dataclass(frozen=True)
class Kind:
    """A kind of quantity: its name for messages and the unit symbols that spell it."""

    name: str
    article: str
    symbol: str
    spellings: tuple[str, ...]
    prefixable: bool = True


VOLTAGE = Kind("voltage", "a", "V", ("V",))
CURRENT = Kind("current", "a", "A", ("A",))
RESISTANCE = Kind("resistance", "a", "\u03a9", ("\u03a9", "\u2126", "ohms", "ohm", "Ohms", "Ohm", "OHM", "R"))
POWER = Kind("power", "a", "W", ("W",))
TEMPERATURE = Kind("temperature", "a", "\u00b0C", ("\u00b0C", "degC", "C"), prefixable=False)
VOLTAGE_TEMPCO = Kind("voltage tempco", "a", "V/K", ("V/K", "V/\u00b0C", "V/degC", "V/C"))
THERMAL_RESISTANCE = Kind("thermal resistance", "a", "K/W", ("K/W", "\u00b0C/W", "degC/W", "C/W"))
ENERGY_EV = Kind("energy", "an", "eV", ("eV",))
PERCENT = Kind("percentage", "a", "%", ("%",), prefixable=False)
DIMENSIONLESS = Kind("plain number", "a", "", ())

ALL_KINDS: tuple[Kind, ...] = (
    VOLTAGE_TEMPCO,
    THERMAL_RESISTANCE,
    VOLTAGE,
    CURRENT,
    RESISTANCE,
    POWER,
    TEMPERATURE,
    ENERGY_EV,
    PERCENT,
)

_NUMBER = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_RKM = re.compile(r"^([+-]?)(\d*)([RfpnumkKMGT\u00b5\u03bc])(\d+)$")
_SPECIAL_WORDS = ("nan", "inf", "infinity")


def _unit_table() -> list[tuple[str, Kind]]:
    table = [(spelling, kind) for kind in ALL_KINDS for spelling in kind.spellings]
    # Longest spelling first so that "V/K" wins over "V" and "ohms" over "ohm".
    return sorted(table, key=lambda item: -len(item[0]))


_UNITS = _unit_table()


def shown(text: str) -> str:
    """A user's text made safe for a one-line message: control characters escaped."""
    return "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)


def _describe(kind: Kind) -> str:
    return f"{kind.article} {kind.name}"


def _split_suffix(suffix: str) -> tuple[int, Kind | None] | None:
    """Read ``[prefix][unit]`` from the text after the number as (power of ten, kind)."""
    if suffix == "":
        return 0, None
    for spelling, kind in _UNITS:
        if suffix == spelling:
            return 0, kind
    for spelling, kind in _UNITS:
        if kind.prefixable and suffix.endswith(spelling):
            prefix = suffix[: -len(spelling)]
            if prefix in SI_PREFIXES:
                return SI_PREFIXES[prefix], kind
    if suffix in SI_PREFIXES:
        return SI_PREFIXES[suffix], None
    return None


def split_quantity(text: str) -> tuple[float, Kind | None]:
    """Read a quantity text into its value in base SI units and the kind its unit names.

    Parameters
    ----------
    text : str
        For example ``"4.7 kΩ"``, ``"4k7"``, ``"-1.8 mV/K"``, ``"600m"``, ``"1e-14"``.

    Returns
    -------
    value : float
        The value in base units (V, A, Ω, W, °C, V/K, K/W, eV, percent points).
    kind : Kind or None
        The kind the unit names, or None when the text carries no unit.

    Raises
    ------
    QuantityError
        When the text is not a finite number with an optional prefix and unit.
    """
    if not isinstance(text, str):
        raise QuantityError(f"{text!r} is not a quantity text")
    cleaned = text.strip().replace("\u2212", "-").replace("\u00a0", " ")
    if cleaned == "":
        raise QuantityError("empty value")
    if len(cleaned) > 64:
        raise QuantityError(f"'{shown(cleaned[:20])}…' is too long to be a quantity")
    compact = cleaned.replace(" ", "")
    if compact.lower().lstrip("+-") in _SPECIAL_WORDS:
        raise QuantityError(f"'{shown(cleaned)}' is not a finite number")

    rkm = _RKM.match(compact)
    if rkm and rkm.group(2) + rkm.group(4):
        sign, whole, letter, fraction = rkm.groups()
        value = _scaled(f"{sign}{whole or '0'}.{fraction}", RKM_LETTERS[letter])
        kind = RESISTANCE if letter == "R" else None
        return _finite(value, cleaned), kind

    number = _NUMBER.match(compact)
    if not number:
        raise QuantityError(f"'{shown(cleaned)}' is not a number")
    suffix = compact[number.end():]
    split = _split_suffix(suffix)
    if split is None:
        raise QuantityError(f"'{shown(cleaned)}' has an unknown unit '{shown(suffix)}'")
    exponent, kind = split
    return _finite(_scaled(number.group(0), exponent), cleaned), kind


def _scaled(number_text: str, exponent: int) -> float:
    # Decimal scaling keeps "2.6f" exactly 2.6e-15 rather than 2.6 * 1e-15.
    try:
        return float(Decimal(number_text).scaleb(exponent))
    except (OverflowError, DecimalException):
        # An exponent past the decimal context (e.g. "1e9999999") is out of range too.
        return math.inf


def _finite(value: float, text: str) -> float:
    if not math.isfinite(value):
        raise QuantityError(f"'{shown(text)}' is out of range")
    return value


def parse_quantity(text: str | float | int, expected: Kind) -> float:
    """Read a value of an expected kind, in base SI units.

    Parameters
    ----------
    text : str or float or int
        A quantity text, or an already numeric value in base units.
    expected : Kind
        The kind the column or option holds, e.g. :data:`POWER`.

    Returns
    -------
    float
        The value in base units of ``expected``.

    Raises
    ------
    QuantityError
        With a message such as ``'5 mA' is a current; a power is expected``.
    """
    if isinstance(text, bool):
        raise QuantityError(f"{text!r} is not a number")
    # numbers.* so that numpy scalars from a DataFrame cell are numbers too.
    if isinstance(text, numbers.Integral):
        try:
            return float(int(text))
        except OverflowError:
            bits = int(text).bit_length()
            raise QuantityError(f"an integer of {bits} bits is out of range") from None
    if isinstance(text, numbers.Real):
        value = float(text)
        if not math.isfinite(value):
            raise QuantityError(f"{value!r} is not a finite number")
        return value
    value, kind = split_quantity(text)
    if kind is not None and kind is not expected:
        # The RKM "2R2" and the "R" suffix name ohms, so they too are refused elsewhere.
        raise QuantityError(
            f"'{shown(text.strip())}' is {_describe(kind)}; {_describe(expected)} is expected"
        )
    return value


_ENGINEERING = [
    (1e12, "T"),
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1.0, ""),
    (1e-3, "m"),
    (1e-6, "\u00b5"),
    (1e-9, "n"),
    (1e-12, "p"),
    (1e-15, "f"),
]


#: Units written without an SI prefix.
UNPREFIXED_SYMBOLS = frozenset({"K/W", "°C"})


def format_quantity(value: float, symbol: str, digits: int = 4) -> str:
    """Write a value in engineering notation with an SI prefix, e.g. ``4.7 kΩ``.

    Parameters
    ----------
    value : float
        Value in base units.
    symbol : str
        Unit symbol to append (``"V"``, ``"A"``, ``"Ω"``); may be empty.
    digits : int
        Significant digits.

    Returns
    -------
    str
        Text that :func:`split_quantity` reads back to ``value`` within ``digits``.
    """
    if not math.isfinite(value):
        return f"{value} {symbol}".strip()
    if value == 0:
        return f"0 {symbol}".strip()
    if symbol in UNPREFIXED_SYMBOLS:
        # A prefix on a compound unit misleads ("1.5 kK/W"): the trade writes 1500 K/W.
        return f"{value:.{digits}g} {symbol}"
    magnitude = abs(value)
    if magnitude < 1e-15 or magnitude >= 1e15:
        return f"{value:.{digits}g} {symbol}".strip()
    threshold = 1 - 0.5 * 10 ** (1 - digits)
    scale, prefix = next(
        ((s, p) for s, p in _ENGINEERING if magnitude >= s * threshold), _ENGINEERING[-1]
    )
    mantissa = value / scale
    text = f"{mantissa:.{digits}g}"
    if "e" in text:
        text = f"{mantissa:.{max(digits - 3, 0)}f}"
    return f"{text} {prefix}{symbol}".strip()
