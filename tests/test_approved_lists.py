"""Approved-parts lists through the library API, on every backend: statuses, reasons,
conditions, usability, the list CSV, removal of listed parts, and the revision-2 upgrade."""

from __future__ import annotations

from datetime import UTC, datetime

import numpy as np
import pytest
from alembic import command
from sqlalchemy import MetaData, Table, create_engine, insert, inspect, select

from selector.catalog import approved_lists as lists
from selector.catalog import list_changes as changes
from selector.catalog.approved_list_csv import (
    EXPORT_COLUMNS,
    import_list_file,
    load_list_csv,
    parse_list_csv,
    write_list_csv,
)
from selector.catalog.audit import history
from selector.catalog.models import ImportLog, Part
from selector.catalog.parts_import import load_parts_csv
from selector.catalog.resources import demo_csv_path
from selector.catalog.schema_revision import alembic_config, head_revision
from selector.catalog.store import open_library
from selector.errors import InputDataError, LibraryError, OptionError, UnknownPartError


@pytest.fixture
def line_a(backend_library):
    changes.create_list(backend_library, "line-a", description="12 V boards (invented)", by="A. Tester")
    return backend_library


def _set(library, part, status, condition=None, reason="test reason"):
    return changes.set_status(library, "line-a", part, status, reason=reason, by="A. Tester", condition=condition)


def test_each_status_is_kept_with_reason_condition_and_signer(line_a):
    _set(line_a, "Z5V1-A", "approved")
    _set(line_a, "D-SIG1", "conditional", condition="only below 40 °C ambient")
    _set(line_a, "D-SIG2", "evaluating")
    _set(line_a, "D-REC1", "no-new-design")
    _set(line_a, "D-REC2", "banned")
    rows = {row["part"]: row for row in lists.list_entries(line_a, "line-a")}
    assert {part: row["status"] for part, row in rows.items()} == {
        "Z5V1-A": "approved", "D-SIG1": "conditional", "D-SIG2": "evaluating",
        "D-REC1": "no-new-design", "D-REC2": "banned",
    }
    assert rows["D-SIG1"]["condition"] == "only below 40 °C ambient"
    assert rows["Z5V1-A"]["by"] == "A. Tester" and rows["Z5V1-A"]["reason"] == "test reason"
    assert rows["Z5V1-A"]["since"].endswith("+00:00")
    assert [row["part"] for row in lists.list_entries(line_a, "line-a", "banned")] == ["D-REC2"]


def test_usable_parts_follow_the_statuses(line_a):
    _set(line_a, "Z5V1-A", "approved")
    _set(line_a, "D-SIG1", "conditional", condition="only below 40 °C ambient")
    _set(line_a, "D-SIG2", "evaluating")
    _set(line_a, "D-REC1", "no-new-design")
    _set(line_a, "D-REC2", "banned")
    parts = line_a.load_partset()
    view = lists.list_view(line_a, parts, "line-a")
    usable = set(parts.part[view.usable])
    assert usable == {"Z5V1-A", "D-SIG1"}
    assert view.condition[list(parts.part).index("D-SIG1")] == "only below 40 °C ambient"
    assert set(parts.part[lists.list_view(line_a, parts, "line-a", ["approved", "evaluating"]).usable]) == {
        "Z5V1-A", "D-SIG2"}
    assert list(line_a.load_partset(list_name="line-a").part) == ["D-SIG1", "Z5V1-A"]
    assert list(line_a.load_partset(["zener"], list_name="line-a").part) == ["Z5V1-A"]
    position = list(parts.part).index("D-REC2")
    assert view.unusable_message(position, "D-REC2") == "D-REC2 is banned on the list 'line-a': test reason"
    other = list(parts.part).index("Z39V-B")
    assert view.unusable_message(other, "Z39V-B") == "Z39V-B is not on the list 'line-a'"
    for never in ("banned", "no-new-design"):
        with pytest.raises(OptionError, match=f"'{never}' parts may never be designed in"):
            lists.list_view(line_a, parts, "line-a", [never])


@pytest.mark.parametrize(
    ("status", "reason", "condition", "message"),
    [
        ("aproved", "x", None,
         "STATUS: 'aproved' is not a list status; expected one of approved, conditional, evaluating, "
         "no-new-design, banned"),
        ("approved", None, None, "--reason: missing; every status change needs a reason"),
        ("approved", "   ", None, "--reason: missing; every status change needs a reason"),
        ("conditional", "x", None, "--condition: missing; a conditional part needs its condition of use"),
        ("banned", "x", "only on Sundays", "--condition: only a conditional part carries a condition, not a banned one"),
        ("approved", "two\nlines", None, "--reason: holds a control character; write it on one line"),
    ],
)
def test_bad_status_changes_are_refused_and_write_nothing(line_a, status, reason, condition, message):
    before = history(line_a)
    with pytest.raises(OptionError) as caught:
        changes.set_status(line_a, "line-a", "Z5V1-A", status, reason=reason, condition=condition)
    assert str(caught.value) == message
    assert lists.list_entries(line_a, "line-a") == [] and history(line_a) == before


def test_unknown_list_and_part_are_named(line_a):
    with pytest.raises(lists.UnknownListError) as caught:
        changes.set_status(line_a, "line-b", "Z5V1-A", "approved", reason="x")
    assert str(caught.value) == (
        "unknown list 'line-b' (known lists: line-a); create it with 'railwright approved create NAME'"
    )
    with pytest.raises(UnknownPartError) as caught:
        _set(line_a, "NO-SUCH", "approved")
    assert str(caught.value) == f"unknown part 'NO-SUCH' (not in the library {line_a.location_text()})"
    with pytest.raises(InputDataError, match="^the list 'line-a' already exists$"):
        changes.create_list(line_a, "line-a")


def test_removing_a_listed_part_is_refused_naming_the_lists(line_a):
    changes.create_list(line_a, "line-b")
    _set(line_a, "D-SIG1", "banned")
    changes.set_status(line_a, "line-b", "D-SIG1", "approved", reason="fine there")
    with pytest.raises(LibraryError) as caught:
        line_a.remove_part("D-SIG1")
    assert str(caught.value) == (
        "cannot remove D-SIG1: it is on the approved-parts list(s) 'line-a' (banned), 'line-b' (approved); "
        "take it off each first with 'railwright approved drop LIST D-SIG1 --reason TEXT'"
    )
    assert line_a.part_record("D-SIG1")["part"] == "D-SIG1"
    changes.drop_entry(line_a, "line-a", "D-SIG1", reason="obsolete")
    changes.drop_entry(line_a, "line-b", "D-SIG1", reason="obsolete")
    line_a.remove_part("D-SIG1", by="A. Tester", reason="obsolete")
    with pytest.raises(UnknownPartError):
        line_a.part_record("D-SIG1")
    removed = history(line_a, part="D-SIG1")[-1]
    assert removed["action"] == "part removed" and removed["who"] == "A. Tester" and removed["why"] == "obsolete"
    assert "family=signal" in removed["old"] and removed["new"] == ""


def test_rename_and_compare(line_a):
    changes.create_list(line_a, "line-b")
    _set(line_a, "Z5V1-A", "approved")
    _set(line_a, "D-SIG1", "banned")
    changes.set_status(line_a, "line-b", "Z5V1-A", "approved", reason="test reason")
    changes.set_status(line_a, "line-b", "D-SIG2", "evaluating", reason="test reason")
    assert lists.compare_lists(line_a, "line-a", "line-b") == [
        {"part": "D-SIG1", "line-a": "banned", "line-b": ""},
        {"part": "D-SIG2", "line-a": "", "line-b": "evaluating"},
    ]
    changes.rename_list(line_a, "line-a", "chargers", reason="product line renamed")
    assert [row["list"] for row in lists.lists_summary(line_a)] == ["chargers", "line-b"]
    assert lists.lists_summary(line_a)[0]["banned"] == 1
    with pytest.raises(OptionError, match="--reason: missing"):
        changes.rename_list(line_a, "chargers", "x", reason="")


def test_list_csv_round_trip_and_dry_run(line_a, tmp_path):
    _set(line_a, "Z5V1-A", "approved", reason="=qualified, report 17")  # formula-like text
    _set(line_a, "D-SIG1", "conditional", condition="only below 40 °C ambient")
    exported = tmp_path / "line-a.csv"
    assert write_list_csv(exported, lists.list_entries(line_a, "line-a")) == 2
    header = exported.read_text(encoding="utf-8").splitlines()[0]
    assert header == ",".join(EXPORT_COLUMNS)
    assert "'=qualified" in exported.read_text(encoding="utf-8")
    changes.create_list(line_a, "copy")
    plan = import_list_file(line_a, "copy", load_list_csv(exported), dry_run=True)
    assert plan.summary() == "2 added, 0 changed, 0 unchanged"
    assert lists.list_entries(line_a, "copy") == []
    import_list_file(line_a, "copy", load_list_csv(exported), by="B. Checker")
    copied = {row["part"]: (row["status"], row["reason"], row["condition"]) for row in lists.list_entries(line_a, "copy")}
    assert copied == {
        "Z5V1-A": ("approved", "=qualified, report 17", ""),
        "D-SIG1": ("conditional", "test reason", "only below 40 °C ambient"),
    }
    again = import_list_file(line_a, "copy", load_list_csv(exported))
    assert again.summary() == "0 added, 0 changed, 2 unchanged"


def test_list_csv_reports_every_error_and_writes_nothing(line_a, tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text(
        "part,status,reason,condition,colour\n"
        "Z5V1-A,approved,qualified,,red\n"
        "D-SIG1,aproved,typo,,\n"
        "D-SIG2,approved,,,\n"
        "D-REC1,conditional,hot,,\n"
        "NO-SUCH,approved,x,,\n"
        "Z5V1-A,banned,twice,,\n",
        encoding="utf-8",
    )
    read = load_list_csv(bad)
    assert read.warnings == [f"{bad}:1: colour: not a list column; ignored"]
    with pytest.raises(InputDataError) as caught:
        import_list_file(line_a, "line-a", read)
    assert str(caught.value).splitlines() == [
        f"{bad}:3: status: 'aproved' is not a list status; expected one of approved, conditional, "
        "evaluating, no-new-design, banned",
        f"{bad}:4: reason: missing; every status change needs a reason",
        f"{bad}:5: condition: missing; a conditional part needs its condition of use",
        f"{bad}:6: part: unknown part 'NO-SUCH' (not in the library)",
        f"{bad}:7: part: 'Z5V1-A' appears twice (first on line 2)",
    ]
    assert lists.list_entries(line_a, "line-a") == []


def test_list_csv_header_problems_are_one_message():
    with pytest.raises(InputDataError) as caught:
        parse_list_csv("part,reason,part\nZ1,x,Z1\n", "l.csv")
    assert str(caught.value).splitlines() == ["l.csv:1: part: column appears twice", "l.csv:1: status: column missing"]
    with pytest.raises(InputDataError, match=r"^l.csv:1: no header row"):
        parse_list_csv("\n", "l.csv")


def test_upgrading_a_full_revision_1_library_keeps_everything(backend_db):
    """Make a library at revision 0001, fill it, then let opening it upgrade to head."""
    url = backend_db if "://" in backend_db else f"sqlite:///{backend_db}"
    engine = create_engine(url)
    records = load_parts_csv(demo_csv_path()).records
    with engine.begin() as connection:
        command.upgrade(alembic_config(connection), "0001")
        assert "audit_events" not in inspect(connection).get_table_names()
        now = datetime(2026, 11, 30, 12, 0, tzinfo=UTC)
        # The parts table as revision 0001 made it (later revisions add columns).
        old_parts = Table("parts", MetaData(), autoload_with=connection)
        connection.execute(insert(old_parts), [
            {**{c: v for c, v in record.items() if c in old_parts.c}, "created_at": now, "updated_at": now}
            for record in records
        ])
        connection.execute(insert(ImportLog), [{
            "imported_at": now, "imported_by": "old user", "kind": "parts csv", "file_name": "old.csv",
            "file_sha256": "ab" * 32, "rows_added": len(records), "rows_changed": 0, "rows_unchanged": 0,
        }])
        before_parts = [tuple(row) for row in connection.execute(select(old_parts).order_by(old_parts.c.id))]
        before_log = [tuple(row) for row in connection.execute(select(ImportLog.__table__))]
    engine.dispose()
    told: list[str] = []
    library = open_library(backend_db, notify=told.append)
    assert told == [f"upgraded the library {library.location_text()} from schema revision 0001 to {head_revision()}"]
    with library.engine.connect() as connection:
        kept = select(*(Part.__table__.c[c.name] for c in old_parts.c)).order_by(Part.id)
        assert [tuple(row) for row in connection.execute(kept)] == before_parts
        assert [tuple(row) for row in connection.execute(select(ImportLog.__table__))] == before_log
    assert history(library) == [] and lists.lists_summary(library) == []
    changes.create_list(library, "line-a")
    changes.set_status(library, "line-a", "Z5V1-A", "approved", reason="after upgrade")
    assert np.count_nonzero(library.load_partset(list_name="line-a").part == "Z5V1-A") == 1
    library.close()
