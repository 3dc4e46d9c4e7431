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
from operator import itemgetter
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
    names = _names(key_columns)
    if key_columns and names is not None:  # the last row of each key, whatever its shape
        rows = {tuple(row.get(name) for name in names): row for row in rows}.values()
    groups: dict[tuple[str, ...], list[tuple]] = {}  # one statement needs one shape
    for row in rows:
        groups.setdefault(tuple(row), []).append(tuple(row.values()))
    result = UpsertResult()
    for columns, values in groups.items():
        result += upsert_values(session, model, columns, values, key_columns, update_columns)
    return result


def upsert_values(
    session: Session,
    model: Any,
    columns: Sequence[str],
    rows: Sequence[Sequence[Any]],
    key_columns: Sequence[str | ColumnElement] = (),
    update_columns: Sequence[str] | None = None,
) -> UpsertResult:
    """``upsert_rows`` for rows given as tuples of the values of ``columns``, in that order
    (every row gives every one): no dict per row, and the statement is built once per
    table and shape for the life of the program (the ingest writes thousands of rows a
    second this way)."""
    table = model.__table__
    columns = tuple(columns)
    rows = _last_row_per_key(columns, rows, key_columns)
    if not rows:
        return UpsertResult()
    session.flush()  # pending ORM changes go first, so our statements see them
    connection = session.connection()
    dialect = connection.dialect.name
    result = UpsertResult()
    for start in range(0, len(rows), BATCH_ROWS):
        batch = rows[start : start + BATCH_ROWS]
        if not key_columns:
            connection.execute(table.insert(), _as_dicts(columns, batch))
            result += UpsertResult(inserted=len(batch))
        elif dialect == "postgresql":
            result += _upsert_postgresql(connection, table, columns, batch, key_columns, update_columns)
        elif dialect == "sqlite":
            # SQLite lets one writer in at a time, and a transaction that read before another
            # one's commit cannot write at all, so counting the keys already there is exact.
            if _names(key_columns) is not None:
                present = _count_present(connection, table, columns, batch, key_columns)
                # None there yet (a first ingest): a plain INSERT, a quarter cheaper for
                # SQLite than one that must look for a conflict on every row.
                _execute_sqlite(connection, table, columns, batch, key_columns, update_columns, plain=not present)
            else:  # an expression key: the table's growth tells the new rows
                before = _count_rows(connection, table)
                _execute_sqlite(connection, table, columns, batch, key_columns, update_columns)
                present = len(batch) - (_count_rows(connection, table) - before)
            changed = bool(_changes(columns, key_columns, update_columns))
            result += UpsertResult(len(batch) - present, *((present, 0) if changed else (0, present)))
        else:
            result += _upsert_one_by_one(connection, table, _as_dicts(columns, batch), key_columns, update_columns)
    if any(column.name in columns for column in table.primary_key.columns):
        sync_id_sequences(connection, [model])
    return result


def _as_dicts(columns: tuple[str, ...], rows: Sequence[Sequence[Any]]) -> list[dict]:
    return [dict(zip(columns, row)) for row in rows]


def _names(key_columns: Sequence[str | ColumnElement]) -> list[str] | None:
    """The key as column names, or ``None`` when it holds an expression."""
    return list(key_columns) if all(isinstance(key, str) for key in key_columns) else None


def _key_of(columns: tuple[str, ...], names: list[str]):
    """A function giving a row's key (a tuple of its key columns' values)."""
    positions = [columns.index(name) if name in columns else None for name in names]
    if None in positions:  # a key column the rows leave out is NULL in every row
        return lambda row: tuple(None if at is None else row[at] for at in positions)
    getter = itemgetter(*positions)
    return (lambda row: (getter(row),)) if len(positions) == 1 else getter


def _last_row_per_key(columns: tuple[str, ...], rows: Sequence[Sequence[Any]], key_columns) -> list:
    # PostgreSQL refuses to update one row twice in one statement.
    names = _names(key_columns)
    if not key_columns or names is None:
        return list(rows)
    key = _key_of(columns, names)
    return list({key(row): row for row in rows}.values())


def _count_present(connection: Connection, table, columns, batch, key_columns) -> int:
    """How many rows of ``batch`` already have their key in ``table`` (SQLite: one
    statement written for sqlite3 itself; SQLAlchemy's expansion of a long ``IN`` list
    costs more than the look-up)."""
    names = _names(key_columns)
    keys = list(map(_key_of(columns, names), batch))
    quote = connection.dialect.identifier_preparer.quote
    if len(names) == 1:
        wanted, places, values = quote(names[0]), ", ".join("?" * len(keys)), [key[0] for key in keys]
    else:
        row = f"({', '.join('?' * len(names))})"
        wanted = f"({', '.join(map(quote, names))})"
        places, values = f"VALUES {', '.join([row] * len(keys))}", [value for key in keys for value in key]
    sql = f"SELECT count(*) FROM {quote(table.name)} WHERE {wanted} IN ({places})"
    return connection.exec_driver_sql(sql, tuple(values)).scalar() or 0


def _count_rows(connection: Connection, table) -> int:
    from sqlalchemy import func, select

    return connection.scalar(select(func.count()).select_from(table)) or 0


def _changes(columns: Sequence[str], key_columns, update_columns) -> list[str]:
    names = set(_names(key_columns) or ())
    return [column for column in columns if column not in names] if update_columns is None else list(update_columns)


def _conflict_target(connection: Connection, table, key_columns) -> list:
    """The key as the ``ON CONFLICT`` target. An expression is written out with its
    constants inline: an index on ``coalesce(serial, '')`` does not match ``coalesce(serial, ?)``."""
    from sqlalchemy import text

    def inline(expression):
        return text(str(expression.compile(dialect=connection.dialect, compile_kwargs={"literal_binds": True, "include_table": False})))

    return [table.columns[key] if isinstance(key, str) else inline(key) for key in key_columns]


def _on_conflict_insert(connection: Connection, table, columns, key_columns, update_columns, source=None):
    """``INSERT … ON CONFLICT`` built with the connection's own dialect (SQLite or
    PostgreSQL); rows come as parameters, or from the ``source`` select when given."""
    if connection.dialect.name == "postgresql":
        from sqlalchemy.dialects.postgresql import insert
    else:
        from sqlalchemy.dialects.sqlite import insert

    statement = insert(table)
    if source is not None:
        statement = statement.from_select(list(columns), source)
    changes = _changes(columns, key_columns, update_columns)
    target = _conflict_target(connection, table, key_columns)
    if changes:
        return statement.on_conflict_do_update(
            index_elements=target, set_={column: statement.excluded[column] for column in changes}
        )
    return statement.on_conflict_do_nothing(index_elements=target)


# The batch is copied into this temporary table, then moved with one INSERT … SELECT.
STAGING_TABLE = "sharpzone_incoming"


def _upsert_postgresql(connection: Connection, table, columns, batch, key_columns, update_columns) -> UpsertResult:
    """PostgreSQL's own bulk path: ``COPY`` the batch into a temporary table, then one
    ``INSERT … SELECT … ON CONFLICT``. A statement with thousands of parameters instead
    costs more to build and parse than the insert itself."""
    from sqlalchemy import column, literal_column, select
    from sqlalchemy import table as table_clause

    # xmax is 0 for a row this statement inserted and the updating transaction otherwise;
    # rows left alone by DO NOTHING return nothing.
    inserted_flag = literal_column("(xmax = 0)").label("inserted")
    if _python_defaults_left_out(table, columns):  # the ordinary path fills them in
        statement = _on_conflict_insert(connection, table, columns, key_columns, update_columns)
        flags = connection.execute(statement.returning(inserted_flag), _as_dicts(columns, batch)).scalars().all()
    else:
        _copy_to_staging(connection, table, columns, batch)
        staging = table_clause(STAGING_TABLE, column("sharpzone_ordinal"), *(column(name) for name in columns))
        source = select(*(staging.c[name] for name in columns)).order_by(staging.c.sharpzone_ordinal)
        statement = _on_conflict_insert(connection, table, columns, key_columns, update_columns, source=source)
        flags = connection.execute(statement.returning(inserted_flag)).scalars().all()
        connection.exec_driver_sql(f"DROP TABLE {STAGING_TABLE}")
    inserted = sum(1 for flag in flags if flag)
    if _changes(columns, key_columns, update_columns):
        return UpsertResult(inserted=inserted, updated=len(flags) - inserted)
    return UpsertResult(inserted=inserted, kept=len(batch) - inserted)


def _python_defaults_left_out(table, names: Sequence[str]) -> bool:
    """Whether a column the rows leave out has a default only SQLAlchemy knows."""
    return any(column.default is not None and column.server_default is None and column.name not in names
               for column in table.columns)


def _copy_to_staging(connection: Connection, table, columns, batch) -> None:
    """A temporary table shaped like ``table``'s ``columns`` (plus the rows' order), filled
    by ``COPY`` through psycopg."""
    quote = connection.dialect.identifier_preparer.quote
    names = ", ".join(quote(name) for name in columns)
    connection.exec_driver_sql(
        f"CREATE TEMPORARY TABLE {STAGING_TABLE} ON COMMIT DROP AS "
        f"SELECT 0 AS sharpzone_ordinal, {names} FROM {quote(table.name)} WITH NO DATA"
    )
    as_stored = _storage_form(table, columns)
    cursor = connection.connection.driver_connection.cursor()
    try:
        with cursor.copy(f"COPY {STAGING_TABLE} (sharpzone_ordinal, {names}) FROM STDIN") as copy:
            for ordinal, row in enumerate(batch):
                copy.write_row((ordinal, *as_stored(row)))
    finally:
        cursor.close()


# (table, columns, key, update columns) → the SQL text sqlite3 takes and the parameter order;
# ``None`` when the statement needs a Python-side default filled in.
_SQLITE_STATEMENTS: dict[tuple, tuple[str, tuple[int, ...]] | None] = {}


def _execute_sqlite(connection: Connection, table, columns, batch, key_columns, update_columns,
                    plain: bool = False) -> None:
    """Hand the rows straight to sqlite3's executemany: SQLAlchemy's per-row parameter
    processing costs more than SQLite's insert itself at ingest sizes. Rows that leave
    out a column with a Python-side default go the ordinary way, which fills it in.
    ``plain``: an INSERT without ``ON CONFLICT`` (the caller knows no key is there)."""
    def statement():
        return table.insert() if plain else _on_conflict_insert(connection, table, columns, key_columns,
                                                                update_columns)

    cache_key = (table, columns, tuple(map(str, key_columns)),
                 None if update_columns is None else tuple(update_columns), plain)
    if cache_key not in _SQLITE_STATEMENTS:
        compiled = statement().values({name: None for name in columns}).compile(dialect=connection.dialect)
        order = compiled.positiontup
        _SQLITE_STATEMENTS[cache_key] = ((str(compiled), tuple(columns.index(name) for name in order))
                                         if set(order) <= set(columns) else None)
    prepared = _SQLITE_STATEMENTS[cache_key]
    if prepared is None:
        connection.execute(statement(), _as_dicts(columns, batch))
        return
    sql, order = prepared
    parameters = map(_storage_form(table, columns), batch)
    if order != tuple(range(len(columns))):
        parameters = map(itemgetter(*order), parameters)
    connection.exec_driver_sql(sql, list(parameters))


def _storage_form(table, columns: Sequence[str]):
    """A function giving a row's values as the drivers take them below SQLAlchemy
    (sqlite3's executemany, psycopg's COPY): datetimes as wall-clock text in SQLAlchemy's
    storage form, so rows written this way read back like any other. Only the columns of
    a date-and-time type are looked at."""
    from sqlalchemy import DateTime

    stamps = [at for at, name in enumerate(columns) if isinstance(table.columns[name].type, DateTime)]
    if not stamps:
        return tuple

    def as_stored(row):
        values = list(row)
        for at in stamps:
            value = values[at]
            if isinstance(value, dt.datetime):
                values[at] = value.replace(tzinfo=None).isoformat(sep=" ", timespec="microseconds")
        return values

    return as_stored


def _upsert_one_by_one(connection: Connection, table, batch, key_columns, update_columns) -> UpsertResult:
    from sqlalchemy import and_, select

    from sharpzone.errors import CatalogError

    names = _names(key_columns)
    if names is None:
        raise CatalogError(f"{connection.dialect.name} catalogues cannot match rows on an expression index")
    changes = _changes(list(batch[0]), key_columns, update_columns)
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
