"""Shared fixtures: every test runs with a private per-user data directory.

``HOME``, ``XDG_DATA_HOME`` and ``RAILWRIGHT_DB`` are redirected for every test so that
no test can ever read or write a real user's parts library.

``backend_db`` (and ``backend_library``) run a test once per database backend: SQLite,
and PostgreSQL when ``RAILWRIGHT_TEST_PG_URL`` names a throwaway database
(``source .ci/start_postgres.sh``); without it the PostgreSQL cases are skipped and the
reason is printed. Each PostgreSQL case starts and ends with an empty ``public`` schema.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from click.testing import CliRunner
from sqlalchemy import create_engine
from sqlalchemy.engine import make_url

from selector.catalog.store import Library, open_library
from selector.cli import main

PG_URL_VARIABLE = "RAILWRIGHT_TEST_PG_URL"
PG_SKIP_REASON = f"{PG_URL_VARIABLE} is not set (start a throwaway server: source .ci/start_postgres.sh)"


def postgres_url() -> str | None:
    """The throwaway PostgreSQL database of the tests, or None."""
    return os.environ.get(PG_URL_VARIABLE) or None


def pytest_report_header(config) -> str:
    url = postgres_url()
    if url is None:
        return f"PostgreSQL cases: skipped, {PG_SKIP_REASON}"
    return f"PostgreSQL cases: on {make_url(url).render_as_string(hide_password=True)}"


def reset_postgres(url: str) -> None:
    """Drop everything in the database's ``public`` schema (tables, functions, version)."""
    engine = create_engine(url)
    try:
        with engine.begin() as connection:
            connection.exec_driver_sql("DROP SCHEMA public CASCADE")
            connection.exec_driver_sql("CREATE SCHEMA public")
    finally:
        engine.dispose()


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def backend_db(request, tmp_path) -> str:
    """A ``--db`` value naming a library not yet created, on each backend in turn."""
    if request.param == "sqlite":
        yield str(tmp_path / "library.sqlite")
        return
    url = postgres_url()
    if url is None:
        pytest.skip(PG_SKIP_REASON)
    reset_postgres(url)
    yield url
    reset_postgres(url)


@pytest.fixture
def postgres_db() -> str:
    """The throwaway PostgreSQL database, emptied before and after the test (or a skip)."""
    url = postgres_url()
    if url is None:
        pytest.skip(PG_SKIP_REASON)
    reset_postgres(url)
    yield url
    reset_postgres(url)


@pytest.fixture
def backend_library(backend_db) -> Library:
    """A fresh library holding the invented demo sets, on each backend in turn."""
    library = open_library(backend_db, create_with_demo=True)
    yield library
    library.close()


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


@pytest.fixture(scope="module")
def demo_db_module(tmp_path_factory) -> str:
    """A demo library made once per test module through ``init --demo``, for read-only
    CLI tests (its path as ``--db`` takes it)."""
    path = str(tmp_path_factory.mktemp("demo") / "lib.sqlite")
    assert CliRunner().invoke(main, ["--db", path, "init", "--demo"]).exit_code == 0
    return path


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
