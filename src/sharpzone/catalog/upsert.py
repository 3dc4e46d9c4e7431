"""Writing many rows at once, each database in its own way.

``upsert_rows`` is the one place where the catalogue writes rows in bulk (bundle import,
ingest batches). SQLite and PostgreSQL both have ``INSERT … ON CONFLICT (key) DO UPDATE``,
but SQLAlchemy builds it with each dialect's own ``insert``; anything else gets a plain
look-up-then-write loop. SQLite gets the rows through sqlite3's executemany. PostgreSQL
gets them by ``COPY`` into a temporary table and one ``INSERT … SELECT``, whose
``RETURNING (xmax = 0)`` tells inserted rows from updated ones exactly, even while other
programs write to the same catalogue.

PostgreSQL hands out ids from a sequence that does not notice ids written explicitly;
``sync_id_sequences`` moves each sequence past the largest id, and ``upsert_rows`` calls it
whenever the rows carry their own ids.
"""

from __future__ import annotations

import datetime as dt

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from sqlalchemy.engine import Connection
    from sqlalchemy.orm import Session
    from sqlalchemy.sql import ColumnElement

# Rows per statement: keeps PostgreSQL under its 65,535 bind parameters for our widest table.
BATCH_ROWS = 1000


@dataclass(frozen=True)
class UpsertResult:
    """How many rows were new (``inserted``), changed an existing row (``updated``), or met
    an existing row and were left alone because there was nothing to update (``kept``)."""

    inserted: int = 0
    updated: int = 0
    kept: int = 0

    def __add__(self, other: UpsertResult) -> UpsertResult:
        return UpsertResult(self.inserted + other.inserted, self.updated + other.updated, self.kept + other.kept)


def upsert_rows(
    session: Session,
    model: Any,
    rows: Iterable[Mapping[str, Any]],
    key_columns: Sequence[str | ColumnElement] = (),
    update_columns: Sequence[str] | None = None,
) -> UpsertResult:
    """Insert ``rows`` (dicts of column name → value) into ``model``'s table in the session's
    transaction; a row whose ``key_columns`` match an existing row updates that row instead.

    ``key_columns`` name a unique constraint or unique index: column names, or SQL
    expressions for an expression index (``func.coalesce(Body.serial, "")``); empty means
    plain inserts (a duplicate is then a ``Conflict`` at commit). ``update_columns`` are
    the columns an existing row takes from the new one: ``None`` means every column the
    row gives except the keys, ``()`` leaves existing rows as they are (counted as kept).
    Within one call a later row with the same (named) key wins. Column defaults apply to
    columns a row leaves out; rows may leave out different columns. Rows are written in
    the order given: where other programs may write the same keys at the same time, give
    them in key order, so that both lock rows in one order and wait instead of deadlocking.
    """
    table = model.__table__
    rows = _last_row_per_key([dict(row) for row in rows], key_columns)
    if not rows:
        return UpsertResult()
    session.flush()  # pending ORM changes go first, so our statements see them
    connection = session.connection()
    dialect = connection.dialect.name
    result = UpsertResult()
    for batch in _batches_of_same_columns(rows):
        if not key_columns:
            connection.execute(table.insert(), batch)
            result += UpsertResult(inserted=len(batch))
        elif dialect == "postgresql":
            result += _upsert_postgresql(connection, table, batch, key_columns, update_columns)
        elif dialect == "sqlite":
            # SQLite lets one writer in at a time, and a transaction that read before another
            # one's commit cannot write at all, so counting the keys already there is exact.
            statement = _on_conflict_insert(connection, table, batch, key_columns, update_columns)
            if _names(key_columns) is not None:
                present = _count_present(connection, table, batch, key_columns)
                _execute_sqlite(connection, statement, batch)
            else:  # an expression key: the table's growth tells the new rows
                before = _count_rows(connection, table)
                _execute_sqlite(connection, statement, batch)
                present = len(batch) - (_count_rows(connection, table) - before)
            changed = bool(_changes(batch[0], key_columns, update_columns))
            result += UpsertResult(len(batch) - present, *((present, 0) if changed else (0, present)))
        else:
            result += _upsert_one_by_one(connection, table, batch, key_columns, update_columns)
    if any(column.name in rows[0] for column in table.primary_key.columns):
        sync_id_sequences(connection, [model])
    return result


def _names(key_columns: Sequence[str | ColumnElement]) -> list[str] | None:
    """The key as column names, or ``None`` when it holds an expression."""
    return list(key_columns) if all(isinstance(key, str) for key in key_columns) else None


def _last_row_per_key(rows: list[dict], key_columns: Sequence[str | ColumnElement]) -> list[dict]:
    # PostgreSQL refuses to update one row twice in one statement.
    names = _names(key_columns)
    if not key_columns or names is None:
        return rows
    return list({tuple(row.get(name) for name in names): row for row in rows}.values())


def _batches_of_same_columns(rows: list[dict]) -> Iterable[list[dict]]:
    """Rows grouped by the columns they give (one statement needs one shape), in pieces of
    ``BATCH_ROWS``."""
    groups: dict[tuple[str, ...], list[dict]] = {}
    for row in rows:
        groups.setdefault(tuple(sorted(row)), []).append(row)
    for group in groups.values():
        for start in range(0, len(group), BATCH_ROWS):
            yield group[start : start + BATCH_ROWS]


def _count_present(connection: Connection, table, batch: list[dict], key_columns) -> int:
    """How many rows of ``batch`` already have their key in ``table``."""
    from sqlalchemy import func, select, tuple_

    names = _names(key_columns)
    keys = [tuple(row.get(name) for name in names) for row in batch]
    columns = [table.columns[name] for name in names]
    match = columns[0].in_([key[0] for key in keys]) if len(columns) == 1 else tuple_(*columns).in_(keys)
    return connection.scalar(select(func.count()).select_from(table).where(match)) or 0


def _count_rows(connection: Connection, table) -> int:
    from sqlalchemy import func, select

    return connection.scalar(select(func.count()).select_from(table)) or 0


def _changes(row: Mapping[str, Any], key_columns, update_columns) -> list[str]:
    names = set(_names(key_columns) or ())
    columns = [column for column in row if column not in names] if update_columns is None else list(update_columns)
    return columns


def _conflict_target(connection: Connection, table, key_columns) -> list:
    """The key as the ``ON CONFLICT`` target. An expression is written out with its
    constants inline: an index on ``coalesce(serial, '')`` does not match ``coalesce(serial, ?)``."""
    from sqlalchemy import text

    def inline(expression):
        return text(str(expression.compile(dialect=connection.dialect, compile_kwargs={"literal_binds": True, "include_table": False})))

    return [table.columns[key] if isinstance(key, str) else inline(key) for key in key_columns]


def _on_conflict_insert(connection: Connection, table, batch, key_columns, update_columns, source=None):
    """``INSERT … ON CONFLICT`` built with the connection's own dialect (SQLite or
    PostgreSQL); rows come as parameters, or from the ``source`` select when given."""
    if connection.dialect.name == "postgresql":
        from sqlalchemy.dialects.postgresql import insert
    else:
        from sqlalchemy.dialects.sqlite import insert

    statement = insert(table)
    if source is not None:
        statement = statement.from_select(list(batch[0]), source)
    changes = _changes(batch[0], key_columns, update_columns)
    target = _conflict_target(connection, table, key_columns)
    if changes:
        return statement.on_conflict_do_update(
            index_elements=target, set_={column: statement.excluded[column] for column in changes}
        )
    return statement.on_conflict_do_nothing(index_elements=target)


# The batch is copied into this temporary table, then moved with one INSERT … SELECT.
STAGING_TABLE = "sharpzone_incoming"


def _upsert_postgresql(connection: Connection, table, batch, key_columns, update_columns) -> UpsertResult:
    """PostgreSQL's own bulk path: ``COPY`` the batch into a temporary table, then one
    ``INSERT … SELECT … ON CONFLICT``. A statement with thousands of parameters instead
    costs more to build and parse than the insert itself."""
    from sqlalchemy import column, literal_column, select
    from sqlalchemy import table as table_clause

    # xmax is 0 for a row this statement inserted and the updating transaction otherwise;
    # rows left alone by DO NOTHING return nothing.
    inserted_flag = literal_column("(xmax = 0)").label("inserted")
    names = list(batch[0])
    if _python_defaults_left_out(table, names):  # the ordinary path fills them in
        statement = _on_conflict_insert(connection, table, batch, key_columns, update_columns)
        flags = connection.execute(statement.returning(inserted_flag), batch).scalars().all()
    else:
        _copy_to_staging(connection, table, names, batch)
        staging = table_clause(STAGING_TABLE, column("sharpzone_ordinal"), *(column(name) for name in names))
        source = select(*(staging.c[name] for name in names)).order_by(staging.c.sharpzone_ordinal)
        statement = _on_conflict_insert(connection, table, batch, key_columns, update_columns, source=source)
        flags = connection.execute(statement.returning(inserted_flag)).scalars().all()
        connection.exec_driver_sql(f"DROP TABLE {STAGING_TABLE}")
    inserted = sum(1 for flag in flags if flag)
    if _changes(batch[0], key_columns, update_columns):
        return UpsertResult(inserted=inserted, updated=len(flags) - inserted)
    return UpsertResult(inserted=inserted, kept=len(batch) - inserted)


def _python_defaults_left_out(table, names: list[str]) -> bool:
    """Whether a column the rows leave out has a default only SQLAlchemy knows."""
    return any(column.default is not None and column.server_default is None and column.name not in names
               for column in table.columns)


def _copy_to_staging(connection: Connection, table, names: list[str], batch: list[dict]) -> None:
    """A temporary table shaped like ``table``'s ``names`` columns (plus the rows' order),
    filled by ``COPY`` through psycopg."""
    quote = connection.dialect.identifier_preparer.quote
    columns = ", ".join(quote(name) for name in names)
    connection.exec_driver_sql(
        f"CREATE TEMPORARY TABLE {STAGING_TABLE} ON COMMIT DROP AS "
        f"SELECT 0 AS sharpzone_ordinal, {columns} FROM {quote(table.name)} WITH NO DATA"
    )
    cursor = connection.connection.driver_connection.cursor()
    try:
        with cursor.copy(f"COPY {STAGING_TABLE} (sharpzone_ordinal, {columns}) FROM STDIN") as copy:
            for ordinal, row in enumerate(batch):
                copy.write_row((ordinal, *(_storage_value(row[name]) for name in names)))
    finally:
        cursor.close()


def _execute_sqlite(connection: Connection, statement, batch: list[dict]) -> None:
    """Hand the rows straight to sqlite3's executemany: SQLAlchemy's per-row parameter
    processing costs more than SQLite's insert itself at ingest sizes. Rows that leave
    out a column with a Python-side default go the ordinary way, which fills it in."""
    compiled = statement.values({name: None for name in batch[0]}).compile(dialect=connection.dialect)
    order = compiled.positiontup
    if not set(order) <= set(batch[0]):
        connection.execute(statement, batch)
        return
    connection.exec_driver_sql(str(compiled), [tuple(_storage_value(row[name]) for name in order) for row in batch])


def _storage_value(value):
    """A value as the drivers take it below SQLAlchemy (sqlite3's executemany, psycopg's
    COPY): datetimes as wall-clock text in SQLAlchemy's storage form, so rows written this
    way read back like any other."""
    if isinstance(value, dt.datetime):
        return value.replace(tzinfo=None).isoformat(sep=" ", timespec="microseconds")
    return value


def _upsert_one_by_one(connection: Connection, table, batch, key_columns, update_columns) -> UpsertResult:
    from sqlalchemy import and_, select

    from sharpzone.errors import CatalogError

    names = _names(key_columns)
    if names is None:
        raise CatalogError(f"{connection.dialect.name} catalogues cannot match rows on an expression index")
    changes = _changes(batch[0], key_columns, update_columns)
    result = UpsertResult()
    for row in batch:
        match = and_(*(table.columns[name].is_(None) if row.get(name) is None else table.columns[name] == row[name]
                       for name in names))
        if connection.execute(select(table.columns[names[0]]).where(match).limit(1)).first() is None:
            connection.execute(table.insert(), row)
            result += UpsertResult(inserted=1)
        elif changes:
            connection.execute(table.update().where(match).values({column: row[column] for column in changes}))
            result += UpsertResult(updated=1)
        else:
            result += UpsertResult(kept=1)
    return result


def sync_id_sequences(connection: Connection, models: Iterable[Any] | None = None) -> None:
    """On PostgreSQL, move each table's id sequence past the largest id in it, so the next
    row added without an id does not collide with one written with an explicit id.
    Does nothing on other databases (SQLite picks max(id) + 1 by itself)."""
    if connection.dialect.name != "postgresql":
        return
    from sqlalchemy import text

    from sharpzone.catalog.models import TABLES_IN_DEPENDENCY_ORDER

    for model in models or TABLES_IN_DEPENDENCY_ORDER:
        table = model.__tablename__
        # setval(…, max + 1, false): the next nextval() returns max + 1 (1 for an empty table).
        connection.execute(text(
            f"SELECT setval(pg_get_serial_sequence('{table}', 'id'), "
            f"coalesce((SELECT max(id) FROM {table}), 0) + 1, false)"
        ))
