"""The schema comes only from the Alembic migrations, and the models never drift from them."""

from __future__ import annotations

import importlib.util

import pytest
from alembic import command
from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import create_engine, inspect, text

from selector.catalog import models
from selector.catalog.parts_import import load_parts_csv
from selector.catalog.resources import demo_csv_path, migrations_folder
from selector.catalog.schema_revision import alembic_config, head_revision
from selector.catalog.store import open_library
from selector.spec.part_fields import FAMILIES, NUMERIC_COLUMNS


def _revisions() -> list[str]:
    script = ScriptDirectory.from_config(alembic_config())
    return [revision.revision for revision in reversed(list(script.walk_revisions()))]


def test_models_match_the_migrations(tmp_path):
    engine = create_engine(f"sqlite:///{tmp_path / 'schema.sqlite'}")
    with engine.begin() as connection:
        command.upgrade(alembic_config(connection), "head")
        context = MigrationContext.configure(connection, opts={"compare_type": True})
        assert compare_metadata(context, models.Base.metadata) == []


def test_initial_revision_is_self_contained_and_matches_the_contract():
    path = migrations_folder() / "versions" / "0001_initial_parts_and_import_log.py"
    spec = importlib.util.spec_from_file_location("initial_revision", path)
    initial = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(initial)
    assert initial.revision == "0001" and initial.down_revision is None
    # Revision 0003 added the temperature-coefficient spread; 0001 made every other column.
    assert initial._NUMERIC_COLUMNS == tuple(c for c in NUMERIC_COLUMNS if c != "tc_tol_v_per_k")
    # autogenerate does not compare CHECK constraints, so compare their text here
    assert initial._FAMILY_CHECK == models.FAMILY_CHECK_SQL
    assert all(f"'{family}'" in initial._FAMILY_CHECK for family in FAMILIES)
    assert _revisions()[0] == "0001"


def test_parts_and_import_log_tables(empty_library):
    inspector = inspect(empty_library.engine)
    assert set(inspector.get_table_names()) >= {"parts", "import_log", "alembic_version"}
    parts_columns = {column["name"] for column in inspector.get_columns("parts")}
    assert parts_columns >= set(NUMERIC_COLUMNS) | {"part", "family", "source", "created_at", "updated_at"}
    log_columns = {column["name"] for column in inspector.get_columns("import_log")}
    assert log_columns >= {"imported_at", "imported_by", "file_name", "file_sha256",
                           "rows_added", "rows_changed", "rows_unchanged"}


def _with_data(library):
    library.import_parts_file(load_parts_csv(demo_csv_path()))
    return library.part_records()


#: Part columns each revision adds: stepping below it drops them, so they come back empty.
ADDED_PART_COLUMNS: dict[str, tuple[str, ...]] = {"0003": ("tc_tol_v_per_k",)}


def _without_columns_after(records, revision):
    """The records without the part columns that revisions after ``revision`` add."""
    dropped = {c for later, columns in ADDED_PART_COLUMNS.items() if later > revision for c in columns}
    return [{k: v for k, v in record.items() if k not in dropped} for record in records]


def test_upgrade_downgrade_upgrade_on_a_library_with_data(library_path):
    library = open_library(str(library_path))
    before = _with_data(library)
    revisions = _revisions()
    with library.engine.begin() as connection:
        # Step down one revision at a time to the first one: every later revision must
        # keep the parts. (With only the initial revision this loop has nothing to do.)
        for target in reversed(revisions[:-1]):
            command.downgrade(alembic_config(connection), target)
        command.upgrade(alembic_config(connection), "head")
    assert _without_columns_after(library.part_records(), revisions[0]) == _without_columns_after(before, revisions[0])
    assert library.schema_revision() == head_revision()

    with library.engine.begin() as connection:
        command.downgrade(alembic_config(connection), "base")
        assert set(inspect(connection).get_table_names()) <= {"alembic_version"}
        command.upgrade(alembic_config(connection), "head")
    assert library.part_records() == []
    assert _with_data(library) == before


@pytest.mark.parametrize("revision", _revisions()[1:] or [pytest.param(None, marks=pytest.mark.skip(
    reason="only the initial revision exists; nothing to step down to"))])
def test_each_later_revision_steps_down_and_up_keeping_parts(library_path, revision):
    library = open_library(str(library_path))
    before = _with_data(library)
    script = ScriptDirectory.from_config(alembic_config())
    with library.engine.begin() as connection:
        target = script.get_revision(revision).down_revision
        command.downgrade(alembic_config(connection), target)
        command.upgrade(alembic_config(connection), "head")
    assert _without_columns_after(library.part_records(), target) == _without_columns_after(before, target)


def test_downgrade_runs_in_a_transaction(library_path):
    library = open_library(str(library_path))
    _with_data(library)
    with pytest.raises(RuntimeError), library.engine.begin() as connection:
        command.downgrade(alembic_config(connection), "base")
        raise RuntimeError("abort after the downgrade")
    with library.engine.connect() as connection:
        assert connection.execute(text("SELECT COUNT(*) FROM parts")).scalar() > 0
