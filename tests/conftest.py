"""Shared fixtures: every test runs with a private per-user data directory.

``HOME``, ``XDG_DATA_HOME`` and ``RAILWRIGHT_DB`` are redirected for every test so that
no test can ever read or write a real user's parts library.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from selector.catalog.store import Library, open_library
from selector.cli import main


@pytest.fixture(autouse=True)
def private_user_dirs(tmp_path_factory, monkeypatch) -> Path:
    """A throwaway home and data directory; no RAILWRIGHT_DB from the environment."""
    home = tmp_path_factory.mktemp("home")
    monkeypatch.setenv("HOME", str(home))
    monkeypatch.setenv("XDG_DATA_HOME", str(home / "data"))
    monkeypatch.delenv("RAILWRIGHT_DB", raising=False)
    return home


@pytest.fixture
def library_path(tmp_path) -> Path:
    """Where a test's own library file goes (not created yet)."""
    return tmp_path / "library.sqlite"


@pytest.fixture
def demo_library(library_path) -> Library:
    """A fresh library at ``library_path`` holding the invented demo sets."""
    library = open_library(str(library_path), create_with_demo=True)
    yield library
    library.close()


@pytest.fixture
def empty_library(library_path) -> Library:
    """A fresh, empty library at ``library_path``."""
    library = open_library(str(library_path))
    yield library
    library.close()


@pytest.fixture
def run_cli():
    """Run ``railwright`` in-process: ``run_cli("--db", path, "parts", "list")``."""
    runner = CliRunner()

    def run(*args: str, input: str | None = None):
        return runner.invoke(main, [str(arg) for arg in args], input=input, catch_exceptions=False)

    return run
