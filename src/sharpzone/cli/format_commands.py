"""``sharpzone format …``: sensor formats, their image area and default circle-of-confusion rule."""

from __future__ import annotations

from typing import Annotated, Optional

import typer

from sharpzone.cli.noun_commands import NewNameOpt, Noun, maybe, noun_group, number_option, say, service, show_row, tables
from sharpzone.cli.options import length_option
from sharpzone.cli.state import catalog_session
from sharpzone.errors import InvalidValue
from sharpzone.optics.limits import DIAGONAL_DIVISOR

NOUN = Noun(
    "format", lambda session: service().list_formats(session), lambda session, name: service().get_format(session, name),
    lambda: tables().FORMAT_FIELDS, "Sensor formats", "No sensor formats.", "Format name or alias.",
    "List the catalogue's sensor formats with size, crop factor and default CoC.", "Show one sensor format.", False,
)
format_app = noun_group(NOUN, "Sensor formats: image area and default circle-of-confusion rule.")


def register(app: typer.Typer) -> None:
    app.add_typer(format_app, name="format")


WidthOpt = Annotated[Optional[str], typer.Option("--width", help="Image width in mm (a bare number is mm).")]
HeightOpt = Annotated[Optional[str], typer.Option("--height", help="Image height in mm (a bare number is mm).")]
CocDivisorOpt = Annotated[Optional[str], typer.Option("--coc-divisor", help="Default circle of confusion = diagonal / this number (1500 unless told, the common rule).")]
FormatAliasOpt = Annotated[Optional[list[str]], typer.Option("--alias", help="Another name the format answers to; repeat for more (edit: replaces the list).")]
DescriptionOpt = Annotated[Optional[str], typer.Option("--description", help="A line for people.")]
SourceOpt = Annotated[Optional[str], typer.Option("--source", help="Where the size comes from.")]


@format_app.command("add")
def format_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="A unique name, e.g. 36x24.")],
    width: WidthOpt = None,
    height: HeightOpt = None,
    coc_divisor: CocDivisorOpt = None,
    alias: FormatAliasOpt = None,
    description: DescriptionOpt = "",
    source: SourceOpt = "",
) -> None:
    """Add a sensor format (--width and --height are required)."""
    if width is None or height is None:
        raise InvalidValue("format add needs --width and --height (mm)")
    with catalog_session(ctx) as session:
        row = service().add_format(
            session, name, length_option(width, "--width"), length_option(height, "--height"),
            coc_divisor=DIAGONAL_DIVISOR if coc_divisor is None else number_option(coc_divisor, "coc-divisor"),
            aliases=alias or [], description=description or "", source=source or "",
        )
    show_row(row, NOUN, title=f"Added format {row.name}")


@format_app.command("edit")
def format_edit(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Format name or alias.")],
    new_name: NewNameOpt = None,
    width: WidthOpt = None,
    height: HeightOpt = None,
    coc_divisor: CocDivisorOpt = None,
    alias: FormatAliasOpt = None,
    description: DescriptionOpt = None,
    source: SourceOpt = None,
) -> None:
    """Change a sensor format; bodies of this format follow."""
    with catalog_session(ctx) as session:
        row = service().edit_format(
            session, name, new_name=new_name, width_mm=maybe(length_option, width, "--width"),
            height_mm=maybe(length_option, height, "--height"),
            coc_divisor=number_option(coc_divisor, "coc-divisor"), aliases=alias, description=description,
            source=source,
        )
    show_row(row, NOUN, title=f"Changed format {row.name}")


@format_app.command("remove")
def format_remove(ctx: typer.Context, name: Annotated[str, typer.Argument(help="Format name or alias.")]) -> None:
    """Remove a sensor format no body uses."""
    with catalog_session(ctx) as session:
        service().remove_format(session, name)
    say(f"Removed format {name}.")
