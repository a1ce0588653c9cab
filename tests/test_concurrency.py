"""Concurrent writers: 4 processes × 50 status changes on one library at the same time.

Every change must be recorded (200 events), none may be lost (each event's old value is
the previous event's new value for that part, and the final entries match the last
events), and no process may see "database is locked".
"""

from __future__ import annotations

import multiprocessing

import pytest

from selector.catalog import approved_lists as lists
from selector.catalog.audit import history
from selector.catalog.store import open_library

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
            lists.set_status(
                library, "shared", PARTS[(worker + change) % len(PARTS)], STATUSES[(worker + change) % len(STATUSES)],
                reason=f"worker {worker} change {change}", by=f"worker-{worker}",
            )
        library.close()
    except BaseException as error:  # reported to the parent, which asserts none
        failures.put(f"worker {worker}: {type(error).__name__}: {error}")


@pytest.mark.slow
def test_four_processes_fifty_status_changes_each(backend_db):
    library = open_library(backend_db, create_with_demo=True)
    lists.create_list(library, "shared", by="setup")
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
