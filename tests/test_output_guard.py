"""No output path can destroy the library: every writer refuses the library file and its
SQLite siblings, symbolic links, devices and empty names with one line, and the library
is intact afterwards."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from selector.catalog.store import open_library

EXAMPLE_SPEC = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")


@pytest.fixture
def db(run_cli, tmp_path):
    path = tmp_path / "lib.sqlite"
    assert run_cli("--db", path, "init", "--demo").exit_code == 0
    assert run_cli("--db", path, "approved", "create", "line-a").exit_code == 0
    return path


def _writers(db, target):
    return {
        "parts export": (("--db", db, "parts", "export", target), "FILE.csv"),
        "parts list --csv": (("--db", db, "parts", "list", "--csv", target), "--csv"),
        "seek --csv": (("--db", db, "seek", "--spec", EXAMPLE_SPEC, "--top", "1", "--csv", target), "--csv"),
        "report --out": (("--db", db, "report", "--spec", EXAMPLE_SPEC, "--stack", "Z5V1-B", "--out", target),
                         "--out"),
        "history --csv": (("--db", db, "history", "--csv", target), "--csv"),
        "approved export": (("--db", db, "approved", "export", "line-a", target), "FILE.csv"),
        "approved show --csv": (("--db", db, "approved", "show", "line-a", "--csv", target), "--csv"),
    }


@pytest.mark.parametrize("writer", ["parts export", "parts list --csv", "seek --csv", "report --out", "history --csv",
                                    "approved export", "approved show --csv"])
@pytest.mark.parametrize("suffix", ["", "-wal", "-shm", "-journal"])
def test_no_writer_writes_over_the_library_or_its_siblings(run_cli, db, writer, suffix):
    target = Path(f"{db}{suffix}")
    before = db.read_bytes()
    arguments, option = _writers(db, target)[writer]
    result = run_cli(*arguments)
    assert result.exit_code == 2
    assert result.stderr == f"Error: {option}: '{target}' is a file of the parts library ({target}); write somewhere else\n"
    assert db.read_bytes() == before
    library = open_library(str(db), notify=lambda line: None)
    assert len(library.part_records()) == 74
    library.close()


def test_a_link_to_the_library_is_refused_and_left_as_it_is(run_cli, db, tmp_path):
    link = tmp_path / "out.csv"
    link.symlink_to(db)
    result = run_cli("--db", db, "parts", "export", link)
    assert result.stderr == f"Error: FILE.csv: '{link}' is a symbolic link; give the file itself\n"
    assert link.is_symlink() and os.path.samefile(link, db)


def test_a_device_or_a_folder_is_not_replaced(run_cli, db, tmp_path):
    assert run_cli("--db", db, "parts", "export", "/dev/null").stderr == (
        "Error: FILE.csv: '/dev/null' is not a regular file; give a file name\n")
    assert Path("/dev/null").is_char_device()
    assert run_cli("--db", db, "parts", "export", tmp_path).stderr == (
        f"Error: FILE.csv: '{tmp_path}' is a folder; give a file name\n")


def test_an_empty_file_name_is_one_line(run_cli, db):
    result = run_cli("--db", db, "seek", "--spec", EXAMPLE_SPEC, "--top", "1", "--csv", "")
    assert result.exit_code == 2 and result.stderr == "Error: --csv: empty file name\n"
    assert run_cli("--db", db, "parts", "list", "--csv", "").stderr == "Error: --csv: empty file name\n"


def test_png_files_are_written_whole_and_never_through_a_link(run_cli, db, tmp_path):
    folder = tmp_path / "png"
    folder.mkdir()
    precious = tmp_path / "precious.txt"
    precious.write_text("keep", encoding="utf-8")
    (folder / "design-supply.png").symlink_to(precious)
    result = run_cli("--db", db, "report", "--spec", EXAMPLE_SPEC, "--stack", "Z5V1-B", "--out", tmp_path / "r.html",
                     "--png", folder)
    assert result.exit_code == 2
    assert result.stderr == f"Error: --png: '{folder / 'design-supply.png'}' is a symbolic link; give the file itself\n"
    assert precious.read_text(encoding="utf-8") == "keep"
