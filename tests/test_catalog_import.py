"""Parts CSV reading, validation, import planning, and export → import round trips."""

from __future__ import annotations

import hashlib
import math

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from selector.catalog.part_validation import RULES
from selector.catalog.parts_export import EXPORT_COLUMNS, write_parts_csv
from selector.catalog.parts_import import load_parts_csv, parse_column_settings
from selector.errors import InputDataError, OptionError

HEADER = "part,family,description,is_a,n,rs_ohm,pd_w,vz_v,izt_a,zzt_ohm,izk_a,zzk_ohm,tc_v_per_k\n"
GOOD_ROWS = (
    "D-T1,signal,test diode,2.5 nA,1.9,600m,500 mW,,,,,,\n"
    "Z-T1,zener,test zener,,,,0.5,5.1 V,5m,14,1mA,150,-1.8 mV/K\n"
)


def write(tmp_path, text: str, name: str = "parts.csv", encoding: str = "utf-8"):
    path = tmp_path / name
    path.write_bytes(text.encode(encoding))
    return path


def test_quantities_in_cells_are_read_in_si_units(tmp_path):
    parts = load_parts_csv(write(tmp_path, HEADER + GOOD_ROWS))
    diode, zener = parts.records
    assert diode["is_a"] == 2.5e-9
    assert diode["rs_ohm"] == 0.6
    assert diode["pd_w"] == 0.5
    assert zener["izk_a"] == 1e-3
    assert zener["tc_v_per_k"] == -0.0018
    assert diode["eg_ev"] is None  # empty = not given; defaults are applied later
    assert parts.warnings == []


def test_every_error_is_reported_with_file_line_and_column(tmp_path):
    text = (
        "part,family,is_a,n,pd_w,izt_a,izk_a,zzt_ohm,zzk_ohm,vz_v,tj_max_c\n"
        "D-A1,signal,2n,5,5 mA,,,,,,\n"
        "D-A1,diac,1n,1.5,0.5,,,,,,\n"
        "X+Y,zener,,,0.5,1m,5m,10,5,5.1,\n"
        ",signal,-1n,1,0.3,,,,,,25\n"
        "Z-B,zener,,,0.5,,1m,10,50,,150\n"
    )
    path = write(tmp_path, text)
    with pytest.raises(InputDataError) as caught:
        load_parts_csv(path)
    assert str(caught.value).splitlines() == [
        f"{path}:2: n: must be at most 4, not 5",
        f"{path}:2: pd_w: '5 mA' is a current; a power is expected",
        f"{path}:3: part: 'D-A1' appears twice (first on line 2)",
        f"{path}:3: family: unknown family 'diac'; expected one of signal, rectifier, schottky, led, zener",
        f"{path}:4: part: 'X+Y' is not a part id (1–64 letters, digits or . _ - /, starting with a letter or digit)",
        f"{path}:4: izk_a: knee current 5 mA must be below izt_a 1 mA",
        f"{path}:4: zzk_ohm: knee impedance 5 Ω must be at least zzt_ohm 10 Ω",
        f"{path}:5: part: missing",
        f"{path}:5: is_a: must be positive, not -1 nA",
        f"{path}:5: tj_max_c: must be above 25 °C, not 25 °C",
        f"{path}:6: vz_v: required for family zener",
        f"{path}:6: izt_a: required for family zener",
    ]


@pytest.mark.parametrize(
    ("column", "cell", "message"),
    [
        ("n", "0.9", "must be at least 1, not 0.9"),
        ("n", "4.01", "must be at most 4, not 4.01"),
        ("is_a", "0", "must be positive, not 0 A"),
        ("if_max_a", "-1", "must be positive, not -1 A"),
        ("i_min_a", "-1m", "must not be negative, not -1 mA"),
        ("pd_w", "2 V", "'2 V' is a voltage; a power is expected"),
        ("rs_ohm", "abc", "'abc' is not a number"),
        ("tj_max_c", "20", "must be above 25 °C, not 20 °C"),
        ("eg_ev", "nan", "'nan' is not a finite number"),
    ],
)
def test_one_bad_cell_names_its_column(tmp_path, column, cell, message):
    cells = {"part": "D-1", "family": "signal", "is_a": "1n", "n": "2", "pd_w": "0.5", column: cell}
    path = write(tmp_path, ",".join(cells) + "\n" + ",".join(cells.values()) + "\n")
    with pytest.raises(InputDataError) as caught:
        load_parts_csv(path)
    assert str(caught.value) == f"{path}:2: {column}: {message}"


def test_required_fields_per_family(tmp_path):
    # The file lacks the columns, so a part already in the library would keep its values
    # (DESIGN §4): the check of these new parts comes at the import, against the library.
    from selector.catalog.store import open_library

    path = write(tmp_path, "part,family,pd_w\nD-1,led,0.1\nZ-1,zener,0.5\n")
    parts_file = load_parts_csv(path)
    library = open_library(str(tmp_path / "empty.sqlite"), notify=lambda line: None)
    with pytest.raises(InputDataError) as caught:
        library.import_parts_file(parts_file)
    assert library.part_records() == []
    library.close()
    lines = str(caught.value).splitlines()
    assert lines[:2] == [f"{path}:2: is_a: required for family led", f"{path}:2: n: required for family led"]
    # DESIGN §3 v2: an LED must also give its band gap and Tjmax, and the message says why.
    assert lines[2:4] == [
        f"{path}:2: eg_ev: required for family led (an LED's band gap sets its tempco; silicon's default 1.11 eV "
        "gives it the wrong sign)",
        f"{path}:2: tj_max_c: required for family led (LEDs are rated far below the 150 °C default)",
    ]
    assert [line.split(": ")[1] for line in lines[4:]] == ["vz_v", "izt_a", "zzt_ohm", "izk_a", "zzk_ohm"]


def test_a_required_column_present_but_empty_is_refused_when_read(tmp_path):
    path = write(tmp_path, "part,family,is_a,n,pd_w\nD-1,signal,,1.8,0.1\n")
    with pytest.raises(InputDataError) as caught:
        load_parts_csv(path)
    assert str(caught.value) == f"{path}:2: is_a: required for family signal"


def test_a_knee_steeper_than_any_real_zeners_is_refused(tmp_path):
    # m = ln(zzk/zzt)/ln(izt/izk) = ln(2000/10)/ln(2) ≈ 7.6, above the limit of 4.
    path = write(tmp_path, "part,family,pd_w,vz_v,izt_a,zzt_ohm,izk_a,zzk_ohm\nZ-S,zener,0.5,5.1,5m,10,2.5m,2000\n")
    with pytest.raises(InputDataError) as caught:
        load_parts_csv(path)
    assert str(caught.value) == (
        f"{path}:2: zzk_ohm: knee exponent ln(zzk/zzt)/ln(izt/izk) = 7.64 is above 4: no real zener's impedance "
        "rises that steeply below its test current (check zzk_ohm and izk_a)"
    )


def test_suspect_derived_figures_are_warned_naming_the_part(tmp_path):
    # An LED given silicon's band gap has a positive tempco (common practice, no source: a
    # forward junction's is negative); a zener whose power-law curve reaches 0 V at 36 µA,
    # far above izk/100 (DESIGN §3 v2 curve).
    path = write(tmp_path, "part,family,is_a,n,pd_w,eg_ev,tj_max_c,vz_v,izt_a,zzt_ohm,izk_a,zzk_ohm\n"
                           "D-L,led,1e-18,2.0,0.1,1.11,100,,,,,\nZ-K,zener,,,0.5,,,5.1,5m,14,1m,270\n")  # fmt: skip
    warnings = load_parts_csv(path).warnings
    assert len(warnings) == 2
    assert warnings[0].startswith(f"{path}: D-L: Vf tempco at 1 mA and 25 °C is +")
    assert warnings[1].startswith(f"{path}: Z-K: its modelled curve reaches 0 V at 36.4 µA, above izk/100")


def test_unknown_columns_are_warned_not_fatal(tmp_path):
    path = write(tmp_path, "part,family,is_a,n,pd_w,Colour\nD-1,signal,2e-9,1.9,0.1,red\n")
    parts = load_parts_csv(path)
    assert parts.warnings == [f"{path}:1: colour: not a parts column; ignored"]
    assert len(parts.records) == 1


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("", "{path}:1: no header row; the first row must name the columns"),
        ("part,n\nD-1,2\n", "{path}:1: family: column missing"),
        ("part,family,n,n\n", "{path}:1: n: column appears twice"),
        ("part,family,n\nD-1,signal,2,3\n", "{path}:2: row has 4 cells, the header names 3"),
    ],
)
def test_malformed_files_answer_in_one_line(tmp_path, text, message):
    path = write(tmp_path, text)
    with pytest.raises(InputDataError) as caught:
        load_parts_csv(path)
    assert str(caught.value) == message.format(path=path)


def test_non_utf8_missing_and_folder_inputs(tmp_path):
    latin = write(tmp_path, "part,family,description\nD-1,signal,50 \u00b5A\n", encoding="latin-1")
    with pytest.raises(InputDataError, match=r"not UTF-8 text \(byte \d+\); save the file as UTF-8 CSV"):
        load_parts_csv(latin)
    with pytest.raises(InputDataError, match="no such file"):
        load_parts_csv(tmp_path / "absent.csv")
    with pytest.raises(InputDataError, match="is a folder, not a file"):
        load_parts_csv(tmp_path)


def test_empty_trailing_header_cells_are_ignored(tmp_path):
    parts = load_parts_csv(write(tmp_path, "part,family,is_a,n,pd_w,,\nD-1,signal,2n,1.9,0.5,,\n"))
    assert [record["part"] for record in parts.records] == ["D-1"] and parts.warnings == []


def test_byte_order_mark_semicolons_and_blank_rows(tmp_path):
    text = "\ufeffpart;family;is_a;n;pd_w\n\nD-1;signal;2n;1.9;0.5\n;;;;\n"
    parts = load_parts_csv(write(tmp_path, text))
    assert [record["part"] for record in parts.records] == ["D-1"]


def test_control_characters_in_text_are_refused(tmp_path):
    path = write(tmp_path, 'part,family,is_a,n,pd_w,description\nD-1,signal,2n,1.9,0.5,"a\x07b"\n')
    with pytest.raises(InputDataError) as caught:
        load_parts_csv(path)
    assert str(caught.value) == f"{path}:2: description: holds a control character"


def test_family_is_case_insensitive_and_formula_prefix_is_removed(tmp_path):
    path = write(tmp_path, "part,family,is_a,n,pd_w,description\nD-1,Signal,2n,1.9,0.5,'=cheap\n")
    (record,) = load_parts_csv(path).records
    assert record["family"] == "signal"
    assert record["description"] == "=cheap"


def test_column_settings():
    assert parse_column_settings(["pd_w=500m", " Family = zener"]) == {"pd_w": "500m", "family": "zener"}
    with pytest.raises(OptionError, match=r"^--set: 'pd_w' is not COLUMN=VALUE, e.g. pd_w=500m$"):
        parse_column_settings(["pd_w"])
    with pytest.raises(OptionError, match=r"^--set: 'colour' is not a parts column$"):
        parse_column_settings(["colour=red"])


# Import into a library -----------------------------------------------------------------


def test_invalid_file_writes_nothing(tmp_path, demo_library):
    before = demo_library.part_records()
    path = write(tmp_path, HEADER + GOOD_ROWS + "D-T2,signal,,,,,,,,,,,\n")
    with pytest.raises(InputDataError):
        load_parts_csv(path)
    assert demo_library.part_records() == before
    assert len(demo_library.import_history()) == 1  # only the demo sets


def test_reimport_changes_nothing_and_changed_rows_are_updated(tmp_path, empty_library):
    path = write(tmp_path, HEADER + GOOD_ROWS)
    first = empty_library.import_parts_file(load_parts_csv(path))
    assert first.summary() == "2 added, 0 changed, 0 unchanged"
    records_after_first = empty_library.part_records()
    again = empty_library.import_parts_file(load_parts_csv(path))
    assert again.summary() == "0 added, 0 changed, 2 unchanged"
    assert empty_library.part_records() == records_after_first

    edited = write(tmp_path, HEADER + GOOD_ROWS.replace("500 mW", "250 mW"), "edited.csv")
    plan = empty_library.import_parts_file(load_parts_csv(edited), dry_run=True)
    assert plan.lines() == ["change D-T1: pd_w: 0.5 \u2192 0.25", "unchanged: Z-T1"]
    assert empty_library.part_record("D-T1")["pd_w"] == 0.5  # dry run wrote nothing
    empty_library.import_parts_file(load_parts_csv(edited))
    assert empty_library.part_record("D-T1")["pd_w"] == 0.25

    log = empty_library.import_history()
    assert [(entry["rows_added"], entry["rows_changed"], entry["rows_unchanged"]) for entry in log] == [
        (2, 0, 0),
        (0, 0, 2),
        (0, 1, 1),
    ]
    assert log[0]["file_sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    assert log[2]["file_name"] == str(edited)
    assert log[0]["kind"] == "parts csv"


def test_dry_run_lists_additions(tmp_path, empty_library):
    plan = empty_library.import_parts_file(load_parts_csv(write(tmp_path, HEADER + GOOD_ROWS)), dry_run=True)
    assert plan.lines() == ["add D-T1 (signal)", "add Z-T1 (zener)"]
    assert empty_library.part_records() == []
    assert empty_library.import_history() == []


def test_export_then_import_is_lossless(tmp_path, demo_library):
    exported = tmp_path / "export.csv"
    write_parts_csv(exported, demo_library.part_records())
    header = exported.read_text(encoding="utf-8").splitlines()[0].split(",")
    assert tuple(header) == EXPORT_COLUMNS
    plan = demo_library.import_parts_file(load_parts_csv(exported), dry_run=True)
    assert plan.added == [] and plan.changed == []
    assert len(plan.unchanged) == len(demo_library.part_records())


_finite_positive = st.floats(min_value=1e-300, max_value=0.999, allow_nan=False, allow_infinity=False)
_text = st.text(
    alphabet=st.characters(min_codepoint=32, max_codepoint=0x2FFF, exclude_categories=("Cc", "Cs", "Zl", "Zp")), max_size=40
).map(str.strip)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(is_a=_finite_positive, n=st.floats(min_value=1.0, max_value=4.0), description=_text,
       tc=st.floats(min_value=-1.0, max_value=1.0))
def test_export_import_round_trip_is_exact_for_any_float_and_text(tmp_path, is_a, n, description, tc):
    record = {column: None for column in EXPORT_COLUMNS}
    record.update(part="D-R1", family="signal", description=description, package="=pkg", source="+src",
                  is_a=is_a, n=n, pd_w=0.5, tc_v_per_k=tc)
    path = tmp_path / "round.csv"
    write_parts_csv(path, [record])
    (back,) = load_parts_csv(path).records
    for column in ("is_a", "n", "pd_w", "tc_v_per_k"):
        assert back[column] == record[column] and not math.isnan(back[column])
    assert (back["description"], back["package"], back["source"]) == (description, "=pkg", "+src")


def test_rules_cover_every_numeric_column_with_its_kind():
    from selector.spec import units

    assert RULES["tc_v_per_k"].kind is units.VOLTAGE_TEMPCO
    assert RULES["theta_ja_k_per_w"].kind is units.THERMAL_RESISTANCE
    assert RULES["vz_tol_pct"].kind is units.PERCENT
    assert RULES["n"].kind is units.DIMENSIONLESS and RULES["xti"].kind is units.DIMENSIONLESS


def test_control_characters_are_escaped_in_messages(tmp_path):
    path = write(tmp_path, "part,family,is_a,n,pd_w\nD\x001,sig\x1bnal,1n,2,0.5\n")
    with pytest.raises(InputDataError) as caught:
        load_parts_csv(path)
    assert "'D\\x001' is not a part id" in str(caught.value)
    assert "unknown family 'sig\\x1bnal'" in str(caught.value)
    assert "\x00" not in str(caught.value) and "\x1b" not in str(caught.value)
