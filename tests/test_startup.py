"""Start-up: a command imports only what it uses (not a timing test).

Each command runs in a fresh interpreter through the console entry point; an exit hook
writes the names in ``sys.modules`` to a file, which the test reads. Timings are for
``benchmarks/bench_startup.py``.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import click
import pytest
from alembic.script import ScriptDirectory

from selector.catalog.schema_revision import alembic_config, head_revision
from selector.catalog.store import open_library
from selector.cli import COMMAND_MODULES, COMMAND_SUMMARIES, main

#: Runs ``railwright ARGS…`` and, at exit, writes every loaded module's name to OUT_FILE.
_WRAPPER = """
import atexit, sys
out_file = sys.argv.pop(1)
def _write_modules():
    with open(out_file, "w", encoding="utf-8") as handle:
        handle.write("\\n".join(sorted(sys.modules)))
atexit.register(_write_modules)
sys.argv[0] = "railwright"
from selector.cli import main
main()
"""

#: What a command that neither builds a DataFrame, plots, migrates, fits nor searches must
#: not load. (The solver's k, q and 0 °C are scipy.constants' values written out, checked
#: bit for bit in tests/test_devices.py, so SciPy itself need not load.)
NOT_FOR_LIBRARY_COMMANDS = ("pandas", "matplotlib", "alembic", "scipy", "selector.search.engine")
#: What the top-level help and version must not load.
NOT_FOR_HELP = ("numpy", "pandas", "sqlalchemy", "alembic", "scipy", "matplotlib")


def _loaded_modules(tmp_path: Path, *args: str) -> tuple[subprocess.CompletedProcess, set[str]]:
    out_file = tmp_path / "modules.txt"
    env = dict(os.environ, RAILWRIGHT_DB=str(tmp_path / "library.sqlite"))
    result = subprocess.run(
        [sys.executable, "-c", _WRAPPER, str(out_file), *args],
        capture_output=True, text=True, env=env, timeout=120, cwd=tmp_path,
    )
    return result, set(out_file.read_text(encoding="utf-8").split())


@pytest.fixture
def demo_library_file(tmp_path) -> Path:
    """A demo library at head, created before the command under test runs."""
    path = tmp_path / "library.sqlite"
    open_library(str(path), create_with_demo=True).close()
    return path


def test_parts_list_loads_no_dataframe_plot_migration_fit_or_search(tmp_path, demo_library_file):
    result, modules = _loaded_modules(tmp_path, "parts", "list")
    assert result.returncode == 0, result.stderr
    assert "D-SIG1" in result.stdout
    assert result.stderr == ""
    # The hook saw the library being read, so the absences below mean something.
    assert {"selector.catalog.store", "sqlalchemy", "selector.physics.devices"} <= modules
    assert [name for name in NOT_FOR_LIBRARY_COMMANDS if name in modules] == []


def test_approved_set_loads_no_dataframe_plot_migration_fit_or_search(tmp_path, demo_library_file):
    created, _ = _loaded_modules(tmp_path, "approved", "create", "line-a", "--by", "A. Tester")
    assert created.returncode == 0, created.stderr
    result, modules = _loaded_modules(
        tmp_path, "approved", "set", "line-a", "D-SIG1", "approved", "--reason", "qualified", "--by", "A. Tester"
    )
    assert result.returncode == 0, result.stderr
    assert "selector.catalog.list_changes" in modules
    assert [name for name in NOT_FOR_LIBRARY_COMMANDS if name in modules] == []


@pytest.mark.parametrize("option", ["--help", "--version"])
def test_help_and_version_load_no_numerics_or_database(tmp_path, option):
    result, modules = _loaded_modules(tmp_path, option)
    assert result.returncode == 0, result.stderr
    assert "selector.cli" in modules
    assert [name for name in NOT_FOR_HELP if name in modules] == []
    assert not (tmp_path / "library.sqlite").exists()


def test_help_lists_every_command_with_its_summary(tmp_path):
    result, modules = _loaded_modules(tmp_path, "--help")
    listed = result.stdout.split("Commands:\n", 1)[1].splitlines()
    assert [line.split()[0] for line in listed] == sorted(COMMAND_MODULES)
    assert not any(f"selector.cli.{module}" in modules for module in COMMAND_MODULES.values())


def test_command_summaries_are_the_commands_own_first_sentences():
    assert sorted(COMMAND_SUMMARIES) == sorted(COMMAND_MODULES)
    context = click.Context(main)
    for name, summary in COMMAND_SUMMARIES.items():
        assert main.get_command(context, name).get_short_help_str(limit=10_000) == summary, name


def test_head_from_file_names_is_alembics_head():
    """The head check without Alembic reads revision file names; they must name the
    revision they hold, and the greatest must be Alembic's head."""
    script = ScriptDirectory.from_config(alembic_config())
    for revision in script.walk_revisions():
        assert Path(revision.path).name.split("_", 1)[0] == revision.revision, revision.path
    assert head_revision() == script.get_current_head()


def test_library_at_head_opens_without_alembic(tmp_path, demo_library_file):
    result, modules = _loaded_modules(tmp_path, "init")
    assert result.returncode == 0, result.stderr
    assert result.stdout == f"library {demo_library_file} ready (schema revision {head_revision()})\n"
    assert "alembic" not in modules
