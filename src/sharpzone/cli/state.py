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


@contextmanager
def catalog_session(ctx) -> Iterator:
    """One unit of work on the chosen catalogue: a session committed once, rolled back on error."""
    from sharpzone.catalog.engine import session_scope

    with session_scope(catalog_location(ctx)) as session:
        yield session


def echo_json(value) -> None:
    """Print ``value`` in the machine interface's JSON conventions (see ``report.jsonout``)."""
    import typer

    from sharpzone.report.jsonout import dumps

    typer.echo(dumps(value))
