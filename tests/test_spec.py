"""Tests of the rail requirement loader (selector.spec.rail_spec.load_spec) and its validation.

Every spec here is invented for the test. Error texts are asserted exactly: a user sees
them as the one line of an ``Error:``.
"""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from selector.errors import SpecError
from selector.spec.rail_spec import (
    OPTION_FOR_KEY,
    REQUIRED_KEYS,
    RailSpec,
    load_spec,
    spec_cautions,
)

BASE = """\
[rail]
target = "5 V"
tolerance = "3 %"

[supply]
min = "11 V"
max = "13 V"

[load]
min = 0
max = "10 mA"

[ambient]
min = 0
max = 50
"""

# Every key given by options, nothing from a file.
OPTIONS_ONLY = {
    "rail.target": "5V",
    "rail.tolerance": "3%",
    "supply.min": "11V",
    "supply.max": "13V",
    "load.min": "0",
    "load.max": "10mA",
    "ambient.min": "0",
    "ambient.max": "50",
}


@pytest.fixture
def in_tmp(tmp_path, monkeypatch):
    """Work in an empty directory so that messages name the file as 'rail.toml'."""
    monkeypatch.chdir(tmp_path)
    return tmp_path


def write(text: str | bytes, name: str = "rail.toml") -> str:
    mode = "wb" if isinstance(text, bytes) else "w"
    with open(name, mode, **({} if isinstance(text, bytes) else {"encoding": "utf-8"})) as f:
        f.write(text)
    return name


def spec_from(text: str, **sections: str) -> RailSpec:
    """Load BASE plus extra sections given as keyword TOML bodies."""
    extra = "".join(f"\n[{name}]\n{body}\n" for name, body in sections.items())
    return load_spec(write(text + extra))


def error_of(text: str | bytes | None = None, overrides=None, **sections: str) -> str:
    path = None
    if text is not None:
        if isinstance(text, str):
            text += "".join(f"\n[{name}]\n{body}\n" for name, body in sections.items())
        path = write(text)
    with pytest.raises(SpecError) as caught:
        load_spec(path, overrides)
    message = str(caught.value)
    assert "\n" not in message
    return message


def replaced(old: str, new: str) -> str:
    assert old in BASE
    return BASE.replace(old, new)


# --- a good spec ------------------------------------------------------------------------


def test_base_spec_reads_in_si_units_with_defaults(in_tmp):
    spec = load_spec(write(BASE))
    assert spec == RailSpec(
        target_v=5.0,
        tolerance_v=5.0 * 3.0 / 100,  # a percent tolerance is target·pct/100
        supply_min_v=11.0,
        supply_max_v=13.0,
        supply_nominal_v=12.0,
        load_kind="current",
        load_min=0.0,
        load_max=0.01,
        ambient_min_c=0.0,
        ambient_max_c=50.0,
    )
    # The defaults DESIGN §4 fixes.
    assert (spec.resistor_series, spec.resistor_tolerance, spec.resistor_rating_w) == ("E24", 0.01, 0.25)
    assert (spec.max_parts, spec.min_current_a, spec.min_margin) == (3, 0.0, 0.0)
    assert (spec.resistor_min_ohm, spec.resistor_max_ohm, spec.resistor_fixed_ohm) == (1.0, 10e6, None)
    assert spec.families is None and spec.list_name is None and spec.statuses is None


def test_options_alone_make_a_spec():
    assert load_spec(None, OPTIONS_ONLY) == load_spec(None, {**OPTIONS_ONLY, "load.min": 0})


def test_every_key_in_a_file(in_tmp):
    spec = spec_from(
        replaced('max = "13 V"', 'max = "13 V"\nnominal = "12.5 V"').replace(
            'tolerance = "3 %"', 'tolerance = "100 mV"'
        ),
        resistor='series = "e96"\ntolerance = "0.5 %"\nrating = "500 mW"\nmin = "100 ohm"\nmax = "47 kΩ"',
        search='max_parts = 4\nfamilies = ["zener", "Signal"]\nlist = "bench-2"\n'
        'statuses = "approved, evaluating"\nmin_current = "1 mA"\nmin_margin = "20 %"',
    )
    assert spec.tolerance_v == 0.1
    assert spec.supply_nominal_v == 12.5
    assert spec.resistor_series == "E96"
    assert spec.resistor_tolerance == 0.005
    assert spec.resistor_rating_w == 0.5
    assert (spec.resistor_min_ohm, spec.resistor_max_ohm) == (100.0, 47e3)
    assert spec.max_parts == 4
    assert spec.families == ("zener", "signal")
    assert spec.list_name == "bench-2"
    assert spec.statuses == ("approved", "evaluating")
    assert spec.min_current_a == 1e-3
    assert spec.min_margin == 0.2


def test_fractions_may_be_bare_numbers(in_tmp):
    spec = spec_from(BASE, resistor="tolerance = 0.05", search="min_margin = 0.25")
    assert spec.resistor_tolerance == 0.05 and spec.min_margin == 0.25


def test_fixed_resistor_in_rkm_and_ohm_spellings(in_tmp):
    assert spec_from(BASE, resistor='fixed = "4k7"').resistor_fixed_ohm == 4700.0
    assert spec_from(BASE, resistor='fixed = "10 kohm"').resistor_fixed_ohm == 10e3
    assert spec_from(BASE, resistor="fixed = 330").resistor_fixed_ohm == 330.0


def test_ambient_in_celsius_text_and_bare(in_tmp):
    spec = spec_from(replaced("min = 0\nmax = 50", 'min = "-40 °C"\nmax = 85.5'))
    assert (spec.ambient_min_c, spec.ambient_max_c) == (-40.0, 85.5)


def test_a_byte_order_mark_is_harmless(in_tmp):
    assert load_spec(write(b"\xef\xbb\xbf" + BASE.encode())).target_v == 5.0


# --- the load: amperes or ohms ----------------------------------------------------------


def test_load_in_ohms_by_unit(in_tmp):
    spec = spec_from(replaced('min = 0\nmax = "10 mA"', 'min = "1 kohm"\nmax = "4.7 kΩ"'))
    assert (spec.load_kind, spec.load_min, spec.load_max) == ("resistance", 1e3, 4.7e3)


def test_a_bare_load_number_follows_the_other_end_in_ohms(in_tmp):
    spec = spec_from(replaced('min = 0\nmax = "10 mA"', 'min = 470\nmax = "2.2 kohm"'))
    assert (spec.load_kind, spec.load_min, spec.load_max) == ("resistance", 470.0, 2200.0)


def test_load_kind_makes_bare_numbers_ohms(in_tmp):
    spec = spec_from(replaced('min = 0\nmax = "10 mA"', 'kind = "resistance"\nmin = 1000\nmax = 2000'))
    assert (spec.load_kind, spec.load_min, spec.load_max) == ("resistance", 1000.0, 2000.0)


def test_bare_load_numbers_are_amperes(in_tmp):
    spec = spec_from(replaced('min = 0\nmax = "10 mA"', "min = 0.001\nmax = 0.02"))
    assert (spec.load_kind, spec.load_min, spec.load_max) == ("current", 0.001, 0.02)


def test_load_mixing_amperes_and_ohms_is_refused(in_tmp):
    text = replaced('min = 0\nmax = "10 mA"', 'min = "1 mA"\nmax = "1 kohm"')
    assert error_of(text) == (
        "rail.toml: [load] max: '1 kohm' is a resistance but [load] min is a current; "
        "write both in amperes or both in ohms"
    )


def test_load_kind_contradicting_a_unit_is_refused(in_tmp):
    text = replaced('min = 0\nmax = "10 mA"', 'kind = "resistance"\nmin = 100\nmax = "10 mA"')
    assert error_of(text) == (
        "rail.toml: [load] max: '10 mA' is a current but [load] kind says resistance"
    )


def test_load_kind_must_be_a_known_word(in_tmp):
    text = replaced('min = 0\nmax = "10 mA"', 'kind = "ohms"\nmin = 0\nmax = "10 mA"')
    assert error_of(text) == "rail.toml: [load] kind: 'ohms' must be 'current' or 'resistance'"


def test_load_of_another_kind_is_refused(in_tmp):
    assert error_of(replaced('max = "10 mA"', 'max = "10 mV"')) == (
        "rail.toml: [load] max: '10 mV' is a voltage; a current or a resistance is expected"
    )


def test_negative_load_current_and_zero_load_resistance_are_refused(in_tmp):
    assert error_of(replaced("min = 0\nmax = \"10", 'min = "-1 mA"\nmax = "10')) == (
        "rail.toml: [load] min: -1 mA must not be negative"
    )
    assert error_of(replaced('min = 0\nmax = "10 mA"', 'min = "0 ohm"\nmax = "1 kohm"')) == (
        "rail.toml: [load] min: a load resistance of 0 Ω must be above 0 Ω"
    )


# --- validation messages name the file and key ------------------------------------------


def test_wrong_kind_names_file_section_and_key(in_tmp):
    assert error_of(replaced('min = "11 V"', 'min = "5 mA"')) == (
        "rail.toml: [supply] min: '5 mA' is a current; a voltage is expected"
    )


def test_unknown_section_is_an_error_with_a_suggestion(in_tmp):
    assert error_of(BASE + '\n[suply]\nnominal = "12 V"\n') == (
        "rail.toml: unknown section 'suply' (did you mean 'supply'?); "
        "known: rail, supply, load, ambient, resistor, search"
    )


def test_unknown_key_is_an_error_with_a_suggestion(in_tmp):
    assert error_of(replaced('target = "5 V"', 'target = "5 V"\ntolerence = "1 %"')) == (
        "rail.toml: [rail]: unknown key 'tolerence' (did you mean 'tolerance'?); "
        "known: target, tolerance, min, max, nominal"
    )


def test_a_section_that_is_not_a_table(in_tmp):
    assert error_of('search = 3\n' + BASE) == "rail.toml: 'search' must be a [search] table of keys"


def test_missing_keys_are_listed_with_their_options(in_tmp):
    text = BASE.replace("[ambient]\nmin = 0\nmax = 50\n", "").replace('max = "13 V"\n', "")
    assert error_of(text) == (
        "rail.toml: missing [supply] max, [ambient] min, [ambient] max "
        "(add to the file, or give --supply-max, --ambient-min, --ambient-max)"
    )


def test_missing_keys_without_a_file_name_the_options():
    assert error_of(None, {"rail.target": "5 V"}) == (
        "missing --tolerance, --supply-min, --supply-max, --load-min, --load-max, "
        "--ambient-min, --ambient-max (or give them in a --spec FILE)"
    )
    assert error_of(None, None).startswith("missing --target, --tolerance,")


@pytest.mark.parametrize(
    ("old", "new", "message"),
    [
        ('target = "5 V"', 'target = "0 V"', "[rail] target: 0 V must be above 0 V"),
        ('target = "5 V"', 'target = "12 V"',
         "[rail] target: the target 12 V is not below the least supply 11 V ([supply] min): "
         "a series resistor can only drop voltage"),
        ('tolerance = "3 %"', 'tolerance = "0 %"',
         "[rail] tolerance: 0 V must be above 0 V (e.g. '3 %' or '0.1 V')"),
        ('tolerance = "3 %"', 'tolerance = "-1 %"',
         "[rail] tolerance: -50 mV must be above 0 V (e.g. '3 %' or '0.1 V')"),
        ('tolerance = "3 %"', 'tolerance = "5 V"',
         "[rail] tolerance: 5 V is not below [rail] target (5 V)"),
        ('tolerance = "3 %"', 'tolerance = "100 %"',
         "[rail] tolerance: 100 %: a tolerance must be below 100 % of the target"),
        ('tolerance = "3 %"', 'tolerance = "3 mA"',
         "[rail] tolerance: '3 mA' is a current; a voltage or a percentage is expected"),
        ('min = "11 V"', 'min = "14 V"', "[supply] min: 14 V is above [supply] max (13 V)"),
        ('min = "11 V"', 'min = "-1 V"', "[supply] min: -1 V must be above 0 V"),
        ('max = "13 V"', 'max = "13 V"\nnominal = "14 V"',
         "[supply] nominal: 14 V is outside the supply range 11 V … 13 V"),
        ('min = 0\nmax = "10 mA"', 'min = "20 mA"\nmax = "10 mA"',
         "[load] min: 20 mA is above [load] max (10 mA)"),
        ("min = 0\nmax = 50", "min = 60\nmax = 50", "[ambient] min: 60 °C is above [ambient] max (50 °C)"),
        ("min = 0\nmax = 50", "min = -60\nmax = 50", "[ambient] min: -60 °C is outside -55 °C … 150 °C"),
        ("min = 0\nmax = 50", "min = 0\nmax = 151", "[ambient] max: 151 °C is outside -55 °C … 150 °C"),
        ("min = 0\nmax = 50", 'min = 0\nmax = "300 K"',
         "[ambient] max: '300 K': write the ambient in °C, not kelvin"),
        ("min = 0\nmax = 50", 'min = 0\nmax = "50 V"',
         "[ambient] max: '50 V' is a voltage; a temperature is expected"),
        ('target = "5 V"', "target = true", "[rail] target: expected a number or a quantity text, got true/false"),
        ('target = "5 V"', "target = [5]", "[rail] target: expected a number or a quantity text, got a list"),
        ('target = "5 V"', "target = {v = 5}", "[rail] target: expected a number or a quantity text, got a table"),
        ('target = "5 V"', "target = 1979-05-27", "[rail] target: expected a number or a quantity text, got date"),
        ('target = "5 V"', "target = nan", "[rail] target: nan is not a finite number"),
        ('target = "5 V"', "target = -inf", "[rail] target: -inf is not a finite number"),
        ('target = "5 V"', 'target = "five volts"', "[rail] target: 'five volts' is not a number"),
    ],
)
def test_rail_supply_load_ambient_checks(in_tmp, old, new, message):
    assert error_of(replaced(old, new)) == f"rail.toml: {message}"


@pytest.mark.parametrize(
    ("body", "message"),
    [
        ('series = "E5"', "[resistor] series: unknown series 'E5'; known: E3, E6, E12, E24, E48, E96, E192"),
        ("series = 24", "[resistor] series: expected a series name such as 'E24'"),
        ('tolerance = "0 %"', "[resistor] tolerance: 0 % must be above 0 % and below 50 %"),
        ('tolerance = "50 %"', "[resistor] tolerance: 50 % must be above 0 % and below 50 %"),
        ("tolerance = 1",
         "[resistor] tolerance: 100 % must be above 0 % and below 50 % "
         "(a bare number is a fraction; write '1 %' for percent)"),
        ('tolerance = "1 V"', "[resistor] tolerance: '1 V' is a voltage; a percentage is expected"),
        ('rating = "0 W"', "[resistor] rating: 0 W must be above 0 W"),
        ('rating = "5 mA"', "[resistor] rating: '5 mA' is a current; a power is expected"),
        ('fixed = "0 ohm"', "[resistor] fixed: 0 Ω must be above 0 Ω"),
        ('fixed = "0.5 ohm"', "[resistor] fixed: 500 mΩ is outside 1 Ω … 10 MΩ"),
        ('fixed = "22 Mohm"', "[resistor] fixed: 22 MΩ is outside 1 Ω … 10 MΩ"),
        ('min = "10 kohm"\nmax = "1 kohm"', "[resistor] min: 10 kΩ is above [resistor] max (1 kΩ)"),
        ('min = "2.3 kohm"\nmax = "4.6 kohm"\nseries = "E3"', "[resistor] max: no E3 value lies in 2.3 kΩ … 4.6 kΩ"),
        ('fixed = "100 kohm"\nmax = "47 kohm"',
         "[resistor] fixed: 100 kΩ is outside the range 1 Ω … 47 kΩ ([resistor] max)"),
        ('wattage = "1 W"', "[resistor]: unknown key 'wattage'; known: series, tolerance, rating, fixed, min, max, tcr, "
                             "full_power_ambient, zero_power_ambient"),
    ],
)
def test_resistor_checks(in_tmp, body, message):
    assert error_of(BASE, resistor=body) == f"rail.toml: {message}"


@pytest.mark.parametrize(
    ("body", "message"),
    [
        ("max_parts = 0", "[search] max_parts: 0 must be from 1 to 12"),
        ("max_parts = 13", "[search] max_parts: 13 must be from 1 to 12"),
        ("max_parts = 2.5", "[search] max_parts: '2.5' is not a whole number of parts"),
        ("max_parts = true", "[search] max_parts: 'True' is not a whole number of parts"),
        ('max_parts = "three"', "[search] max_parts: 'three' is not a whole number of parts"),
        ('families = ["zenr"]',
         "[search] families: unknown family 'zenr' (did you mean 'zener'?); "
         "known: signal, rectifier, schottky, led, zener"),
        ("families = []", "[search] families: no family given; leave the key out to allow every family"),
        ("families = [1, 2]", "[search] families: expected a list of family names or a comma-separated text"),
        ('statuses = "approved"', "[search] statuses: statuses apply to an approved-parts list; give --list or [search] list"),
        ('list = "bench"\nstatuses = ["approved", "banned"]',
         "[search] statuses: 'banned' parts may never be designed in; usable: approved, conditional, evaluating"),
        ('list = "bench"\nstatuses = "no-new-design"',
         "[search] statuses: 'no-new-design' parts may never be designed in; usable: approved, conditional, evaluating"),
        ('list = "bench"\nstatuses = "aproved"',
         "[search] statuses: unknown status 'aproved' (did you mean 'approved'?); "
         "known: approved, conditional, evaluating, no-new-design, banned"),
        ('list = ""', "[search] list: expected the name of an approved-parts list"),
        ('list = "a\\u0007b"', "[search] list: 'a\\x07b' is not a usable list name"),
        ('min_current = "-1 mA"', "[search] min_current: -1 mA must not be negative"),
        ('min_current = "1 mV"', "[search] min_current: '1 mV' is a voltage; a current is expected"),
        ('min_margin = "100 %"', "[search] min_margin: 100 % must be from 0 % and below 100 %"),
        ("min_margin = 20",
         "[search] min_margin: 2000 % must be from 0 % and below 100 % "
         "(a bare number is a fraction; write '20 %' for percent)"),
        ("min_margin = -0.1", "[search] min_margin: -10 % must be from 0 % and below 100 %"),
        ('min_margin = "2 W"', "[search] min_margin: '2 W' is a power; a percentage or a fraction is expected"),
    ],
)
def test_search_checks(in_tmp, body, message):
    assert error_of(BASE, search=body) == f"rail.toml: {message}"


def test_families_dedupe_and_accept_a_comma_text(in_tmp):
    spec = spec_from(BASE, search='families = "zener, ZENER,led,"')
    assert spec.families == ("zener", "led")


# --- hostile and broken files -----------------------------------------------------------


def test_invalid_toml_names_the_file_and_line(in_tmp):
    assert error_of('[rail]\ntarget "5 V"\n') == (
        "rail.toml: invalid TOML: Expected '=' after a key in a key/value pair (at line 2, column 8)"
    )


def test_duplicate_section_is_invalid_toml(in_tmp):
    assert error_of(BASE + "[rail]\n") == (
        "rail.toml: invalid TOML: Cannot declare ('rail',) twice (at line 16, column 6)"
    )


def test_oversized_file_is_refused_before_parsing(in_tmp):
    assert error_of(BASE + "#" * 1_000_001 + "\n") == (
        "rail.toml: larger than 1 MB; a spec file is a few lines of TOML"
    )


def test_nul_byte_is_refused_with_its_line(in_tmp):
    assert error_of(BASE.encode() + b"x = 1\x00\n") == (
        "rail.toml: line 16: contains a NUL byte; a spec file is text"
    )


def test_non_utf8_bytes_are_refused_with_their_line(in_tmp):
    assert error_of(b'[rail]\ntarget = "5 \xb5V"\n') == "rail.toml: line 2: not UTF-8 text"


def test_deep_nesting_is_refused(in_tmp):
    assert error_of("x = " + "[" * 50_000) == "rail.toml: invalid TOML: values nested too deeply"


def test_missing_file_and_directory(in_tmp):
    with pytest.raises(SpecError) as caught:
        load_spec("nowhere.toml")
    assert str(caught.value) == "nowhere.toml: no such file"
    (in_tmp / "folder").mkdir()
    with pytest.raises(SpecError) as caught:
        load_spec("folder")
    assert str(caught.value) == "folder: is a folder, not a file"


# --- overrides --------------------------------------------------------------------------


def test_overrides_replace_file_values(in_tmp):
    spec = load_spec(
        write(BASE),
        {
            "rail.target": "3.3V",
            "supply.min": 10,
            "resistor.fixed": "2k2",
            "search.families": "zener",
            "search.max_parts": "5",
            "load.max": None,  # not given: the file's value stays
        },
    )
    assert spec.target_v == 3.3 and spec.tolerance_v == 3.3 * 3 / 100
    assert spec.supply_min_v == 10.0
    assert spec.resistor_fixed_ohm == 2200.0
    assert spec.families == ("zener",)
    assert spec.max_parts == 5
    assert spec.load_max == 0.01


def test_override_errors_name_the_option(in_tmp):
    path = write(BASE)
    assert error_of_path(path, {"supply.min": "5 mA"}) == "--supply-min: '5 mA' is a current; a voltage is expected"
    assert error_of_path(path, {"supply.max": "10 V"}) == "--supply-max: 10 V is below [supply] min (11 V)"
    assert error_of_path(path, {"supply.min": "4 V"}) == (
        "--supply-min: the least supply 4 V is not above the target 5 V ([rail] target): "
        "a series resistor can only drop voltage"
    )
    assert error_of_path(path, {"load.kind": "resistance"}) == (
        "--load-kind: 'resistance' contradicts [load] max '10 mA', a current"
    )
    assert error_of_path(path, {"search.statuses": "banned"}) == (
        "--statuses: 'banned' parts may never be designed in; usable: approved, conditional, evaluating"
    )


def error_of_path(path, overrides) -> str:
    with pytest.raises(SpecError) as caught:
        load_spec(path, overrides)
    return str(caught.value)


def test_unknown_override_key_is_refused():
    assert error_of(None, {"rail.targt": "5 V"}).startswith(
        "unknown spec override 'rail.targt' (did you mean 'rail.target'?); known: rail.target,"
    )


def test_every_key_has_an_option_and_required_keys_exist():
    assert set(REQUIRED_KEYS) <= set(OPTION_FOR_KEY)
    assert len(set(OPTION_FOR_KEY.values())) == len(OPTION_FOR_KEY)
    assert all(option.startswith("--") for option in OPTION_FOR_KEY.values())


# --- cautions ---------------------------------------------------------------------------


def test_supply_above_60_v_draws_a_caution():
    # IEC 62368-1:2018, Table 4: 60 V DC is the ES1 limit.
    assert spec_cautions(load_spec(None, {**OPTIONS_ONLY, "supply.max": "60 V"})) == []
    cautions = spec_cautions(load_spec(None, {**OPTIONS_ONLY, "supply.max": "72 V"}))
    assert cautions == [
        "the supply reaches 72 V, above the 60 V DC ES1 limit of IEC 62368-1: "
        "follow local codes and licensed practice for hazardous voltages"
    ]


# --- fuzz: whatever arrives, one SpecError line or a spec -------------------------------

_FUZZ = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])


@_FUZZ
@given(data=st.binary(max_size=300))
def test_any_bytes_give_a_spec_or_one_error_line(in_tmp, data):
    try:
        load_spec(write(data))
    except SpecError as error:
        assert "\n" not in str(error) and str(error).startswith("rail.toml: ")


@_FUZZ
@given(key=st.sampled_from(list(OPTION_FOR_KEY)), value=st.one_of(st.text(max_size=30), st.floats(), st.integers()))
def test_any_override_gives_a_spec_or_one_error_line(key, value):
    try:
        load_spec(None, {**OPTIONS_ONLY, key: value})
    except SpecError as error:
        assert "\n" not in str(error)
        assert str(error).startswith(OPTION_FOR_KEY[key] + ": ") or "--" in str(error)


def test_a_kiloampere_load_is_taken_for_a_typo_of_ohms():
    # common practice (no source): a diode-stack rail carries milliamps, never 1 kA.
    with pytest.raises(SpecError) as error:
        load_spec(None, {"rail.target": "5 V", "rail.tolerance": "3 %", "supply.min": "11 V",
                         "supply.max": "13 V", "load.min": "0", "load.max": "1k",
                         "ambient.min": "0", "ambient.max": "50"})
    assert str(error.value) == "--load-max: 1 kA is above 100 A: for a resistive load write ohms, e.g. '1 kohm'"
