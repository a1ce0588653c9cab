"""Concurrent saves: 4 processes × 25 saves of a few shared design names at the same time.

Every save must be kept (100 revisions, each reason once), each name's revisions must be
numbered 1, 2, … without a gap or a repeat, and every save must have its audit event.
Parts are the invented demo sets.
"""

from __future__ import annotations

import multiprocessing
from pathlib import Path

import pytest

from selector.api import save_design
from selector.catalog.audit import history
from selector.catalog.saved_designs import latest_revisions, revision_history
from selector.catalog.store import open_library

WORKERS = 4
SAVES = 25
#: Few names, so that the workers keep adding revisions to the same designs.
NAMES = ("bias-5v", "clamp-5v", "ref-5v")
STACKS = ("Z5V1-B", "D-SCH3 + Z4V7-A")
SPEC = Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml"


def _worker(db: str, worker: int, barrier, failures) -> None:
    try:
        library = open_library(db)
        barrier.wait(timeout=60)
        for save in range(SAVES):
            save_design(SPEC, library, NAMES[(worker + save) % len(NAMES)], STACKS[save % len(STACKS)],
                        reason=f"worker {worker} save {save}", by=f"worker-{worker}")
        library.close()
    except BaseException as error:  # reported to the parent, which asserts none
        failures.put(f"worker {worker}: {type(error).__name__}: {error}")


@pytest.mark.slow
def test_four_processes_twenty_five_saves_each(backend_db):
    library = open_library(backend_db, create_with_demo=True)
    context = multiprocessing.get_context("spawn")
    barrier = context.Barrier(WORKERS)
    failures = context.Queue()
    processes = [context.Process(target=_worker, args=(backend_db, worker, barrier, failures))
                 for worker in range(WORKERS)]
    for process in processes:
        process.start()
    for process in processes:
        process.join(timeout=600)
    reported = []
    while not failures.empty():
        reported.append(failures.get())
    assert reported == []
    assert [process.exitcode for process in processes] == [0] * WORKERS

    revisions = [saved for latest in latest_revisions(library) for saved in revision_history(library, latest.name)]
    assert len(revisions) == WORKERS * SAVES
    assert sorted(saved.reason for saved in revisions) == sorted(
        f"worker {w} save {s}" for w in range(WORKERS) for s in range(SAVES))
    for name in NAMES:
        numbers = [saved.revision for saved in revisions if saved.name == name]
        assert numbers == list(range(1, len(numbers) + 1)), name
    events = [event for event in history(library) if event["action"] == "design saved"]
    assert len(events) == WORKERS * SAVES
    # Events are in commit order, so each name's revision numbers rise by one from event to event.
    seen: dict[str, int] = {}
    for event in events:
        name, number = event["new"].split("'")[1], int(event["new"].split(" revision ")[1].split(":")[0])
        assert number == seen.get(name, 0) + 1, event
        seen[name] = number
    library.close()
