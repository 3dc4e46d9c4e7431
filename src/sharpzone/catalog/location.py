"""Where the catalogue lives: ``--catalog PATH|URL``, else ``SHARPZONE_CATALOG``, else a
SQLite file in the user data folder. Pure string work: no database is opened here."""

from __future__ import annotations

import os
import re
from pathlib import Path

from sharpzone.errors import InvalidValue

ENV_VAR = "SHARPZONE_CATALOG"
DEFAULT_FILE_NAME = "catalog.sqlite"
APP_NAME = "sharpzone"

_URL_SCHEME = re.compile(r"^[a-zA-Z][a-zA-Z0-9+.\-]*://")
# user:password@ in the authority part of a URL
_PASSWORD_IN_URL = re.compile(r"^(?P<head>[^:/]+://[^:/@]*):(?P<password>[^@/]*)@")


def default_catalog_path() -> Path:
    """The catalogue used when nothing else is said: ``<user data dir>/catalog.sqlite``."""
    from platformdirs import user_data_dir

    return Path(user_data_dir(APP_NAME)) / DEFAULT_FILE_NAME


def resolve_catalog_url(location: str | os.PathLike | None = None) -> str:
    """The SQLAlchemy URL for ``location`` (a path or URL), else the env var, else the default.

    A bare path (relative paths are made absolute) becomes ``sqlite:///<absolute path>``;
    anything with a ``scheme://`` is taken as a URL as it is.
    """
    if location is None or str(location).strip() == "":
        location = os.environ.get(ENV_VAR) or None
    if location is None:
        return sqlite_url(default_catalog_path())
    text = str(location).strip()
    if _URL_SCHEME.match(text):
        return text
    return sqlite_url(Path(text).expanduser())


def sqlite_url(path: str | os.PathLike) -> str:
    """``sqlite:///`` URL for a file path (made absolute)."""
    return f"sqlite:///{Path(path).expanduser().resolve()}"


def sqlite_path(url: str) -> Path | None:
    """The file behind a SQLite URL, or ``None`` for other databases and in-memory SQLite."""
    from sqlalchemy.engine import make_url
    from sqlalchemy.exc import ArgumentError

    try:
        parsed = make_url(url)
    except ArgumentError:
        raise InvalidValue(f"catalogue URL {display_url(url)!r} is not a database URL") from None
    if parsed.get_backend_name() != "sqlite":
        return None
    database = parsed.database or ""
    if database in ("", ":memory:") or database.startswith("file:"):
        return None
    return Path(database)


def display_url(url: str) -> str:
    """``url`` with any password replaced by ``***``, safe to show and to put in errors."""
    return _PASSWORD_IN_URL.sub(lambda m: f"{m.group('head')}:***@", str(url))
