"""Where the catalogue lives: ``--catalog PATH|URL``, else ``SHARPZONE_CATALOG``, else a
SQLite file in the user data folder. Pure string work: no database is opened here."""

from __future__ import annotations

import os
import re
from pathlib import Path

from sharpzone.errors import InvalidValue

ENV_VAR = "SHARPZONE_CATALOG"
MIN_SCRUBBED_SECRET = 4
DEFAULT_FILE_NAME = "catalog.sqlite"
APP_NAME = "sharpzone"

_URL_SCHEME = re.compile(r"^[a-zA-Z][a-zA-Z0-9+.\-]*://")
# user:password@ after the scheme, split the way SQLAlchemy splits it: the user name runs to
# the first ":" or "/", the password to the next "@" (so it may hold "/", "?" and ":").
_PASSWORD_IN_URL = re.compile(r"^(?P<head>[^:/]+://[^:/]*):(?P<password>[^@]*)@(?P<rest>.*)$", re.DOTALL)
# password=… among the query parameters (handed on to the driver)
_PASSWORD_IN_QUERY = re.compile(r"(?i)(?P<name>[?&](?:password|passwd|sslpassword)=)[^&#]*")


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


# ``sqlite:///<path>`` with nothing to decode: its file is read without importing SQLAlchemy
# (``dof`` asks whether the catalogue exists before it needs any database code).
_PLAIN_SQLITE = re.compile(r"sqlite:///([^?#%]+)")


def sqlite_path(url: str) -> Path | None:
    """The file behind a SQLite URL, or ``None`` for other databases and in-memory SQLite."""
    plain = _PLAIN_SQLITE.fullmatch(str(url))
    if plain and plain.group(1) != ":memory:" and not plain.group(1).startswith("file:"):
        return Path(plain.group(1))
    from sqlalchemy.engine import make_url
    from sqlalchemy.exc import ArgumentError

    try:
        parsed = make_url(url)
    except (ArgumentError, ValueError):  # ValueError: a port that is not a number
        raise InvalidValue(f"catalogue URL {display_url(url)!r} is not a database URL") from None
    if parsed.get_backend_name() != "sqlite":
        return None
    database = parsed.database or ""
    if database in ("", ":memory:") or database.startswith("file:"):
        return None
    return Path(database)


def display_url(url: str) -> str:
    """``url`` with any password replaced by ``***``, safe to show and to put in errors.

    Errs on the side of hiding: a password typed with a raw ``@`` in it (it should be
    written ``%40``) is hidden up to the last ``@`` before the query."""
    text = str(url)
    match = _PASSWORD_IN_URL.match(text)
    if match:
        rest = match.group("rest")
        before_query = rest.split("?", 1)[0]
        if "@" in before_query:
            rest = rest[before_query.rindex("@") + 1 :]
        text = f"{match.group('head')}:***@{rest}"
    return _PASSWORD_IN_QUERY.sub(lambda m: f"{m.group('name')}***", text)


def refuse_raw_at_in_password(url: str) -> None:
    """``InvalidValue`` when the URL's password holds a raw ``@``: SQLAlchemy would cut the
    password there and take the rest for the host, and error messages would show it."""
    match = _PASSWORD_IN_URL.match(str(url))
    if match and "@" in match.group("rest").split("?", 1)[0]:
        raise InvalidValue(
            f"the password in catalogue URL {display_url(url)!r} holds a raw '@' or the host part does: "
            "expected special characters in the password percent-encoded ('@' as %40, '/' as %2F)"
        )


def url_secrets(url: str | None) -> list[str]:
    """The secrets a catalogue URL carries (its password, as written and decoded, and a
    ``password=`` query value), longest first, for scrubbing them from any text. Secrets
    shorter than ``MIN_SCRUBBED_SECRET`` characters are left out."""
    from urllib.parse import unquote

    if not url:
        return []
    text = str(url)
    found = set()
    match = _PASSWORD_IN_URL.match(text)
    if match:
        before_query = match.group("rest").split("?", 1)[0]
        extra = before_query[: before_query.rindex("@")] if "@" in before_query else ""
        for password in (match.group("password"), f"{match.group('password')}@{extra}" if extra else ""):
            found.update((password, unquote(password)))
    for query in _PASSWORD_IN_QUERY.finditer(text):
        value = query.group(0)[len(query.group("name")):]
        found.update((value, unquote(value)))
    # Scrubbing a two-letter password out of free text would mangle every word holding it.
    return sorted((secret for secret in found if len(secret) >= MIN_SCRUBBED_SECRET), key=len, reverse=True)


def scrub_secrets(text: str, url: str | None) -> str:
    """``text`` with every secret of ``url`` replaced by ``***`` (for error messages and
    tracebacks whose wording a database driver chose)."""
    for secret in url_secrets(url):
        text = text.replace(secret, "***")
    return text
