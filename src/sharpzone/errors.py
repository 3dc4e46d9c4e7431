"""The one user-facing error family.

Anything a person can cause (a bad value, an unreadable file, a locked catalogue) is raised
as a ``SharpzoneError`` somewhere in the code and rendered once, by the CLI, as one line on
stderr. Library errors are translated into these at the boundary where they occur.
"""

from __future__ import annotations


class SharpzoneError(Exception):
    """A problem the user can understand and fix; ``hint`` names the fix when we know it."""

    exit_code = 1

    def __init__(self, message: str, hint: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.hint = hint

    def __str__(self) -> str:
        return f"{self.message} ({self.hint})" if self.hint else self.message


class InvalidValue(SharpzoneError, ValueError):
    """A value given by the user (or read from a file) that is out of range or unparseable.

    Also a ``ValueError`` so plain Python callers of the library can catch it the usual way.
    """

    exit_code = 2


class NotFound(SharpzoneError, LookupError):
    """A named thing (format, body, lens, shoot) is not in the catalogue."""


class Conflict(SharpzoneError):
    """The change would break the catalogue's rules (duplicate name, thing still in use)."""


class CatalogError(SharpzoneError):
    """The catalogue cannot be opened, upgraded or written."""


class ReadError(SharpzoneError):
    """An image or sidecar file could not be read; ingest records it and goes on."""


class Interrupted(SharpzoneError):
    """The user stopped a long run (Ctrl-C, or SIGTERM from a service manager); what was
    finished is kept. Exit code 130 for SIGINT and 143 for SIGTERM (128 + the signal)."""

    def __init__(self, message: str, *, signal_number: int = 2) -> None:
        super().__init__(message)
        self.exit_code = 128 + signal_number
