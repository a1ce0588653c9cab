"""The audit trail on every backend: events for imports, edits, status changes and
removals; who, when (UTC), what, old → new, why; the database refuses edits and deletes."""

from __future__ import annotations

import csv
from datetime import UTC, datetime, timedelta

import pytest
from sqlalchemy import text

from selector.catalog import list_changes as changes
from selector.catalog.audit import HISTORY_COLUMNS, history, parse_since
from selector.catalog.part_validation import RawRow, validate_rows
from selector.catalog.store import open_library
from selector.errors import LibraryError, OptionError


def _records(pd_w: str):
    rows = [RawRow(2, {"part": "D-AU1", "family": "signal", "is_a": "2n", "n": "1.9", "pd_w": pd_w})]
    return validate_rows(rows, "audit.csv")


def test_import_edit_status_and_removal_events(backend_db):
    library = open_library(backend_db)
    started = datetime.now(UTC) - timedelta(seconds=1)
    library.import_records(_records("500m"), kind="parts csv", file_name="audit.csv", file_sha256="0" * 64)
    library.import_records(_records("250m"), kind="parts csv", file_name="audit.csv", file_sha256="1" * 64)
    library.import_records(_records("250m"), kind="parts csv", file_name="audit.csv", file_sha256="1" * 64)
    changes.create_list(library, "line-a", by="C. Lead")
    changes.set_status(library, "line-a", "D-AU1", "evaluating", reason="samples ordered", by="C. Lead")
    changes.set_status(library, "line-a", "D-AU1", "conditional", reason="passed at 25 °C", by="D. Eng",
                     condition="ambient at most 50 °C")
    changes.drop_entry(library, "line-a", "D-AU1", reason="line cancelled", by="C. Lead")
    library.remove_part("D-AU1", by="C. Lead", reason="line cancelled")
    events = history(library, part="D-AU1")
    assert [(e["action"], e["who"]) for e in events] == [
        ("part added", events[0]["who"]), ("part changed", events[0]["who"]),
        ("status set", "C. Lead"), ("status set", "D. Eng"), ("entry removed", "C. Lead"),
        ("part removed", "C. Lead"),
    ]
    added, changed, first, second, dropped, removed = events
    assert added["new"] == "family=signal; is_a=2e-09; n=1.9; pd_w=0.5" and added["old"] == ""
    assert added["why"] == "parts csv import of audit.csv"
    assert (changed["old"], changed["new"]) == ("pd_w=0.5", "pd_w=0.25")  # the unchanged re-import adds none
    assert (first["old"], first["new"], first["why"]) == ("", "evaluating", "samples ordered")
    assert (second["old"], second["new"]) == ("evaluating", "conditional: ambient at most 50 °C")
    assert (dropped["old"], dropped["list"]) == ("conditional: ambient at most 50 °C", "line-a")
    assert removed["old"] == "family=signal; is_a=2e-09; n=1.9; pd_w=0.25"
    for event in events:
        moment = datetime.fromisoformat(event["when_utc"])
        assert moment.utcoffset() == timedelta(0) and started <= moment <= datetime.now(UTC)
    assert [e["action"] for e in history(library, list_name="line-a")] == [
        "list created", "status set", "status set", "entry removed"]
    assert history(library, since=datetime.now(UTC) + timedelta(hours=1)) == []
    assert len(history(library, since=started)) == 7
    library.close()


@pytest.mark.parametrize("statement", ["UPDATE audit_events SET actor = 'someone else'",
                                       "DELETE FROM audit_events"])
def test_the_database_refuses_to_change_or_delete_events(backend_db, statement):
    library = open_library(backend_db)
    changes.create_list(library, "line-a", by="C. Lead")
    before = history(library)
    with pytest.raises(LibraryError) as caught, library.session() as session:
        session.execute(text(statement))
    assert "audit events are append-only: they cannot be changed or deleted" in str(caught.value)
    assert history(library) == before and len(before) == 1
    library.close()


def test_history_csv_columns(backend_library, tmp_path):
    from selector.files.csv_writer import write_rows

    changes.create_list(backend_library, "line-a", by="=HYPERLINK(x)")
    path = tmp_path / "history.csv"
    write_rows(path, HISTORY_COLUMNS, history(backend_library, list_name="line-a"))
    rows = list(csv.DictReader(path.open(encoding="utf-8")))
    assert list(rows[0]) == list(HISTORY_COLUMNS)
    assert rows[0]["who"] == "'=HYPERLINK(x)" and rows[0]["action"] == "list created"


def test_since_reads_dates_and_refuses_other_text():
    assert parse_since("2026-12-01") == datetime(2026, 12, 1, tzinfo=UTC)
    assert parse_since("2026-12-01T14:30") == datetime(2026, 12, 1, 14, 30, tzinfo=UTC)
    assert parse_since("2026-12-01T14:30+01:00") == datetime(2026, 12, 1, 13, 30, tzinfo=UTC)
    with pytest.raises(OptionError) as caught:
        parse_since("yesterday")
    assert str(caught.value) == "--since: 'yesterday' is not a date; write e.g. 2026-12-01 or 2026-12-01T14:30"
