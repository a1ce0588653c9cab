"""The installed ``railwright`` console script, run as a user would run it."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

import selector


def _console_script() -> str:
    beside_python = Path(sys.executable).with_name("railwright")
    if beside_python.is_file():
        return str(beside_python)
    found = shutil.which("railwright")
    if found is None:
        pytest.fail("the railwright console script is not installed (pip install .)")
    return found


def _run(*args: str, home: Path) -> subprocess.CompletedProcess:
    env = {key: value for key, value in os.environ.items() if key != "RAILWRIGHT_DB"}
    env.update(HOME=str(home), XDG_DATA_HOME=str(home / "data"))
    return subprocess.run(
        [_console_script(), *args], capture_output=True, text=True, env=env, timeout=120, cwd=home
    )


def test_version_and_help(tmp_path):
    version = _run("--version", home=tmp_path)
    assert version.returncode == 0
    assert version.stdout.strip() == f"railwright, version {selector.__version__}"
    assert "Examples:" in _run("--help", home=tmp_path).stdout


def test_first_run_creates_the_default_library_with_the_demo_sets(tmp_path):
    result = _run("parts", "list", home=tmp_path)
    assert result.returncode == 0, result.stderr
    assert result.stderr.startswith("created the library ")
    assert "invented demo sets" in result.stderr
    assert str(tmp_path) in result.stderr  # inside the redirected per-user data directory
    assert "Z5V1-A" in result.stdout and "D-SIG1" in result.stdout
    second = _run("parts", "show", "Z5V1-A", home=tmp_path)
    assert second.returncode == 0 and second.stderr == ""


def test_user_errors_are_one_line_without_traceback(tmp_path):
    junk = tmp_path / "junk.sqlite"
    junk.write_text("plain text, not a library\n")
    bad_db = _run("--db", str(junk), "parts", "list", home=tmp_path)
    assert bad_db.returncode == 1
    assert bad_db.stderr == f"Error: {junk}: not a railwright library (not an SQLite database file)\n"
    bad_family = _run("--db", str(tmp_path / "lib.sqlite"), "parts", "list", "--family", "diac", home=tmp_path)
    assert bad_family.returncode == 2
    assert "Traceback" not in bad_family.stderr and "diac" in bad_family.stderr
