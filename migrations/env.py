"""Alembic environment of the parts library: the only way its schema is made.

The library (``selector.catalog.schema_revision``) runs Alembic programmatically and hands over an
open connection in ``config.attributes["connection"]``; the ``alembic`` command line may
instead give ``sqlalchemy.url``. ``render_as_batch=True`` lets SQLite alter tables by
copy-and-move, which it needs for most schema changes.
"""

from __future__ import annotations

from alembic import context
from sqlalchemy import engine_from_config, pool

from selector.catalog.models import Base

target_metadata = Base.metadata


def _configure_and_run(connection) -> None:
    context.configure(
        connection=connection,
        target_metadata=target_metadata,
        render_as_batch=True,
        compare_type=True,
    )
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_offline() -> None:
    """Write the migration SQL for ``sqlalchemy.url`` without a connection."""
    context.configure(
        url=context.config.get_main_option("sqlalchemy.url"),
        target_metadata=target_metadata,
        literal_binds=True,
        render_as_batch=True,
    )
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_online() -> None:
    """Migrate through the given connection, or one made from ``sqlalchemy.url``."""
    connection = context.config.attributes.get("connection")
    if connection is not None:
        _configure_and_run(connection)
        return
    engine = engine_from_config(
        context.config.get_section(context.config.config_ini_section, {}),
        prefix="sqlalchemy.",
        poolclass=pool.NullPool,
    )
    with engine.connect() as new_connection:
        _configure_and_run(new_connection)


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
