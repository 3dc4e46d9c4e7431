"""Alembic environment for the sharpzone catalogue.

Run through ``sharpzone.catalog.migrate``, which passes an open connection in
``config.attributes["connection"]``; a URL in the ``sqlalchemy.url`` option works too.
SQLite uses batch mode, since it cannot alter most of a table in place.
"""

from __future__ import annotations

import warnings

from alembic import context

from sharpzone.catalog.models import Base

target_metadata = Base.metadata


def _configure_and_run(connection) -> None:
    context.configure(
        connection=connection,
        target_metadata=target_metadata,
        render_as_batch=connection.dialect.name == "sqlite",
        compare_type=True,
    )
    with context.begin_transaction(), warnings.catch_warnings():
        # SQLite's batch mode copies a table after reflecting it and the tables its foreign
        # keys name; reflection cannot read the body table's expression index and says so.
        # That index is never copied: 0003 and 0004 drop it before the body table is copied
        # and make it again after. So the notice would only puzzle whoever upgrades.
        warnings.filterwarnings("ignore", message="Skipped unsupported reflection of expression-based index "
                                "uq_body_exif_identity")
        context.run_migrations()


def run_migrations_online() -> None:
    connection = context.config.attributes.get("connection")
    if connection is not None:
        _configure_and_run(connection)
        return
    from sharpzone.catalog.engine import create_catalog_engine

    engine = create_catalog_engine(context.config.get_main_option("sqlalchemy.url"), enforce_foreign_keys=False)
    try:
        with engine.begin() as connection:
            _configure_and_run(connection)
    finally:
        engine.dispose()


def run_migrations_offline() -> None:
    context.configure(
        url=context.config.get_main_option("sqlalchemy.url"),
        target_metadata=target_metadata,
        literal_binds=True,
        render_as_batch=True,
    )
    with context.begin_transaction():
        context.run_migrations()


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
