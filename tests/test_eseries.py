"""Tests of the IEC 60063 preferred-number series (selector.spec.eseries).

Every table below is written out as literals, independently of the code (which derives
E48 … E192 by rounding 10**(i/N)). Source of each: the value tables of IEC 60063:2015 —
written **from memory**, not copied from the standard's text; they agree with the code
entry for entry.
"""

from __future__ import annotations

import numpy as np
import pytest

from selector.errors import OptionError
from selector.spec.eseries import SERIES_STEPS, decade_values, nearest_series_value, series_values

# IEC 60063:2015, two-figure series — from memory.
E3 = [1.0, 2.2, 4.7]
E6 = [1.0, 1.5, 2.2, 3.3, 4.7, 6.8]
E12 = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2]
E24 = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
       3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1]  # fmt: skip

# IEC 60063:2015, three-figure series, in hundredths — from memory.
E48 = [100, 105, 110, 115, 121, 127, 133, 140, 147, 154, 162, 169, 178, 187, 196, 205,
       215, 226, 237, 249, 261, 274, 287, 301, 316, 332, 348, 365, 383, 402, 422, 442,
       464, 487, 511, 536, 562, 590, 619, 649, 681, 715, 750, 787, 825, 866, 909, 953]  # fmt: skip
E96 = [100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143,
       147, 150, 154, 158, 162, 165, 169, 174, 178, 182, 187, 191, 196, 200, 205, 210,
       215, 221, 226, 232, 237, 243, 249, 255, 261, 267, 274, 280, 287, 294, 301, 309,
       316, 324, 332, 340, 348, 357, 365, 374, 383, 392, 402, 412, 422, 432, 442, 453,
       464, 475, 487, 499, 511, 523, 536, 549, 562, 576, 590, 604, 619, 634, 649, 665,
       681, 698, 715, 732, 750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953, 976]  # fmt: skip
E192 = [100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114, 115, 117, 118, 120,
        121, 123, 124, 126, 127, 129, 130, 132, 133, 135, 137, 138, 140, 142, 143, 145,
        147, 149, 150, 152, 154, 156, 158, 160, 162, 164, 165, 167, 169, 172, 174, 176,
        178, 180, 182, 184, 187, 189, 191, 193, 196, 198, 200, 203, 205, 208, 210, 213,
        215, 218, 221, 223, 226, 229, 232, 234, 237, 240, 243, 246, 249, 252, 255, 258,
        261, 264, 267, 271, 274, 277, 280, 284, 287, 291, 294, 298, 301, 305, 309, 312,
        316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361, 365, 370, 374, 379,
        383, 388, 392, 397, 402, 407, 412, 417, 422, 427, 432, 437, 442, 448, 453, 459,
        464, 470, 475, 481, 487, 493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556,
        562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642, 649, 657, 665, 673,
        681, 690, 698, 706, 715, 723, 732, 741, 750, 759, 768, 777, 787, 796, 806, 816,
        825, 835, 845, 856, 866, 876, 887, 898, 909, 920, 931, 942, 953, 965, 976, 988]  # fmt: skip

TABLES = {
    "E3": E3,
    "E6": E6,
    "E12": E12,
    "E24": E24,
    "E48": [v / 100 for v in E48],
    "E96": [v / 100 for v in E96],
    "E192": [v / 100 for v in E192],
}


@pytest.mark.parametrize("series", list(TABLES))
def test_decade_matches_the_standard_table_exactly(series):
    assert len(TABLES[series]) == SERIES_STEPS[series]
    assert decade_values(series).tolist() == TABLES[series]


def test_tables_nest_as_the_standard_builds_them():
    # Each series is every other entry of the next finer one (IEC 60063:2015 — from memory).
    assert E3 == E6[::2] and E6 == E12[::2] and E12 == E24[::2]
    assert E48 == E96[::2] and E96 == E192[::2]


@pytest.mark.parametrize("value", [2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2])
def test_e24_values_that_differ_from_rounding_the_geometric_series(value):
    index = E24.index(value)
    rounded = round(10 ** (index / 24), 1)
    assert rounded != value  # a departure IEC 60063:2015 makes (from memory)
    assert value in decade_values("E24").tolist()


def test_e24_other_values_equal_rounded_geometric_series():
    departures = {2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2}
    for index, value in enumerate(E24):
        if value not in departures:
            assert round(10 ** (index / 24), 1) == value


def test_e192_entry_920_departs_from_rounding():
    # 10**(185/192) = 9.1948 rounds to 9.19; IEC 60063:2015 has 9.20 (from memory).
    assert round(10 ** (185 / 192), 2) == 9.19
    values = decade_values("E192").tolist()
    assert values[184:187] == [9.09, 9.20, 9.31]
    assert 9.19 not in values


def test_e192_entries_around_920():
    values = decade_values("E192").tolist()
    assert values[180:190] == [8.66, 8.76, 8.87, 8.98, 9.09, 9.20, 9.31, 9.42, 9.53, 9.65]


def test_series_name_is_case_and_space_insensitive():
    assert decade_values(" e24 ").tolist() == E24


def test_unknown_series_is_refused():
    with pytest.raises(OptionError) as caught:
        decade_values("E5")
    assert str(caught.value) == "unknown resistor series 'E5'; known: E3, E6, E12, E24, E48, E96, E192"


def test_series_values_span_1_ohm_to_10_megohm_inclusive():
    values = series_values("E24")
    assert values[0] == 1.0 and values[-1] == 10e6
    # Seven decades of 24 values plus the closing 10 MΩ.
    assert values.size == 7 * 24 + 1
    assert np.all(np.diff(values) > 0)


def test_series_values_are_exact_floats():
    values = series_values("E24").tolist()
    assert 4.7e3 in values and 4700.0 in values
    assert 2.2 in values and 220.0 in values and 2.2e6 in values
    e192 = series_values("E192", 1e3, 1e4).tolist()
    assert 9.2e3 in e192 and 1.02e3 in e192


def test_series_values_inclusive_limits_inside_a_decade():
    assert series_values("E12", 4.7e3, 10e3).tolist() == [4.7e3, 5.6e3, 6.8e3, 8.2e3, 10e3]
    assert series_values("E6", 3.4e3, 4.6e3).size == 0


@pytest.mark.parametrize(("low", "high"), [(0.0, 10.0), (-1.0, 10.0), (10.0, 1.0)])
def test_series_values_refuses_an_empty_or_negative_range(low, high):
    with pytest.raises(OptionError):
        series_values("E24", low, high)


def test_nearest_series_value_on_a_log_scale():
    assert nearest_series_value(4.5e3, "E12") == 4.7e3
    # Geometric midpoint of 1.0 and 1.5 is 1.2247: 1.22 kΩ goes down, 1.23 kΩ goes up.
    assert nearest_series_value(1.22e3, "E6") == 1.0e3
    assert nearest_series_value(1.23e3, "E6") == 1.5e3
