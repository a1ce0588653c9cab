"""Tests of quantity parsing and formatting (selector.spec.units).

Prefix powers are the SI prefixes of the BIPM SI Brochure, 9th ed. (2019), Table 7. The RKM
code forms ("4k7", "2R2", "R47": the letter stands in place of the decimal point, R for
units) are those of IEC 60062:2016, clause 5 (letter and digit code) — clause number from
memory.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from selector.errors import QuantityError
from selector.spec import units
from selector.spec.units import (
    CURRENT,
    DIMENSIONLESS,
    PERCENT,
    POWER,
    RESISTANCE,
    TEMPERATURE,
    VOLTAGE,
    VOLTAGE_TEMPCO,
    format_quantity,
    parse_quantity,
    split_quantity,
)

# Exact float equality is intended: the parser scales in decimal, so "4.7k" must be the
# very float 4700.0, not 4.7 * 1000 (= 4700.000000000001).
ACCEPTED_FORMS = [
    ("4.7k", 4700.0, None),
    ("4k7", 4700.0, None),  # RKM, IEC 60062:2016 clause 5 (from memory)
    ("2R2", 2.2, RESISTANCE),  # RKM: R marks the decimal point of a value in ohms
    ("R47", 0.47, RESISTANCE),  # RKM with a leading R
    ("1M5", 1.5e6, None),
    ("4u7", 4.7e-6, None),
    ("500 mW", 0.5, POWER),
    ("2.6f", 2.6e-15, None),
    ("1e-14", 1e-14, None),
    ("-1.8 mV/K", -1.8e-3, VOLTAGE_TEMPCO),
    ("10 kohm", 10e3, RESISTANCE),
    ("10 kohms", 10e3, RESISTANCE),
    ("4.7 k\u03a9", 4.7e3, RESISTANCE),  # Greek capital omega
    ("4.7 k\u2126", 4.7e3, RESISTANCE),  # the ohm sign
    ("5 mohm", 5e-3, RESISTANCE),
    ("5 Mohm", 5e6, RESISTANCE),
    ("3 %", 3.0, PERCENT),
    ("600m", 0.6, None),
    ("12 V", 12.0, VOLTAGE),
    ("12V", 12.0, VOLTAGE),
    ("2.5 nA", 2.5e-9, CURRENT),
    ("10 \u00b5A", 10e-6, CURRENT),  # micro sign
    ("10 uA", 10e-6, CURRENT),
    ("25 \u00b0C", 25.0, TEMPERATURE),
    ("\u22125 V", -5.0, VOLTAGE),  # typographic minus
    ("  .5  ", 0.5, None),
    ("+1.", 1.0, None),
]


@pytest.mark.parametrize(("text", "value", "kind"), ACCEPTED_FORMS)
def test_split_quantity_reads_every_accepted_form_exactly(text, value, kind):
    assert split_quantity(text) == (value, kind)


def test_parse_quantity_takes_a_bare_number_in_the_expected_unit():
    assert parse_quantity("4k7", RESISTANCE) == 4700.0
    assert parse_quantity("0.25", POWER) == 0.25
    assert parse_quantity(12, VOLTAGE) == 12.0
    assert parse_quantity(1.5e-3, CURRENT) == 1.5e-3


def test_wrong_kind_message_is_exact():
    with pytest.raises(QuantityError) as caught:
        parse_quantity("5 mA", POWER)
    assert str(caught.value) == "'5 mA' is a current; a power is expected"


def test_wrong_kind_message_uses_each_article():
    with pytest.raises(QuantityError) as caught:
        parse_quantity("1.1 eV", VOLTAGE)
    assert str(caught.value) == "'1.1 eV' is an energy; a voltage is expected"
    with pytest.raises(QuantityError) as caught:
        parse_quantity("3 V", DIMENSIONLESS)
    assert str(caught.value) == "'3 V' is a voltage; a plain number is expected"


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("", "empty value"),
        ("   ", "empty value"),
        ("nan", "'nan' is not a finite number"),
        ("-Infinity", "'-Infinity' is not a finite number"),
        ("inf V", "'inf V' is not a number"),
        ("abc", "'abc' is not a number"),
        ("V", "'V' is not a number"),
        ("-", "'-' is not a number"),
        ("5 parsecs", "'5 parsecs' has an unknown unit 'parsecs'"),
        ("4,7k", "'4,7k' has an unknown unit ',7k'"),  # a decimal comma is refused, not misread
        ("1.2.3", "'1.2.3' has an unknown unit '.3'"),
        ("5 mC", "'5 mC' has an unknown unit 'mC'"),  # °C takes no prefix
        ("1e999999", "'1e999999' is out of range"),
        ("1e9999999k", "'1e9999999k' is out of range"),  # beyond the decimal context
        ("9" * 65, "'99999999999999999999…' is too long to be a quantity"),
    ],
)
def test_garbage_is_refused_with_one_line(text, message):
    with pytest.raises(QuantityError) as caught:
        split_quantity(text)
    assert str(caught.value) == message


def test_control_characters_are_escaped_so_the_message_stays_one_line():
    with pytest.raises(QuantityError) as caught:
        split_quantity("5\nV\x1b[31m")
    message = str(caught.value)
    assert "\n" not in message and "\x1b" not in message
    assert message == "'5\\nV\\x1b[31m' has an unknown unit '\\nV\\x1b[31m'"


@pytest.mark.parametrize(
    ("value", "message"),
    [
        (math.nan, "nan is not a finite number"),
        (-math.inf, "-inf is not a finite number"),
        (10**400, "an integer of 1329 bits is out of range"),
        (True, "True is not a number"),
    ],
)
def test_parse_quantity_refuses_non_finite_numbers(value, message):
    with pytest.raises(QuantityError) as caught:
        parse_quantity(value, VOLTAGE)
    assert str(caught.value) == message


@pytest.mark.parametrize("value", [None, ["5 V"], {"v": 5}])
def test_non_text_is_refused(value):
    with pytest.raises(QuantityError, match="is not a quantity text"):
        split_quantity(value)


@pytest.mark.parametrize(
    ("value", "symbol", "text"),
    [
        (4700.0, "\u03a9", "4.7 k\u03a9"),
        (0.15, "V", "150 mV"),
        (0.0, "V", "0 V"),
        (1e-6, "A", "1 \u00b5A"),
        (-1.8e-3, "V/K", "-1.8 mV/K"),
        (999.96, "V", "1 kV"),  # rounding to 4 digits moves it up a prefix
        (2.6e-15, "A", "2.6 fA"),
        (1e-18, "A", "1e-18 A"),
        (12.0, "", "12"),
    ],
)
def test_format_quantity_writes_engineering_notation(value, symbol, text):
    assert format_quantity(value, symbol) == text


_PREFIXABLE_SYMBOLS = ["V", "A", "\u03a9", "W", "V/K", "K/W", "eV", ""]
_FINITE = st.floats(allow_nan=False, allow_infinity=False)
# Rounding to fewer digits may carry the largest floats past the float range; no quantity
# of this tool comes near 1e300.
_FORMATTABLE = st.floats(min_value=-1e300, max_value=1e300)


@given(value=_FORMATTABLE, symbol=st.sampled_from(_PREFIXABLE_SYMBOLS), digits=st.integers(2, 9))
def test_format_then_parse_agrees_within_the_printed_digits(value, symbol, digits):
    text = format_quantity(value, symbol, digits)
    parsed, _ = split_quantity(text)
    # Rounding a mantissa in [1, 1000) to `digits` significant figures moves it by at most
    # half a unit of the last printed digit; 1e-12 covers the binary division by the scale.
    bound = 0.5 * 10 ** (1 - digits) * abs(value) * (1 + 1e-12)
    assert abs(parsed - value) <= bound + 5e-324, text


@given(value=_FINITE)
def test_repr_of_a_float_parses_back_exactly(value):
    assert parse_quantity(repr(value), VOLTAGE) == value
    assert parse_quantity(repr(value) + " V", VOLTAGE) == value


@given(value=_FINITE)
def test_numeric_input_passes_through_unchanged(value):
    assert parse_quantity(value, CURRENT) == value


def test_numpy_scalars_are_numbers():
    assert parse_quantity(np.int64(3), VOLTAGE) == 3.0
    assert parse_quantity(np.float32(0.5), VOLTAGE) == 0.5
    with pytest.raises(QuantityError, match="nan is not a finite number"):
        parse_quantity(np.float64("nan"), VOLTAGE)


def test_shown_leaves_printable_text_alone():
    assert units.shown("4.7 k\u03a9") == "4.7 k\u03a9"


def test_compound_and_temperature_units_take_no_prefix():
    from selector.spec.units import format_quantity

    assert format_quantity(1500.0, "K/W") == "1500 K/W"
    assert format_quantity(330.0, "K/W") == "330 K/W"
    assert format_quantity(4.7e3, "Ω") == "4.7 kΩ"
