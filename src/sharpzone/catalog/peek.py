"""Questions a SQLite catalogue file answers through ``sqlite3`` alone, before SQLAlchemy is
loaded (that costs a command about a third of a second).

Each answer is a hint for doing less work, never a decision about the data: when the
question is not that simple (a server database, no file, a schema that is not the newest,
any error), the answer is the cautious one, and the full path through SQLAlchemy decides.
The table and column names below are the models' (a test holds them equal).
"""

from __future__ import annotations

import os
import sqlite3
from collections.abc import Callable, Iterable
from pathlib import Path
from urllib.parse import quote

from sharpzone.catalog.location import sqlite_path
from sharpzone.catalog.rules import format_answers_to
from sharpzone.optics.formats import SensorFormat

FRAME_TABLE = "frame"
FRAME_PATH_COLUMN = "path"
FORMAT_TABLE = "sensor_format"
FORMAT_COLUMNS = ("name", "width_mm", "height_mm", "coc_divisor", "aliases")


def _sqlite_file(url: str) -> Path | None:
    """The file of a SQLite catalogue URL, ``None`` for a server database."""
    return sqlite_path(url) if url.startswith("sqlite") else None


def _connect(path: Path | None) -> sqlite3.Connection | None:
    """A connection to an existing SQLite catalogue file, or ``None``. Opened read-write
    (never created: ``mode=rw``) so that closing the last connection removes a WAL
    catalogue's journal files as SQLAlchemy's connections do; it only reads."""
    if path is None or not path.is_file():
        return None
    try:
        return sqlite3.connect(f"file:{quote(str(path.resolve()))}?mode=rw", uri=True)
    except (sqlite3.Error, OSError):
        return None


def _stamp(connection: sqlite3.Connection) -> str | None:
    try:
        stamped = connection.execute("SELECT version_num FROM alembic_version").fetchall()
    except sqlite3.Error:
        return None
    return stamped[0][0] if len(stamped) == 1 else None


def _ask(url: str, head: str | None, question: Callable[[sqlite3.Connection], object], cautious):
    """``question(connection)`` of the SQLite catalogue file at ``url``, on a connection
    closed afterwards; ``cautious`` when it is not that simple: another database, no file,
    a stamp other than ``head`` (``None``: any), or any error."""
    connection = _connect(_sqlite_file(url))
    if connection is None:
        return cautious
    try:
        if head is not None and _stamp(connection) != head:
            return cautious
        return question(connection)
    except sqlite3.Error:
        return cautious
    finally:
        connection.close()


def stamped_revision(url: str) -> str | None:
    """The revision stamped in an existing SQLite catalogue file (one read-only query);
    ``None`` when it is not that simple (another database, no file, no stamp, several, or
    any error)."""
    return _ask(url, None, _stamp, None)


def may_hold_frames_under(url: str, roots: Iterable[str], head: str) -> bool:
    """Whether the catalogue at ``url`` may hold a frame at one of ``roots`` (printable
    paths, as frames store them) or under one of them as a folder. ``False`` only when that
    is certain: the SQLite file does not exist yet, or it is at revision ``head`` and holds
    no such frame (a range query on the path's unique index, so it costs a look-up, not a
    scan). A frame catalogued under another path that names the same file (a hard link) is
    not asked after; the full path finds it."""
    path = _sqlite_file(url)
    if path is not None and not os.path.lexists(path):
        return False
    query = (f"SELECT 1 FROM {FRAME_TABLE} WHERE {FRAME_PATH_COLUMN} = ? "
             f"OR ({FRAME_PATH_COLUMN} >= ? AND {FRAME_PATH_COLUMN} < ?) LIMIT 1")

    def holds_any(connection: sqlite3.Connection) -> bool:
        for root in roots:
            folder = root.rstrip(os.sep) + os.sep
            # Under SQLite's default (binary) collation the paths below the folder are
            # exactly those from "folder/" up to, not including, "folder0" ("/" + 1 = "0").
            beyond = folder[:-1] + chr(ord(os.sep) + 1)
            if connection.execute(query, (root, folder, beyond)).fetchone() is not None:
                return True
        return False

    return _ask(url, head, holds_any, True)


def sensor_format(url: str, name: str, head: str) -> SensorFormat | None:
    """The sensor format ``name`` (or an alias: ``rules.format_answers_to``) of the SQLite
    catalogue at ``url``, read with one query; ``None`` when it is not that simple (another
    database, no file, a schema other than ``head``, any error) or the catalogue has no such
    format (the full path then says so, naming the ones it has)."""
    rows = _ask(url, head, lambda connection: connection.execute(
        f"SELECT {', '.join(FORMAT_COLUMNS)} FROM {FORMAT_TABLE} ORDER BY name").fetchall(), [])
    for found, width_mm, height_mm, coc_divisor, aliases in rows:
        if format_answers_to(name, found, aliases):
            return SensorFormat(found, width_mm, height_mm, coc_divisor)
    return None
