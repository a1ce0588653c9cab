"""Concurrent writers: 4 processes × 50 status changes on one library at the same time.

Every change must be recorded (200 events), none may be lost (each event's old value is
the previous event's new value for that part, and the final entries match the last
events), and no process may see "database is locked".
"""

from __future__ import annotations

import multiprocessing
import sqlite3

import pytest
from sqlalchemy.exc import OperationalError

from selector.catalog import approved_lists as lists
from selector.catalog import list_changes as changes
from selector.catalog import store
from selector.catalog.audit import history
from selector.catalog.store import open_library
from selector.errors import LibraryError

WORKERS = 4
CHANGES = 50
#: Few parts, so that the workers keep changing the same entries.
PARTS = ("Z5V1-A", "Z4V7-A", "D-SIG1")
STATUSES = ("approved", "evaluating", "no-new-design", "banned")


def _worker(db: str, worker: int, barrier, failures) -> None:
    try:
        library = open_library(db)
        barrier.wait(timeout=60)
        for change in range(CHANGES):
            changes.set_status(
                library, "shared", PARTS[(worker + change) % len(PARTS)], STATUSES[(worker + change) % len(STATUSES)],
                reason=f"worker {worker} change {change}", by=f"worker-{worker}",
            )
        library.close()
    except BaseException as error:  # reported to the parent, which asserts none
        failures.put(f"worker {worker}: {type(error).__name__}: {error}")


@pytest.mark.slow
def test_four_processes_fifty_status_changes_each(backend_db):
    library = open_library(backend_db, create_with_demo=True)
    changes.create_list(library, "shared", by="setup")
    context = multiprocessing.get_context("spawn")
    barrier = context.Barrier(WORKERS)
    failures = context.Queue()
    processes = [context.Process(target=_worker, args=(backend_db, worker, barrier, failures))
                 for worker in range(WORKERS)]
    for process in processes:
        process.start()
    for process in processes:
        process.join(timeout=300)
    reported = []
    while not failures.empty():
        reported.append(failures.get())
    assert reported == []
    assert [process.exitcode for process in processes] == [0] * WORKERS

    events = [event for event in history(library, list_name="shared") if event["action"] == "status set"]
    assert len(events) == WORKERS * CHANGES
    assert sorted(event["why"] for event in events) == sorted(
        f"worker {w} change {c}" for w in range(WORKERS) for c in range(CHANGES))
    last_new: dict[str, str] = {}
    for event in events:  # in commit order (event id)
        assert event["old"] == last_new.get(event["part"], ""), event
        last_new[event["part"]] = event["new"]
    final = {row["part"]: row["status"] for row in lists.list_entries(library, "shared")}
    assert final == last_new
    library.close()


def test_a_busy_database_is_retried_with_a_bounded_number_of_tries(empty_library, monkeypatch):
    pauses: list[float] = []
    monkeypatch.setattr(store.time, "sleep", pauses.append)
    tries = []

    def busy_twice(session):
        tries.append(1)
        if len(tries) <= 2:
            raise OperationalError("BEGIN IMMEDIATE", {}, sqlite3.OperationalError("database is locked"))
        return "done"

    assert empty_library.write(busy_twice) == "done"
    assert len(tries) == 3 and len(pauses) == 2
    # randomised ±50 % around 0.05 s, then 0.1 s
    assert 0.025 <= pauses[0] <= 0.075 and 0.05 <= pauses[1] <= 0.15

    def always_busy(session):
        raise OperationalError("BEGIN IMMEDIATE", {}, sqlite3.OperationalError("database is locked"))

    with pytest.raises(LibraryError) as caught:
        empty_library.write(always_busy)
    assert str(caught.value) == (
        f"{empty_library.location_text()}: still busy with other writers after {store.WRITE_ATTEMPTS} tries; "
        "try again in a moment"
    )

    def other_failure(session):
        raise OperationalError("SELECT", {}, sqlite3.OperationalError("disk I/O error"))

    tries.clear()
    with pytest.raises(LibraryError, match="disk I/O error$"):
        empty_library.write(other_failure)
