"""The migration runner: Alembic driven from Python, with the scripts shipped in the package.

No ``alembic.ini`` is needed: ``alembic_config`` points Alembic at the installed
``sharpzone.migrations`` folder. Developers add a revision with::

    python -m sharpzone.catalog.migrate revision -m "what changes"

(see DEVELOPERS.md); ``upgrade``, ``current`` and ``heads`` are there for inspection.
"""

from __future__ import annotations

import argparse
import datetime as dt
import re
import sqlite3
import tempfile
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING

from sharpzone.catalog.location import display_url, sqlite_path, sqlite_url
from sharpzone.errors import CatalogError

if TYPE_CHECKING:
    from alembic.config import Config
    from alembic.script import ScriptDirectory
    from sqlalchemy.engine import Connection


@dataclass(frozen=True)
class PreparedCatalog:
    """What ``prepare_catalog`` did: created a new catalogue, upgraded one (with the backup
    it made first, for a SQLite file), or nothing (already current)."""

    revision: str
    created: bool = False
    upgraded_from: str | None = None
    backup_path: Path | None = None


def migrations_folder() -> Path:
    """The folder holding ``env.py`` and ``versions/``, wherever the package is installed."""
    return Path(str(resources.files("sharpzone.migrations")))


def alembic_config() -> Config:
    """An Alembic ``Config`` for our migrations; hand it a connection via ``attributes``."""
    from alembic.config import Config

    config = Config()
    config.set_main_option("script_location", str(migrations_folder()))
    return config


def script_directory() -> ScriptDirectory:
    from alembic.script import ScriptDirectory

    return ScriptDirectory.from_config(alembic_config())


_REVISION_FILE = re.compile(r"^(\d{4})_\w+\.py$")


def head_revision() -> str:
    """The newest schema revision this program knows.

    Read from the revision file names (``NNNN_what.py``, one line of history, see
    DEVELOPERS.md) rather than by loading Alembic, which would cost every command that
    opens a catalogue a tenth of a second; a test checks that Alembic agrees.
    """
    numbers = [match.group(1) for name in (migrations_folder() / "versions").iterdir()
               if (match := _REVISION_FILE.match(name.name))]
    if not numbers:
        raise CatalogError(f"no schema revisions found in {migrations_folder() / 'versions'}")
    return max(numbers)


def known_revisions() -> list[str]:
    """Every revision this program knows, oldest first."""
    return [script.revision for script in reversed(list(script_directory().walk_revisions()))]


def current_revision(connection: Connection) -> str | None:
    """The revision stamped in the database, or ``None`` when it has none.

    Alembic keeps it in the one-row table ``alembic_version``; a plain query reads it
    without loading Alembic.
    """
    from sqlalchemy import inspect, text

    if not inspect(connection).has_table("alembic_version"):
        return None
    stamped = connection.execute(text("SELECT version_num FROM alembic_version")).scalars().all()
    if len(stamped) > 1:
        raise CatalogError(f"the catalogue is stamped with several schema revisions: {', '.join(stamped)}")
    return stamped[0] if stamped else None


def upgrade_connection(connection: Connection, revision: str = "head") -> None:
    """Run the migrations up to ``revision`` inside ``connection``'s transaction."""
    from alembic import command

    config = alembic_config()
    config.attributes["connection"] = connection
    command.upgrade(config, revision)


def create_at_head(connection: Connection) -> None:
    """Create every table of an empty database from the models and stamp it with the
    newest revision: the same schema the revisions build one by one (a test compares the
    two), without copying each table once per SQLite batch step."""
    from sharpzone.catalog.models import Base

    Base.metadata.create_all(connection)
    stamp_head(connection)


def stamp_head(connection: Connection) -> None:
    """Stamp a database that has no revision yet with ``head_revision()``, writing Alembic's
    one-row version table as ``alembic stamp`` does (a test compares the two), without
    loading Alembic: that costs a new catalogue's first command about 0.15 s."""
    from sqlalchemy import Column, MetaData, PrimaryKeyConstraint, String, Table

    table = Table("alembic_version", MetaData(), Column("version_num", String(32), nullable=False),
                  PrimaryKeyConstraint("version_num", name="alembic_version_pkc"))
    table.create(connection)
    connection.execute(table.insert().values(version_num=head_revision()))


def upgrade(url: str, revision: str = "head") -> None:
    """Upgrade the database at ``url`` to ``revision`` in one transaction (no backup, no
    seeding: ``prepare_catalog`` is what programs use; this is for tests and tools)."""
    from sharpzone.catalog.engine import create_catalog_engine

    engine = create_catalog_engine(url, enforce_foreign_keys=False)
    try:
        with engine.begin() as connection:
            upgrade_connection(connection, revision)
    finally:
        engine.dispose()


def prepare_catalog(url: str) -> PreparedCatalog:
    """Bring the catalogue at ``url`` to the newest schema before anyone uses it.

    - empty database: create every table (``create_at_head``) and add the shipped formats;
    - older revision: copy a SQLite file aside (``<name>.bak-<revision>-<UTC time>``),
      then upgrade in one transaction, checking foreign keys before the commit;
    - an unknown revision, tables without a revision, or tables that do not match their
      revision stamp: refuse with one ``CatalogError`` line. A failed upgrade leaves the
      catalogue as it was and removes the backup it made (so attempts add no copies).
    """
    head = head_revision()
    from sharpzone.catalog.peek import stamped_revision

    if stamped_revision(url) == head:  # the usual case, asked of the file without SQLAlchemy
        return PreparedCatalog(revision=head)
    from sqlalchemy import inspect
    from sqlalchemy.exc import DBAPIError, IntegrityError

    from sharpzone.catalog.engine import create_catalog_engine, translate_database_error

    engine = create_catalog_engine(url)
    try:
        with engine.connect() as connection:  # the usual case: already current, read only
            if current_revision(connection) == head:
                return PreparedCatalog(revision=head)
    except DBAPIError as error:
        raise translate_database_error(error, url) from error
    finally:
        engine.dispose()

    engine = create_catalog_engine(url, enforce_foreign_keys=False, lock_on_begin=True)
    try:
        with engine.begin() as connection:
            _lock_for_schema_change(connection)
            found = current_revision(connection)  # again, now that we hold the write lock
            if found == head:
                return PreparedCatalog(revision=head)
            if found is None:
                if inspect(connection).get_table_names():
                    raise CatalogError(
                        f"{display_url(url)} holds tables but is not a sharpzone catalogue",
                        hint="give another --catalog path",
                    )
                create_at_head(connection)
                _seed_new_catalog(connection)
                return PreparedCatalog(revision=head, created=True)
            known = known_revisions()
            if found not in known:
                raise CatalogError(
                    f"catalogue {display_url(url)} has an unknown schema revision {found!r}: this program "
                    f"knows {known[0]} to {known[-1]}",
                    hint="a newer sharpzone or another program made it: open it with that program",
                )
            backup = _back_up_sqlite(url, found)
            try:
                upgrade_connection(connection)
                _check_foreign_keys(connection)
            except DBAPIError as error:
                _discard(backup)
                if isinstance(error, IntegrityError):
                    raise
                raise CatalogError(
                    f"catalogue {display_url(url)} is stamped with schema revision {found!r} but its tables do "
                    "not match it, so it cannot be upgraded; the catalogue was left unchanged",
                    hint="restore the catalogue from a backup, or ask whoever changed its tables",
                ) from None
            except BaseException:
                _discard(backup)  # nothing changed, so the copy is not needed: one backup per revision
                raise
            from sharpzone.catalog.upsert import sync_id_sequences

            sync_id_sequences(connection)  # rows an older program or a person wrote with ids
            return PreparedCatalog(revision=head, upgraded_from=found, backup_path=backup)
    except DBAPIError as error:
        raise translate_database_error(error, url) from error
    finally:
        engine.dispose()


# Any fixed number will do: it names the lock that programs creating or upgrading one
# PostgreSQL catalogue take turns on ("sz" in ASCII).
SCHEMA_LOCK_KEY = 0x737A


def _lock_for_schema_change(connection: Connection) -> None:
    """Make programs creating or upgrading one catalogue at once take turns. SQLite's
    ``BEGIN IMMEDIATE`` already did; PostgreSQL takes a lock held until the commit."""
    if connection.dialect.name == "postgresql":
        from sqlalchemy import text

        connection.execute(text("SELECT pg_advisory_xact_lock(:key)"), {"key": SCHEMA_LOCK_KEY})


def _back_up_sqlite(url: str, revision: str) -> Path | None:
    """Copy the SQLite file (WAL content included, via SQLite's backup API) beside itself."""
    path = sqlite_path(url)
    if path is None:
        return None
    stamp = dt.datetime.now(dt.timezone.utc).strftime("%Y%m%dT%H%M%S%fZ")
    backup = path.with_name(f"{path.name}.bak-{revision}-{stamp}")
    try:
        source = sqlite3.connect(path)
        try:
            target = sqlite3.connect(backup)
            try:
                source.backup(target)
            finally:
                target.close()
        finally:
            source.close()
    except (sqlite3.Error, OSError) as error:
        raise CatalogError(
            f"cannot back up catalogue {path} before upgrading it: {error}",
            hint=f"check free space and permissions of {path.parent}",
        ) from None
    return backup


def _discard(backup: Path | None) -> None:
    if backup is not None:
        backup.unlink(missing_ok=True)


def _check_foreign_keys(connection: Connection) -> None:
    if connection.dialect.name != "sqlite":
        return
    broken = connection.exec_driver_sql("PRAGMA foreign_key_check").fetchall()
    if broken:
        table, rowid, parent, _ = broken[0]
        raise CatalogError(
            f"upgrade stopped: {len(broken)} row(s) point at missing rows "
            f"(first: {table} row {rowid} → {parent}); the catalogue was left unchanged"
        )


def _seed_new_catalog(connection: Connection) -> None:
    from sqlalchemy.orm import Session

    from sharpzone.catalog.models import SensorFormatRow
    from sharpzone.seed import shipped_formats

    session = Session(bind=connection)
    for shipped in shipped_formats():
        session.add(
            SensorFormatRow(
                name=shipped.format.name,
                width_mm=shipped.format.width_mm,
                height_mm=shipped.format.height_mm,
                coc_divisor=shipped.format.coc_divisor,
                aliases=";".join(shipped.aliases),
                description=shipped.description,
                source=shipped.source,
            )
        )
    session.flush()


def next_revision_id() -> str:
    """The next four-digit revision id (``0003`` after ``0002``)."""
    numbers = [int(rev) for rev in known_revisions() if rev.isdigit()]
    return f"{max(numbers, default=0) + 1:04d}"


def new_revision(message: str, *, autogenerate: bool = True) -> Path:
    """Write a new revision file into ``migrations/versions`` and return its path.

    With ``autogenerate`` Alembic compares the models with a scratch database upgraded to
    the current head and drafts the operations; review and edit the draft by hand.
    """
    from alembic import command

    from sharpzone.catalog.engine import create_catalog_engine

    with tempfile.TemporaryDirectory() as scratch:
        url = sqlite_url(Path(scratch) / "scratch.sqlite")
        engine = create_catalog_engine(url, enforce_foreign_keys=False)
        try:
            with engine.begin() as connection:
                upgrade_connection(connection)
                config = alembic_config()
                config.attributes["connection"] = connection
                script = command.revision(
                    config, message=message, autogenerate=autogenerate, rev_id=next_revision_id()
                )
        finally:
            engine.dispose()
    return Path(script.path)


def main(argv: list[str] | None = None) -> int:
    """``python -m sharpzone.catalog.migrate`` — developer tool for schema revisions."""
    parser = argparse.ArgumentParser(prog="python -m sharpzone.catalog.migrate", description=__doc__.splitlines()[0])
    commands = parser.add_subparsers(dest="command", required=True)
    revision = commands.add_parser("revision", help="draft a new revision from the models")
    revision.add_argument("-m", "--message", required=True, help="what the revision changes")
    revision.add_argument("--empty", action="store_true", help="write an empty revision (no autogenerate)")
    upgrade_cmd = commands.add_parser("upgrade", help="upgrade a catalogue (with backup) to the newest schema")
    upgrade_cmd.add_argument("catalog", help="catalogue file path or URL")
    current = commands.add_parser("current", help="print a catalogue's schema revision")
    current.add_argument("catalog", help="catalogue file path or URL")
    commands.add_parser("heads", help="print the newest revision this program knows")
    args = parser.parse_args(argv)

    from sharpzone.catalog.location import resolve_catalog_url

    if args.command == "revision":
        print(new_revision(args.message, autogenerate=not args.empty))
    elif args.command == "upgrade":
        result = prepare_catalog(resolve_catalog_url(args.catalog))
        print(f"at {result.revision}" + (f" (from {result.upgraded_from}, backup {result.backup_path})" if result.upgraded_from else ""))
    elif args.command == "current":
        from sharpzone.catalog.engine import create_catalog_engine

        engine = create_catalog_engine(resolve_catalog_url(args.catalog))
        with engine.connect() as connection:
            print(current_revision(connection))
        engine.dispose()
    else:
        print(head_revision())
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
