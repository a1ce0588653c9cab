"""Fuzzing the quantity parser and the stack notation: a value or one clean message, never a crash.

Every generated text either reads as a finite number or raises the module's domain error
with a one-line, printable message. Formatting a value and reading it back returns it
within the digits asked for.
"""

from __future__ import annotations

import math

from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from selector.errors import QuantityError, StackNotationError
from selector.spec import units
from selector.spec.stack_notation import MAX_STACK_ELEMENTS, format_stack, parse_stack

CASES = settings(max_examples=2000, deadline=None, suppress_health_check=[HealthCheck.too_slow])

_KINDS = [*units.ALL_KINDS, units.DIMENSIONLESS]
_PREFIXES = ["", *units.SI_PREFIXES, "meg", "da", "R"]
_UNITS = ["", "V", "A", "W", "Ω", "ohm", "kohm", "%", "°C", "C", "K", "V/K", "K/W", "eV", "Hz", "mV/K", "Ohms"]
_NUMBERS = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(min_value=-(10**30), max_value=10**30).map(str),
    st.from_regex(r"\A[+\-\u2212]?[0-9]{0,4}\.?[0-9]{0,4}([eE][+-]?[0-9]{1,12})?\Z"),
    st.sampled_from(["nan", "NaN", "-inf", "+Infinity", "inf", "1e999999999999", "1e-999999999999",
                     "0x1F", "1_000", "1,5", "٣", "１", ".", "-", "e5", "4k7", "2R2", "R47", "k", "1..2"]),
)  # fmt: skip
_QUANTITY_TEXT = st.one_of(
    st.text(max_size=80),
    st.builds(
        lambda number, space, prefix, unit, pad: f"{pad}{number}{space}{prefix}{unit}{pad}",
        _NUMBERS,
        st.sampled_from(["", " ", "\u00a0", "\t", "  "]),
        st.sampled_from(_PREFIXES),
        st.sampled_from(_UNITS),
        st.sampled_from(["", " ", "\x00", "\n"]),
    ),
)


def _one_clean_line(message: str) -> bool:
    return message != "" and "\n" not in message and message.isprintable()


@CASES
@given(text=_QUANTITY_TEXT, kind=st.sampled_from(_KINDS))
@example(text="1e9999999", kind=units.CURRENT)
@example(text="\x00", kind=units.VOLTAGE)
def test_any_text_reads_as_a_finite_value_or_one_clean_message(text, kind):
    try:
        value = units.parse_quantity(text, kind)
    except QuantityError as error:
        assert _one_clean_line(str(error)), repr(str(error))
    else:
        assert isinstance(value, float) and math.isfinite(value)


@CASES
@given(value=st.one_of(st.floats(), st.integers(min_value=-(10**400), max_value=10**400), st.booleans()))
def test_any_number_is_a_finite_float_or_one_clean_message(value):
    try:
        result = units.parse_quantity(value, units.VOLTAGE)
    except QuantityError as error:
        assert _one_clean_line(str(error))
    else:
        assert math.isfinite(result) and not isinstance(value, bool)


@CASES
@given(
    value=st.floats(min_value=1e-15, max_value=1e14) | st.floats(min_value=-1e14, max_value=-1e-15),
    digits=st.integers(min_value=3, max_value=12),
    symbol=st.sampled_from(["V", "A", "W", "\u03a9", ""]),
)
def test_formatted_quantities_read_back_within_their_digits(value, digits, symbol):
    text = units.format_quantity(value, symbol, digits)
    kind = {"V": units.VOLTAGE, "A": units.CURRENT, "W": units.POWER, "\u03a9": units.RESISTANCE, "": units.DIMENSIONLESS}[symbol]
    back = units.parse_quantity(text, kind)
    # Rounding to `digits` significant digits moves a value by at most half a unit in
    # the last place: relative 0.5·10^(1−digits), a little more after the prefix scaling.
    assert math.isclose(back, value, rel_tol=0.51 * 10 ** (1 - digits)), (value, text, back)


_ALNUM = "ABCDZabcz0129"
_PART = st.builds(
    lambda first, rest: first + rest, st.sampled_from(_ALNUM), st.text(alphabet=_ALNUM + "._/-", max_size=10)
)
_STACK_PIECES = st.lists(
    st.one_of(
        _PART,
        st.builds(lambda count, part: f"{count}*{part}", st.integers(min_value=-3, max_value=10**7), _PART),
        st.sampled_from(["", "*", "+", "2*", "*D1", "2**D1", "9" * 50 + "*D1", "D\x001", "\u0663*D1", "D 1"]),
        st.text(max_size=20),
    ),
    max_size=8,
)


@CASES
@given(pieces=_STACK_PIECES, joiner=st.sampled_from(["+", " + ", "++", "+\n"]))
@example(pieces=["9" * 5000 + "*D1"], joiner="+")
def test_any_stack_text_parses_or_names_the_bad_term(pieces, joiner):
    text = joiner.join(pieces)
    try:
        terms = parse_stack(text)
    except StackNotationError as error:
        message = str(error)
        assert message.startswith("--stack: ") and _one_clean_line(message) and len(message) < 200
    else:
        assert 1 <= sum(count for count, _ in terms) <= MAX_STACK_ELEMENTS
        # The canonical text of what was read parses back to the same elements.
        elements = [part for count, part in terms for _ in range(count)]
        again = parse_stack(format_stack(elements))
        assert sorted(part for count, part in again for _ in range(count)) == sorted(elements)
