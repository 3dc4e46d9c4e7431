"""What the catalogue's noun groups (``format``, ``body``, ``lens``, ``shoot``) share: their
``list`` and ``show`` commands, the options every group takes, and small option parsers.

Each group's module names its own service functions and renderer fields in a ``Noun``; the
service and the renderers are imported only when a command runs (they pull in SQLAlchemy).
"""

from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass
from typing import Annotated, Optional

import typer

from sharpzone.cli.options import ImperialOpt, WideOpt
from sharpzone.cli.state import catalog_session, echo_json
from sharpzone.errors import InvalidValue

JsonOpt = Annotated[bool, typer.Option("--json", help="Print JSON (lengths in mm, distances in metres, infinity as \"inf\").")]
NewNameOpt = Annotated[Optional[str], typer.Option("--name", help="A new name.")]
ReassignOpt = Annotated[Optional[str], typer.Option("--reassign-to", help="Move the frames that use it to this one first.")]
UnconfirmedOpt = Annotated[bool, typer.Option("--unconfirmed", help="Mark it as still to be checked.")]


def confirmed_option(what: str):
    """``--confirmed/--unconfirmed`` of the edit command of ``what`` (a body or a lens)."""
    return Annotated[Optional[bool], typer.Option("--confirmed/--unconfirmed", help=f"Mark the {what} as checked (or not).",
                                                  show_default=False)]


def say(text: str) -> None:
    """Print one line of text that may carry names from files or users (never markup)."""
    from sharpzone.report.inert import inert

    typer.echo(inert(text))


def service():
    """``sharpzone.catalog.service``, imported when a command runs."""
    from sharpzone.catalog import service as module

    return module


def tables():
    """``sharpzone.report.catalog_tables``, imported when a command runs."""
    from sharpzone.report import catalog_tables

    return catalog_tables


@dataclass(frozen=True)
class Noun:
    """One catalogue noun as its ``list`` and ``show`` commands need it: how to read its rows
    (service functions, given a session), which renderer fields show them, and words for people."""

    name: str
    list_rows: Callable
    get_row: Callable
    fields: Callable
    plural_title: str
    empty: str
    argument_help: str
    list_help: str
    show_help: str
    has_distances: bool


def show_row(row, noun: Noun, *, as_json: bool = False, imperial: bool = False, title: str | None = None) -> None:
    """One row of ``noun`` as JSON or as a record table."""
    fields = noun.fields()
    if as_json:
        echo_json(tables().row_json(row, fields))
    else:
        tables().render_record(row, fields, title=title or f"{noun.name.capitalize()} {row.name}", imperial=imperial)


def show_saved(ctx: typer.Context, noun: Noun, verb: str, write: Callable) -> None:
    """Run ``write(session)`` (an add or edit service call) in one unit of work and show the
    row it returns, titled e.g. 'Added body K7'."""
    with catalog_session(ctx) as session:
        row = write(session)
    show_row(row, noun, title=f"{verb} {noun.name} {row.name}")


def _run_list(ctx: typer.Context, noun: Noun, as_json: bool, imperial: bool, wide: bool = False) -> None:
    with catalog_session(ctx) as session:
        rows = noun.list_rows(session)
    fields = noun.fields()
    if as_json:
        echo_json([tables().row_json(row, fields) for row in rows])
    else:
        tables().render_rows(rows, fields, title=noun.plural_title, empty=noun.empty, imperial=imperial, wide=wide)


def _run_show(ctx: typer.Context, noun: Noun, name: str, as_json: bool, imperial: bool) -> None:
    with catalog_session(ctx) as session:
        row = noun.get_row(session, name)
    show_row(row, noun, as_json=as_json, imperial=imperial)


def noun_group(noun: Noun, help: str) -> tuple[typer.Typer, Callable[[typer.Typer], None]]:
    """A command group for ``noun`` with its ``list`` and ``show`` commands (``--imperial``
    where distances show), and the ``register(app)`` that adds it to the application under
    the noun's name; the group's module adds the commands that write."""
    group = typer.Typer(help=help, no_args_is_help=True)

    if noun.has_distances:
        def list_command(ctx: typer.Context, json: JsonOpt = False, imperial: ImperialOpt = False,
                         wide: WideOpt = False) -> None:
            _run_list(ctx, noun, json, imperial, wide)

        def show_command(
            ctx: typer.Context, name: str = typer.Argument(help=noun.argument_help), json: JsonOpt = False,
            imperial: ImperialOpt = False,
        ) -> None:
            _run_show(ctx, noun, name, json, imperial)
    else:
        def list_command(ctx: typer.Context, json: JsonOpt = False, wide: WideOpt = False) -> None:
            _run_list(ctx, noun, json, False, wide)

        def show_command(ctx: typer.Context, name: str = typer.Argument(help=noun.argument_help), json: JsonOpt = False) -> None:
            _run_show(ctx, noun, name, json, False)

    group.command("list", help=noun.list_help)(list_command)
    group.command("show", help=noun.show_help)(show_command)

    def register(app: typer.Typer) -> None:
        app.add_typer(group, name=noun.name)

    return group, register


def reassigning_remove_command(group: typer.Typer, noun: Noun, help: str, remove: Callable) -> None:
    """Give ``group`` the ``remove`` command of a body or lens: its service function
    ``remove(session, name, reassign_to)`` (returning how many frames moved) in one unit of
    work, then one line saying where the frames went."""

    def remove_command(ctx: typer.Context, name: str = typer.Argument(help=noun.argument_help),
                       reassign_to: ReassignOpt = None) -> None:
        with catalog_session(ctx) as session:
            moved = remove(session, name, reassign_to)
        say(f"Removed {noun.name} {name}." + (f" {moved} frame(s) now use {reassign_to}." if moved else ""))

    group.command("remove", help=help)(remove_command)


# ---- option parsers ---------------------------------------------------------------------

_RANGE = re.compile(r"^\s*([^-–]+?)\s*(?:[-–]\s*(.+?))?\s*$")


def range_option(value: str, option: str, parse) -> tuple[float, float]:
    """``24-70`` → (24, 70); ``50`` → (50, 50); each end parsed by ``parse(text, option)``."""
    match = _RANGE.match(value)
    if not match:
        raise InvalidValue(option=option, what="value", value=value, expected="one value or two joined by '-'")
    low = parse(match.group(1), option)
    high = parse(match.group(2), option) if match.group(2) else low
    if high < low:
        raise InvalidValue(option=option, what="value", value=value, problem="runs backwards",
                           expected="the smaller number first",
                           hint=f"did you mean {match.group(2)}-{match.group(1)}?")
    return low, high


def number_option(value: str | None, option: str) -> float | None:
    """A plain number option (``None`` passes through)."""
    if value is None:
        return None
    try:
        return float(value)
    except ValueError:
        raise InvalidValue(option=f"--{option}", what="value", value=value, problem="is not a number") from None


def given(values: dict) -> dict:
    """The options given (not ``None``), so that the service's own defaults stand for the rest."""
    return {key: value for key, value in values.items() if value is not None}


def maybe(parse, value: str | None, option: str):
    """``parse(value, option)``, or ``None`` for an option not given."""
    return None if value is None else parse(value, option)
