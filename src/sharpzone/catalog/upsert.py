"""Insert-or-update of many rows in one statement, with each dialect's own means.

SQLite and PostgreSQL both speak ``INSERT … ON CONFLICT (key) DO UPDATE``; SQLAlchemy spells
it per dialect. Other databases fall back to a row-by-row merge (correct, slower).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from sqlalchemy.orm import Session


def upsert_rows(session: Session, model, rows: Sequence[dict], key_columns: Sequence[str],
                update_columns: Sequence[str] | None = None) -> None:
    """Insert ``rows`` (dicts of column values) into ``model``'s table; a row whose
    ``key_columns`` match a stored one (a unique constraint) updates ``update_columns``
    instead (default: every given column but the key)."""
    if not rows:
        return
    dialect = session.get_bind().dialect.name
    columns = update_columns if update_columns is not None else [c for c in rows[0] if c not in key_columns]
    if dialect in ("sqlite", "postgresql"):
        if dialect == "sqlite":
            from sqlalchemy.dialects.sqlite import insert
        else:
            from sqlalchemy.dialects.postgresql import insert
        statement = insert(model)
        statement = statement.on_conflict_do_update(
            index_elements=list(key_columns), set_={name: statement.excluded[name] for name in columns}
        )
        if dialect == "sqlite":
            # Hand the rows straight to the driver's executemany: SQLAlchemy's per-row
            # parameter processing costs more than SQLite's insert itself at ingest sizes.
            connection = session.connection()
            compiled = statement.values({name: None for name in rows[0]}).compile(dialect=connection.dialect)
            order = compiled.positiontup
            connection.exec_driver_sql(str(compiled), [tuple(_driver_value(row[name]) for name in order) for row in rows])
            return
        session.execute(statement, list(rows))
        return
    from sqlalchemy import select

    for row in rows:
        existing = session.scalars(
            select(model).filter_by(**{key: row[key] for key in key_columns})).first()
        if existing is None:
            session.add(model(**row))
        else:
            for name in columns:
                setattr(existing, name, row[name])
    session.flush()


def _driver_value(value):
    """Values the sqlite3 driver does not take as they are (datetimes) in SQLAlchemy's
    storage form for SQLite, so rows written here read back like any other."""
    import datetime as dt

    if isinstance(value, dt.datetime):
        return value.isoformat(sep=" ", timespec="microseconds")
    return value
