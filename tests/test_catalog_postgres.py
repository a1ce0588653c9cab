"""The same library on PostgreSQL (a shared team library).

Runs when ``RAILWRIGHT_TEST_PG_URL`` names a throwaway database (``.ci/start_postgres.sh``
starts one); every test begins from an empty ``public`` schema.
"""

from __future__ import annotations

import os

import numpy as np
import pytest
from alembic import command
from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from sqlalchemy import create_engine, text

from selector.catalog import models
from selector.catalog.parts_export import write_parts_csv
from selector.catalog.parts_import import load_parts_csv
from selector.catalog.resources import demo_csv_path
from selector.catalog.schema_revision import alembic_config, head_revision
from selector.catalog.store import open_library
from selector.errors import LibraryError

PG_URL = os.environ.get("RAILWRIGHT_TEST_PG_URL")
pytestmark = [
    pytest.mark.postgres,
    pytest.mark.skipif(not PG_URL, reason="RAILWRIGHT_TEST_PG_URL is not set"),
]


@pytest.fixture
def pg_url(postgres_db) -> str:
    return postgres_db


def test_a_new_database_becomes_an_empty_library(pg_url):
    told: list[str] = []
    library = open_library(pg_url, notify=told.append)
    assert told == [f"created an empty library {library.location_text()}"]
    assert library.part_records() == []
    assert library.schema_revision() == head_revision()
    library.close()


def test_models_match_the_migrations_on_postgresql(pg_url):
    engine = create_engine(pg_url)
    with engine.begin() as connection:
        command.upgrade(alembic_config(connection), "head")
        context = MigrationContext.configure(connection, opts={"compare_type": True})
        assert compare_metadata(context, models.Base.metadata) == []
    engine.dispose()


def test_import_export_round_trip_matches_sqlite(pg_url, demo_library, tmp_path):
    library = open_library(pg_url)
    plan = library.import_parts_file(load_parts_csv(demo_csv_path()))
    assert len(plan.added) == len(demo_library.part_records())
    exported = tmp_path / "pg.csv"
    write_parts_csv(exported, library.part_records())
    again = library.import_parts_file(load_parts_csv(exported))
    assert again.added == [] and again.changed == []
    on_pg, on_sqlite = library.load_partset(), demo_library.load_partset()
    assert list(on_pg.part) == list(on_sqlite.part)  # same order on both collations
    for column in ("is_a", "n", "vz_v", "tc_v_per_k", "theta_ja_k_per_w"):
        np.testing.assert_array_equal(getattr(on_pg, column), getattr(on_sqlite, column))
    library.close()


def test_constraints_and_newer_schema_on_postgresql(pg_url):
    library = open_library(pg_url)
    with pytest.raises(LibraryError, match="refused by the database"), library.session() as session:
        session.execute(
            text(
                "INSERT INTO parts (part, family, description, package, source, created_at, updated_at) "
                "VALUES ('X1', 'diac', '', '', '', now(), now())"
            )
        )
    with library.engine.begin() as connection:
        connection.execute(text("UPDATE alembic_version SET version_num = '9999'"))
    library.close()
    with pytest.raises(LibraryError, match="written by a newer railwright"):
        open_library(pg_url)


def test_downgrade_and_upgrade_on_postgresql(pg_url):
    library = open_library(pg_url)
    with library.engine.begin() as connection:
        command.downgrade(alembic_config(connection), "base")
        command.upgrade(alembic_config(connection), "head")
    library.import_parts_file(load_parts_csv(demo_csv_path()))
    assert len(library.part_records()) >= 72
    library.close()
