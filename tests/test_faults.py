"""Faults: an import killed at random moments, and libraries that cannot or must not be used.

The kill test imports a 10,000-row parts CSV (invented parts) over a library holding an
older 10,000-row state and SIGKILLs the importing process at seeded random moments, 20
times. After each kill SQLite's ``PRAGMA integrity_check`` must say ``ok`` and the library
must hold exactly the old or exactly the new state (full export and import log).

The importing process is forked from a helper process that has already loaded railwright,
so each trial spends its time in the import itself rather than in Python start-up; the
child runs the same ``main`` the ``railwright`` console script runs.
"""

from __future__ import annotations

import csv
import io
import os
import random
import shutil
import signal
import sqlite3
import subprocess
import sys
import time

import pytest
from click.testing import CliRunner

from selector.catalog.parts_export import write_parts_csv
from selector.catalog.parts_import import load_parts_csv
from selector.catalog.store import open_library
from selector.cli import main

ROWS = 10_000
KILLS = 20
SEED = 7

_FORK_SERVER = r"""
import os, sys
from selector.cli import main
for line in sys.stdin:
    arguments = line.rstrip("\n").split("\t")
    pid = os.fork()
    if pid == 0:
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, 1)
        os.dup2(null, 2)
        try:
            main(arguments)
        except SystemExit as stop:
            os._exit(stop.code if isinstance(stop.code, int) else 1)
        os._exit(0)
    print(pid, flush=True)
    _, status = os.waitpid(pid, 0)
    print(status, flush=True)
"""


def write_big_csv(path, version: int) -> None:
    """10,000 invented forward parts; ``version`` changes every part's values."""
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow(["part", "family", "description", "is_a", "n", "rs_ohm", "pd_w", "source"])
        for index in range(ROWS):
            writer.writerow([f"KT-{index:05d}", "signal", f"invented kill-test diode, version {version}",
                             f"{1 + index % 7}.{version} nA", "1.8", "0.5", f"{0.2 + version / 10:.1f}", "invented"])  # fmt: skip


def library_state(path) -> tuple[str, int]:
    """A full parts export and the number of import-log entries."""
    library = open_library(str(path))
    try:
        buffer = io.StringIO()
        write_parts_csv(buffer, library.part_records())
        return buffer.getvalue(), len(library.import_history())
    finally:
        library.close()


def copy_library(source, destination) -> None:
    for suffix in ("", "-wal", "-shm"):
        target = destination.with_name(destination.name + suffix)
        if target.exists():
            target.unlink()
        if source.with_name(source.name + suffix).exists():
            shutil.copyfile(source.with_name(source.name + suffix), target)


def integrity(path) -> str:
    connection = sqlite3.connect(path)
    try:
        return connection.execute("PRAGMA integrity_check").fetchone()[0]
    finally:
        connection.close()


@pytest.mark.slow
def test_import_killed_at_random_moments_leaves_old_or_new_state(tmp_path):
    old_csv, new_csv = tmp_path / "old.csv", tmp_path / "big.csv"
    write_big_csv(old_csv, 1)
    write_big_csv(new_csv, 2)
    old_library = tmp_path / "old.sqlite"
    library = open_library(str(old_library))
    library.import_parts_file(load_parts_csv(old_csv))
    library.close()
    old_state = library_state(old_library)
    new_library = tmp_path / "new.sqlite"
    copy_library(old_library, new_library)
    library = open_library(str(new_library))
    library.import_parts_file(load_parts_csv(new_csv))
    library.close()
    new_state = library_state(new_library)
    assert old_state != new_state and new_state[1] == old_state[1] + 1

    server = subprocess.Popen([sys.executable, "-c", _FORK_SERVER], stdin=subprocess.PIPE,
                              stdout=subprocess.PIPE, text=True)  # fmt: skip
    trial = tmp_path / "trial.sqlite"

    def start() -> int:
        copy_library(old_library, trial)
        server.stdin.write("\t".join(["--db", str(trial), "parts", "import", str(new_csv)]) + "\n")
        server.stdin.flush()
        return int(server.stdout.readline())

    try:
        started = time.perf_counter()
        start()
        assert int(server.stdout.readline()) == 0  # a whole import, not killed
        full_run_s = time.perf_counter() - started
        assert library_state(trial) == new_state
        outcomes = []
        moments = random.Random(SEED)
        for _ in range(KILLS):
            pid = start()
            time.sleep(moments.uniform(0.0, 1.1 * full_run_s))
            try:
                os.kill(pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
            status = int(server.stdout.readline())
            assert integrity(trial) == "ok"
            state = library_state(trial)
            assert state in (old_state, new_state)
            outcomes.append(("killed" if os.WIFSIGNALED(status) else "finished", "new" if state == new_state else "old"))
    finally:
        server.stdin.close()
        server.wait(timeout=60)
    print(f"full import {full_run_s:.2f} s; outcomes: {sorted((o, outcomes.count(o)) for o in set(outcomes))}")
    assert sum(1 for how, _ in outcomes if how == "killed") >= KILLS // 2


def _run(*arguments):
    result = CliRunner().invoke(main, [str(argument) for argument in arguments])
    assert "Traceback" not in result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)
    return result


@pytest.fixture
def parts_csv(tmp_path):
    path = tmp_path / "parts.csv"
    path.write_text("part,family,is_a,n,pd_w\nD-FT1,signal,1n,1.5,0.5\n", encoding="utf-8")
    return path


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0, reason="file permissions do not bind the root user")
def test_read_only_library_gives_one_clear_line(tmp_path, parts_csv):
    path = tmp_path / "library.sqlite"
    open_library(str(path)).close()
    path.chmod(0o444)
    try:
        result = _run("--db", path, "parts", "import", parts_csv)
    finally:
        path.chmod(0o644)
    assert result.exit_code == 1
    assert result.output.startswith(f"Error: {path}: ") and result.output.count("\n") == 1


@pytest.mark.skipif(os.name != "posix" or os.geteuid() != 0 or shutil.which("chattr") is None,
                    reason="root only: file permissions do not bind root, so the file is made immutable")
def test_immutable_library_gives_one_clear_line_even_to_root(tmp_path, parts_csv):
    path = tmp_path / "library.sqlite"
    open_library(str(path)).close()
    before = path.read_bytes()
    if subprocess.run(["chattr", "+i", str(path)], capture_output=True).returncode != 0:
        pytest.skip("this filesystem cannot mark a file immutable")
    try:
        result = _run("--db", path, "parts", "import", parts_csv)
    finally:
        subprocess.run(["chattr", "-i", str(path)], capture_output=True)
    assert result.exit_code == 1
    assert result.output.startswith(f"Error: {path}: ") and result.output.count("\n") == 1, result.output
    assert path.read_bytes() == before


def test_locked_library_gives_one_clear_line(tmp_path, parts_csv, monkeypatch):
    from selector.catalog import library_engine

    monkeypatch.setattr(library_engine, "BUSY_TIMEOUT_MS", 200)
    path = tmp_path / "library.sqlite"
    open_library(str(path)).close()
    holder = sqlite3.connect(path, isolation_level=None)
    holder.execute("BEGIN EXCLUSIVE")
    try:
        before = holder.execute("SELECT count(*) FROM parts").fetchone()[0]
        result = _run("--db", path, "parts", "import", parts_csv)
    finally:
        holder.execute("ROLLBACK")
        holder.close()
    assert result.exit_code == 1
    assert result.output.startswith(f"Error: {path}: ") and result.output.count("\n") == 1
    assert "busy" in result.output or "locked" in result.output
    assert library_state(path)[0].count("\n") == 1 + before  # header only: nothing written


@pytest.mark.parametrize(
    "content, message",
    [
        (bytes(random.Random(3).randrange(256) for _ in range(4096)), "not a railwright library"),
        ("sqlite-other-app", "holds a database, but not a railwright library"),
    ],
    ids=["random-bytes", "sqlite-of-another-app"],
)
def test_file_that_is_not_a_library_gives_one_clear_line(tmp_path, parts_csv, content, message):
    path = tmp_path / "library.sqlite"
    if content == "sqlite-other-app":
        other = sqlite3.connect(path)
        other.execute("CREATE TABLE recipes (name TEXT)")  # an invented other program's file
        other.commit()
        other.close()
    else:
        path.write_bytes(content)
    result = _run("--db", path, "parts", "import", parts_csv)
    assert result.exit_code == 1
    assert result.output.startswith(f"Error: {path}: {message}") and result.output.count("\n") == 1


def test_random_bytes_file_is_left_untouched(tmp_path, parts_csv):
    path = tmp_path / "library.sqlite"
    path.write_bytes(bytes(random.Random(4).randrange(256) for _ in range(4096)))
    before = path.read_bytes()
    assert _run("--db", path, "parts", "import", parts_csv).exit_code == 1
    assert path.read_bytes() == before


def test_sqlite_file_of_another_program_is_left_untouched(tmp_path, parts_csv):
    path = tmp_path / "recipes.sqlite"
    other = sqlite3.connect(path)
    other.execute("CREATE TABLE recipes (name TEXT)")  # an invented other program's file
    other.commit()
    other.close()
    before = path.read_bytes()
    assert _run("--db", path, "parts", "import", parts_csv).exit_code == 1
    assert path.read_bytes() == before


def test_empty_file_is_not_taken_for_a_library(tmp_path, parts_csv):
    path = tmp_path / "library.sqlite"
    path.write_bytes(b"")
    result = _run("--db", path, "parts", "import", parts_csv)
    assert result.exit_code == 1 and "not a railwright library" in result.output
    assert path.read_bytes() == b""


def test_library_from_a_newer_schema_is_refused_and_never_downgraded(tmp_path, parts_csv):
    path = tmp_path / "library.sqlite"
    open_library(str(path)).close()
    connection = sqlite3.connect(path)
    connection.execute("UPDATE alembic_version SET version_num = '9999_from_the_future'")
    connection.commit()
    tables = sorted(row[0] for row in connection.execute("SELECT name FROM sqlite_master WHERE type = 'table'"))
    connection.close()
    for arguments in (("parts", "list"), ("parts", "import", parts_csv)):
        result = _run("--db", path, *arguments)
        assert result.exit_code == 1
        assert result.output == (
            f"Error: {path}: written by a newer railwright (schema revision 9999_from_the_future); "
            "upgrade railwright to open it\n"
        )
    connection = sqlite3.connect(path)
    assert connection.execute("SELECT version_num FROM alembic_version").fetchall() == [("9999_from_the_future",)]
    assert sorted(row[0] for row in connection.execute("SELECT name FROM sqlite_master WHERE type = 'table'")) == tables
    assert connection.execute("SELECT count(*) FROM parts").fetchone()[0] == 0
    connection.close()
