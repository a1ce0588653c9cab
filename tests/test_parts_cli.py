"""The ``init`` and ``parts`` commands through click's CliRunner: output, errors, exit codes."""

from __future__ import annotations

import click
import pytest

from selector.catalog.library_location import default_library_path
from selector.catalog.schema_revision import head_revision
from selector.catalog.store import open_library
from selector.cli import main
from selector.spec.stack_notation import part_id_order

GOOD = "part,family,is_a,n,pd_w,description\nD-T1,signal,2.5n,1.9,500m,test diode\n"


def all_commands(group: click.Group, prefix=()):
    context = click.Context(group)
    for name in group.list_commands(context):
        command = group.get_command(context, name)
        yield (*prefix, name), command
        if isinstance(command, click.Group):
            yield from all_commands(command, (*prefix, name))


def test_every_command_has_help_with_an_example(run_cli):
    commands = list(all_commands(main))
    assert {("init",), ("parts",), ("parts", "list"), ("parts", "show"), ("parts", "import"),
            ("parts", "import-cards"), ("parts", "fit"), ("parts", "export"),
            ("parts", "remove")} <= {path for path, _ in commands}
    for path, _ in [((), main), *commands]:
        result = run_cli(*path, "--help")
        assert result.exit_code == 0, path
        assert "Example" in result.stdout, path


def test_default_library_is_created_with_demo_sets_and_says_so_on_stderr(run_cli):
    result = run_cli("parts", "list", "--family", "led")
    assert result.exit_code == 0
    path = default_library_path()
    assert result.stderr.startswith(f"created the library {path} with the invented demo sets (")
    assert "D-LEDR1" in result.stdout and "Z5V1-A" not in result.stdout
    again = run_cli("parts", "list")
    assert again.stderr == "" and "Z39V-B" in again.stdout


def test_explicit_db_starts_empty_and_env_var_is_honoured(run_cli, library_path, monkeypatch):
    result = run_cli("--db", library_path, "parts", "list")
    assert result.exit_code == 0
    assert result.stdout == "no parts\n"
    assert result.stderr == f"created an empty library {library_path}\n"
    monkeypatch.setenv("RAILWRIGHT_DB", str(library_path))
    assert run_cli("parts", "list").stderr == ""
    assert not default_library_path().exists()


def test_init_demo(run_cli, library_path):
    result = run_cli("--db", library_path, "init", "--demo")
    assert result.exit_code == 0
    assert result.stdout == f"library {library_path} ready (schema revision {head_revision()})\n"
    again = run_cli("--db", library_path, "init", "--demo")
    assert again.stdout.startswith("demo sets: 0 added, 74 already in the library kept as they are\n")
    assert len(open_library(str(library_path)).part_records()) >= 72


def test_import_reports_every_error_and_writes_nothing(run_cli, library_path, tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("part,family,is_a,n,pd_w\nD-1,signal,2n,5,0.5\nD-2,signal,2n,2,5 mA\n")
    result = run_cli("--db", library_path, "parts", "import", bad)
    assert result.exit_code == 1
    assert result.stderr == (
        f"Error: {bad}:2: n: must be at most 4, not 5\n"
        f"{bad}:3: pd_w: '5 mA' is a current; a power is expected\n"
    )
    assert open_library(str(library_path)).part_records() == []


def test_import_dry_run_then_import_then_reimport(run_cli, library_path, tmp_path):
    good = tmp_path / "good.csv"
    good.write_text(GOOD + "D-T2,signal,2e-9,1.9,0.1,x\n")
    dry = run_cli("--db", library_path, "parts", "import", good, "--dry-run")
    assert dry.exit_code == 0
    assert dry.stdout == (
        "add D-T1 (signal)\nadd D-T2 (signal)\n"
        f"dry run, nothing written: {good}: 2 added, 0 changed, 0 unchanged\n"
    )
    assert open_library(str(library_path)).part_records() == []
    real = run_cli("--db", library_path, "parts", "import", good)
    assert real.stdout == f"imported {good}: 2 added, 0 changed, 0 unchanged\n"
    good.write_text(GOOD.replace("500m", "250m"))
    change = run_cli("--db", library_path, "parts", "import", good, "--dry-run")
    assert change.stdout.splitlines()[0] == "change D-T1: pd_w: 0.5 \u2192 0.25"
    run_cli("--db", library_path, "parts", "import", good)
    reopened = open_library(str(library_path))
    assert reopened.part_record("D-T1")["pd_w"] == 0.25
    assert reopened.part_record("D-T2")["pd_w"] == 0.1  # not in the file: left alone


def test_unknown_columns_warn_on_stderr(run_cli, empty_library, library_path, tmp_path):
    path = tmp_path / "extra.csv"
    path.write_text("part,family,is_a,n,pd_w,colour\nD-1,signal,2e-9,1.9,0.1,red\n")
    result = run_cli("--db", library_path, "parts", "import", path)
    assert result.exit_code == 0
    assert result.stderr == f"Warning: {path}:1: colour: not a parts column; ignored\n"


def test_show_lists_parameters_with_units_and_derived_values(run_cli, library_path):
    run_cli("--db", library_path, "init", "--demo")
    result = run_cli("--db", library_path, "parts", "show", "D-SIG1")
    assert result.exit_code == 0
    lines = {line.split("  ")[0]: line.split("  ")[-1].strip() for line in result.stdout.splitlines()}
    assert lines["is_a"] == "2.19 nA" and lines["pd_w"] == "500 mW"
    assert lines["derived θJA"] == "300 K/W"
    assert lines["Vf at 1 mA, 25 °C"] == "620.01 mV"
    assert "Vf at 10 mA, 25 °C" in lines
    zener = run_cli("--db", library_path, "parts", "show", "Z4V7-B").stdout
    assert "Vz at Izt (12 mA), 25 °C                   4.7 V" in zener
    assert "derived θJA                                104.2 K/W" in zener
    # DESIGN §3 v2: m = ln(zzk/zzt)/ln(izt/izk) = ln(170/14.1)/ln(10), and the power law
    # zzt·(I/izt)^(−m) gives back both datasheet points.
    assert "knee exponent m = ln(zzk/zzt)/ln(izt/izk)  1.081" in zener
    assert "modelled impedance at izk (1.2 mA)         170 Ω" in zener
    assert "modelled impedance at izt (12 mA)          14.1 Ω" in zener
    missing = run_cli("--db", library_path, "parts", "show", "NOPE")
    assert missing.exit_code == 1
    assert missing.stderr == f"Error: unknown part 'NOPE' (not in the library {library_path})\n"


def test_list_orders_numbers_in_ids_by_value(run_cli, library_path):
    run_cli("--db", library_path, "init", "--demo")
    rows = run_cli("--db", library_path, "parts", "list", "--family", "zener").stdout.splitlines()[1:]
    ids = [row.split()[0] for row in rows]
    assert ids[:3] == ["Z2V4-A", "Z2V4-B", "Z2V7-A"]
    assert ids.index("Z9V1-B") + 1 == ids.index("Z10V-A")


def test_part_id_order_takes_digit_runs_by_value_without_converting_them():
    ids = ["Z10V-A", "Z2V4-A", "D-02", "D-1", "D-10", "X" + "9" * 5000, "X" + "1" + "0" * 5000, "X9"]
    assert sorted(ids, key=part_id_order) == ["D-1", "D-02", "D-10", "X9", "X" + "9" * 5000, "X1" + "0" * 5000,
                                            "Z2V4-A", "Z10V-A"]  # fmt: skip


def test_list_csv_export_and_remove(run_cli, library_path, tmp_path):
    run_cli("--db", library_path, "init", "--demo")
    listed = tmp_path / "zeners.csv"
    result = run_cli("--db", library_path, "parts", "list", "--family", "zener", "--csv", listed)
    assert result.exit_code == 0 and result.stderr == f"wrote 60 parts to {listed}\n"
    stdout_csv = run_cli("--db", library_path, "parts", "list", "--family", "schottky", "--csv", "-").stdout
    assert stdout_csv.splitlines()[0].startswith("part,family,description,package,is_a,n,")
    assert len(stdout_csv.splitlines()) == 4
    exported = tmp_path / "all.csv"
    assert run_cli("--db", library_path, "parts", "export", exported).exit_code == 0
    removed = run_cli("--db", library_path, "parts", "remove", "D-SIG1")
    assert removed.stdout == f"removed D-SIG1 from {library_path}\n"
    again = run_cli("--db", library_path, "parts", "remove", "D-SIG1")
    assert again.exit_code == 1 and again.stderr.startswith("Error: unknown part 'D-SIG1'")
    back = run_cli("--db", library_path, "parts", "import", exported)
    assert back.stdout.endswith(": 1 added, 0 changed, 73 unchanged\n")


def test_import_cards_command(run_cli, empty_library, library_path, tmp_path):
    cards = tmp_path / "shop.lib"
    cards.write_text(".model D-C1 D(IS=2.5n N=1.8 RS=0.6 CJO=2p)\n")
    result = run_cli("--db", library_path, "parts", "import-cards", cards, "--family", "signal",
                     "--set", "pd_w=500m")
    assert result.exit_code == 0
    assert result.stderr == f"Warning: {cards}:1: D-C1: CJO not used (kept as text)\n"
    assert open_library(str(library_path)).part_record("D-C1")["is_a"] == 2.5e-9
    no_family = run_cli("--db", library_path, "parts", "import-cards", cards)
    assert no_family.exit_code == 1
    assert no_family.stderr == f"Error: {cards}:1: D-C1: family: not given; use --family or a ratings CSV\n"


def test_fit_command_stores_the_fit(run_cli, library_path):
    result = run_cli("--db", library_path, "parts", "fit", "D-F1", "--family", "signal", "--set", "pd_w=250m",
                     "--point", "0.72 V @ 10 mA", "--point", "0.60 V @ 1 mA")
    assert result.exit_code == 0, result.stderr
    lines = result.stdout.splitlines()
    assert lines[0].startswith("fit of D-F1: is_a = ")
    assert lines[1].startswith("  600 mV @ 1 mA") and "residual" in lines[1]
    assert lines[-1] == "imported D-F1: 1 added, 0 changed, 0 unchanged"
    record = open_library(str(library_path)).part_record("D-F1")
    assert record["rs_ohm"] == 0.0 and record["tnom_c"] == 25.0 and 1 <= record["n"] <= 4


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["parts", "fit", "D-F1", "--point", "0.6 V @ 1 mA", "--point", "0.7 V @ 10 mA"],
         "Error: --family: D-F1 is not in the library; give its family and ratings (--set pd_w=...)\n"),
        (["parts", "fit", "D-F1", "--family", "signal", "--point", "0.6 V", "--point", "0.7 @ 2m"],
         "Error: --point: '0.6 V' is not VOLTAGE @ CURRENT, e.g. '0.62 V @ 1 mA'\n"),
        (["parts", "fit", "D-F1", "--family", "signal", "--point", "0.6 V @ 1 V", "--point", "0.7 @ 2m"],
         "Error: --point: '0.6 V @ 1 V': '1 V' is a voltage; a current is expected\n"),
        (["parts", "fit", "D-F1", "--family", "signal", "--point", "0.6 @ 1m"],
         "Error: --point: give two or three points, not 1\n"),
        (["parts", "import-cards", "x.lib", "--set", "colour=red"],
         "Error: --set: 'colour' is not a parts column\n"),
    ],
)
def test_usage_errors_exit_2_with_one_line(run_cli, empty_library, library_path, args, message):
    result = run_cli("--db", library_path, *args)
    assert result.exit_code == 2
    assert result.stderr == message


def test_bad_library_file_is_named(run_cli, tmp_path):
    junk = tmp_path / "junk.sqlite"
    junk.write_text("this is not a database file, it is text\n")
    result = run_cli("--db", junk, "parts", "list")
    assert result.exit_code == 1
    assert result.stderr == f"Error: {junk}: not a railwright library (not an SQLite database file)\n"


def test_missing_import_file_is_one_line(run_cli, library_path, tmp_path):
    result = run_cli("--db", library_path, "parts", "import", tmp_path / "nope.csv")
    assert result.exit_code == 1
    assert result.stderr == f"Error: {tmp_path / 'nope.csv'}: no such file\n"


def test_remove_records_who_and_why_in_history(run_cli, library_path):
    run_cli("--db", library_path, "init", "--demo")
    removed = run_cli("--db", library_path, "parts", "remove", "D-SIG2", "--reason", "replaced by D-SIG1", "--by", "A. Tester")
    assert removed.exit_code == 0
    history = run_cli("--db", library_path, "history", "D-SIG2").stdout.splitlines()
    assert "A. Tester  part removed  D-SIG2:" in history[-1]
    assert history[-1].endswith("why: replaced by D-SIG1")
