"""The one user-facing error family.

Anything a person can cause (a bad value, an unreadable file, a locked catalogue) is raised
as a ``SharpzoneError`` somewhere in the code and rendered once, by the CLI, as one line on
stderr. Library errors are translated into these at the boundary where they occur.

An error carries its parts — ``what`` was wrong, the ``value`` given, the ``problem`` with
it, what was ``expected``, the command-line ``option`` it came from and a ``hint`` — and
builds its one line from them here, in ``message``, so the CLI can name the option (with
``with_option``) without searching or rewriting the text. A plain sentence still works:
``SharpzoneError("no catalogue at …")``.
"""

from __future__ import annotations

import copy

_NO_VALUE = object()


class SharpzoneError(Exception):
    """A problem the user can understand and fix; ``hint`` names the fix when we know it."""

    exit_code = 1

    def __init__(self, message: str | None = None, hint: str | None = None, *, what: str | None = None,
                 value: object = _NO_VALUE, problem: str | None = None, expected: str | None = None,
                 option: str | None = None) -> None:
        self.text = message
        self.hint = hint
        self.what = what
        self.value = None if value is _NO_VALUE else value
        self.has_value = value is not _NO_VALUE
        self.problem = problem
        self.expected = expected
        self.option = option
        super().__init__(self.message)

    @property
    def message(self) -> str:
        """The one line, built from the parts: ``[--option: ][what ]['value' ]problem[: expected …]``."""
        if self.text is not None:
            body = self.text
        else:
            words = []
            if self.what and not self.option:  # the option names what it is
                words.append(self.what)
            if self.has_value:
                words.append(repr(self.value) if isinstance(self.value, str) else f"{self.value}")
            words.append(self.problem or "is not valid")
            body = " ".join(words)
            if self.expected:
                body += f": expected {self.expected}"
        return f"{self.option}: {body}" if self.option else body

    def with_option(self, option: str) -> SharpzoneError:
        """The same error, said of the command-line option ``option`` (once, however often
        it is called)."""
        named = copy.copy(self)
        named.option = self.option or option
        named.args = (named.message,)
        return named

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
