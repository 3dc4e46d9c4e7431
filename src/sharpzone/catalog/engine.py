"""Opening a catalogue: the engine, the unit of work, and database errors as our errors.

Typical use (one unit of work per command or ingest batch, committing once)::

    from sharpzone.catalog.engine import open_catalog

    with open_catalog(location) as catalog:          # creates / upgrades as needed
        with catalog.session_scope() as session:     # commit on success, rollback on error
            add_lens(session, "Altamira 35/2", focal_min_mm=35, max_aperture_wide=2)

``session_scope(location)`` does both in one ``with`` for a single unit of work.
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from contextlib import ExitStack, contextmanager
from pathlib import Path
from typing import TYPE_CHECKING

from sharpzone.catalog.location import (
    ENV_VAR,
    display_url,
    refuse_raw_at_in_password,
    resolve_catalog_url,
    scrub_secrets,
    sqlite_path,
)
from sharpzone.errors import CatalogError, Conflict, SharpzoneError

if TYPE_CHECKING:
    from sqlalchemy.engine import Engine
    from sqlalchemy.orm import Session

# How long a SQLite writer waits for another one before giving up with "database is locked".
SQLITE_BUSY_TIMEOUT_MS = 30_000
# Execution option: take SQLite's write lock when the transaction begins (see session_scope).
WRITE_LOCK_OPTION = "sharpzone_write_lock"


def create_catalog_engine(url: str, *, enforce_foreign_keys: bool = True, lock_on_begin: bool = False) -> Engine:
    """A SQLAlchemy engine for ``url`` with our connection settings.

    SQLite: WAL journal (readers do not block the writer), foreign keys on, a 30 s busy
    timeout, and real ``BEGIN`` statements so DDL and savepoints are transactional.
    Migrations pass ``enforce_foreign_keys=False``: SQLite batch mode rebuilds tables, and
    dropping the old copy with foreign keys on would fire ``ON DELETE CASCADE``.
    ``lock_on_begin`` takes SQLite's write lock when a transaction begins, so two programs
    creating or upgrading one catalogue at once take turns instead of failing.
    """
    from sqlalchemy import create_engine, event
    from sqlalchemy.exc import ArgumentError, NoSuchModuleError

    refuse_raw_at_in_password(url)
    try:
        engine = create_engine(url, pool_pre_ping=not url.startswith("sqlite"))
    except NoSuchModuleError as error:
        raise CatalogError(
            f"catalogue URL {display_url(url)!r} names a database sharpzone cannot reach: {error}",
            hint="for PostgreSQL install the extra: pip install 'sharpzone[postgres]'",
        ) from None
    except ModuleNotFoundError as error:
        raise CatalogError(
            f"the database driver for {display_url(url)!r} is not installed ({error.name})",
            hint="for PostgreSQL install the extra: pip install 'sharpzone[postgres]'",
        ) from None
    except (ArgumentError, ValueError):  # ValueError: a port that is not a number
        raise CatalogError(f"catalogue URL {display_url(url)!r} is not a database URL") from None

    if engine.dialect.name == "sqlite":
        foreign_keys = "ON" if enforce_foreign_keys else "OFF"

        @event.listens_for(engine, "connect")
        def _configure_sqlite(dbapi_connection, _record) -> None:
            # Let SQLAlchemy, not the sqlite3 module, decide where transactions begin.
            dbapi_connection.isolation_level = None
            cursor = dbapi_connection.cursor()
            try:
                cursor.execute(f"PRAGMA busy_timeout = {SQLITE_BUSY_TIMEOUT_MS}")
                cursor.execute(f"PRAGMA foreign_keys = {foreign_keys}")
                try:
                    cursor.execute("PRAGMA journal_mode = WAL")
                except Exception:  # noqa: BLE001 - a read-only file keeps its journal mode
                    pass
            finally:
                cursor.close()

        @event.listens_for(engine, "begin")
        def _begin(connection) -> None:
            immediate = lock_on_begin or connection.get_execution_options().get(WRITE_LOCK_OPTION, False)
            connection.exec_driver_sql("BEGIN IMMEDIATE" if immediate else "BEGIN")

    return engine


def translate_database_error(error: BaseException, url: str) -> SharpzoneError:
    """A user-facing error for a database exception, with a hint that names the fix."""
    from sqlalchemy import exc

    shown = display_url(url)
    # The driver words these messages; make sure none repeats the URL's password.
    detail = scrub_secrets(" ".join(str(getattr(error, "orig", None) or error).split()), url)
    lowered = detail.lower()
    path = sqlite_path(url) if url.startswith("sqlite") else None
    where = str(path) if path else shown
    if isinstance(error, exc.IntegrityError):
        return Conflict(f"the catalogue refused the change: {detail}")
    if "readonly" in lowered or "read-only" in lowered:
        return CatalogError(f"catalogue is read-only: {where}", hint=f"check permissions of {where} and its folder")
    if "database is locked" in lowered or "database is busy" in lowered:
        return CatalogError(
            f"catalogue {where} is busy: database is locked by another program",
            hint="wait for the other sharpzone run to finish, then try again",
        )
    if "unable to open database file" in lowered:
        return CatalogError(f"cannot open catalogue {where}", hint="check that its folder exists and is writable")
    if "file is not a database" in lowered or "malformed" in lowered:
        return CatalogError(f"{where} is not a sharpzone catalogue or is damaged ({detail})")
    if "password authentication failed" in lowered or "no password supplied" in lowered:
        return CatalogError(
            f"catalogue {where}: the server refused the login ({detail})",
            hint="give the password in the URL, in PGPASSWORD or in ~/.pgpass; README: shared catalogue on PostgreSQL",
        )
    if "fatal" in lowered and "does not exist" in lowered:
        return CatalogError(
            f"catalogue {where}: the server has no such database or user ({detail})",
            hint="the studio's database owner creates them once, e.g. createdb -O USER DATABASE",
        )
    if "no schema has been selected" in lowered or "permission denied" in lowered:
        return CatalogError(
            f"catalogue {where}: the database user may not do this ({detail})",
            hint="the studio's database owner can grant it, e.g. GRANT CREATE ON SCHEMA public TO the user",
        )
    if "connection refused" in lowered or "could not connect" in lowered or "failed to resolve host" in lowered:
        return CatalogError(
            f"cannot reach the catalogue server for {where} ({detail})",
            hint="check the host and port in the URL and that the server is running",
        )
    if "no such table" in lowered or "does not exist" in lowered:
        return CatalogError(f"catalogue {where} is incomplete or not a sharpzone catalogue ({detail})")
    return CatalogError(f"catalogue {where}: {detail}")


class Catalog:
    """An open catalogue: its URL, engine and a unit-of-work helper. Use ``open_catalog``."""

    def __init__(self, url: str, engine: Engine) -> None:
        from sqlalchemy.orm import sessionmaker

        self.url = url
        self.engine = engine
        # Rows stay readable after the commit so commands can render what they changed.
        self._sessions = sessionmaker(bind=engine, expire_on_commit=False)

    @property
    def display_url(self) -> str:
        """The URL with any password masked."""
        return display_url(self.url)

    @property
    def path(self) -> Path | None:
        """The SQLite file, or ``None`` for a server database."""
        return sqlite_path(self.url)

    @contextmanager
    def session_scope(self, *, write: bool = False) -> Iterator[Session]:
        """One unit of work: commits once at the end, rolls back everything on any error.

        ``write=True`` is for a unit that reads and then writes while other programs may
        write too (an ingest batch): on SQLite it takes the write lock at the start, so
        runs wait for each other (busy timeout) instead of failing because what they read
        went stale. PostgreSQL needs nothing of the kind.
        Database errors come out as ``CatalogError`` or ``Conflict`` with a hint.
        """
        from sqlalchemy.exc import DBAPIError

        bind = self.engine.execution_options(**{WRITE_LOCK_OPTION: True}) if write else self.engine
        session = self._sessions(bind=bind)
        try:
            yield session
            session.commit()
        except DBAPIError as error:
            session.rollback()
            raise translate_database_error(error, self.url) from error
        except BaseException:
            session.rollback()
            raise
        finally:
            session.close()

    def close(self) -> None:
        self.engine.dispose()


@contextmanager
def open_catalog(location: str | os.PathLike | None = None, *, write: bool = True) -> Iterator[Catalog]:
    """Open (creating or upgrading as needed) the catalogue at ``location``.

    ``location`` is a file path or SQLAlchemy URL; ``None`` means ``SHARPZONE_CATALOG`` or
    the default file in the user data folder. A new catalogue is created at the newest
    schema with the shipped sensor formats; an older one is backed up and upgraded; one
    newer than this program is refused (see ``sharpzone.catalog.migrate.prepare_catalog``).

    ``write=False`` is for commands that only read: a catalogue file the user named (by
    ``location`` or ``SHARPZONE_CATALOG``) that does not exist is an error ("no catalogue at
    …") instead of a new empty one, and a file in a read-only folder, or itself read-only,
    is opened read-only (SQLite's immutable mode: no journal files are needed).
    """
    from sharpzone.collector import collections_paused, existing_objects_frozen

    with ExitStack() as open_while:
        # Loading the database layer and the models makes objects that live on: the
        # collector is paused meanwhile and they stay frozen while the catalogue is open, so
        # none of its passes walks them (``sharpzone.collector``).
        with collections_paused():
            from sqlalchemy.exc import DBAPIError

            import sharpzone.catalog.models  # noqa: F401 - every use of a catalogue needs them
            from sharpzone.catalog.migrate import prepare_catalog

            url = resolve_catalog_url(location)
            if not write:
                url = _url_for_reading(url, named=location is not None or bool(os.environ.get(ENV_VAR)))
            else:
                _make_sqlite_folder(url)
            prepare_catalog(url)
            catalog = Catalog(url, create_catalog_engine(url))
            open_while.callback(catalog.close)
            open_while.enter_context(existing_objects_frozen())
        try:
            yield catalog
        except DBAPIError as error:
            raise translate_database_error(error, url) from error


@contextmanager
def session_scope(location: str | os.PathLike | None = None, *, write: bool = True) -> Iterator[Session]:
    """``open_catalog`` and one ``Catalog.session_scope`` in a single ``with``."""
    with open_catalog(location, write=write) as catalog, catalog.session_scope() as session:
        yield session


def read_only_url(path: str | os.PathLike) -> str:
    """A SQLite URL that reads the file at ``path`` without writing anything beside it."""
    from urllib.parse import quote

    return f"sqlite:///file:{quote(str(Path(path).resolve()))}?mode=ro&immutable=1&uri=true"


def _writable(path: Path) -> bool:
    effective = os.access in os.supports_effective_ids
    return os.access(path, os.W_OK, effective_ids=effective)


def _url_for_reading(url: str, *, named: bool) -> str:
    path = sqlite_path(url)
    if path is None:
        return url
    if not path.exists():
        if named:
            raise CatalogError(f"no catalogue at {path}",
                               hint="a command that writes (such as 'sharpzone ingest') creates it")
        _make_sqlite_folder(url)
        return url
    if not _writable(path) or not _writable(path.parent):
        return read_only_url(path)
    return url


def _make_sqlite_folder(url: str) -> None:
    path = sqlite_path(url)
    if path is None:
        return
    if path.is_dir():
        raise CatalogError(f"catalogue path {path} is a folder", hint="give a file name such as catalog.sqlite")
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
    except OSError as error:
        raise CatalogError(
            f"cannot create the folder for catalogue {path}: {error.strerror}",
            hint=f"check permissions of {path.parent}",
        ) from None
