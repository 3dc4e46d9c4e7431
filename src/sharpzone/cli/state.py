"""What the global options decided, handed to every command through ``ctx.obj``."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass


@dataclass
class CliState:
    """Global options: which catalogue (``None`` means the default) and whether to debug."""

    catalog: str | None = None
    debug: bool = False


def catalog_location(ctx) -> str | None:
    """The ``--catalog`` / ``SHARPZONE_CATALOG`` choice (``None``: the default catalogue)."""
    state = ctx.find_root().obj
    return state.catalog if state is not None else None


# Commands that only read the catalogue: they never create one (a named catalogue that does
# not exist is an error) and they read one in a read-only folder or file.
READ_COMMANDS = frozenset({"list", "show", "info", "export", "frames", "check", "stats", "sheet"})


@contextmanager
def catalog_session(ctx, *, write: bool | None = None) -> Iterator:
    """One unit of work on the chosen catalogue: a session committed once, rolled back on error.

    ``write`` defaults to whether the running command is not one of ``READ_COMMANDS``."""
    from sharpzone.catalog.engine import session_scope

    if write is None:
        write = ctx.info_name not in READ_COMMANDS
    with session_scope(catalog_location(ctx), write=write) as session:
        yield session


def echo_json(value) -> None:
    """Print ``value`` in the machine interface's JSON conventions (see ``report.jsonout``)."""
    import typer

    from sharpzone.report.jsonout import dumps

    typer.echo(dumps(value))
