"""``sharpzone format …``: sensor formats, their image area and default circle-of-confusion rule."""

from __future__ import annotations

from typing import Annotated, Optional

import typer

from sharpzone.cli.noun_commands import NewNameOpt, Noun, given, maybe, noun_group, number_option, say, service, show_saved, tables
from sharpzone.cli.option_groups import OptionGroup, uses
from sharpzone.cli.options import length_option
from sharpzone.cli.state import catalog_session
from sharpzone.errors import InvalidValue

NOUN = Noun(
    "format", lambda session: service().list_formats(session), lambda session, name: service().get_format(session, name),
    lambda: tables().FORMAT_FIELDS, "Sensor formats", "No sensor formats.", "Format name or alias.",
    "List the catalogue's sensor formats with size, crop factor and default CoC.", "Show one sensor format.", False,
)
format_app, register = noun_group(NOUN, "Sensor formats: image area and default circle-of-confusion rule.")


WidthOpt = Annotated[Optional[str], typer.Option("--width", help="Image width in mm (a bare number is mm).")]
HeightOpt = Annotated[Optional[str], typer.Option("--height", help="Image height in mm (a bare number is mm).")]
CocDivisorOpt = Annotated[Optional[str], typer.Option("--coc-divisor", help="Default circle of confusion = diagonal / this number (1500 unless told, the common rule).")]
FormatAliasOpt = Annotated[Optional[list[str]], typer.Option("--alias", help="Another name the format answers to; repeat for more (edit: replaces the list).")]
DescriptionOpt = Annotated[Optional[str], typer.Option("--description", help="A line for people.")]
SourceOpt = Annotated[Optional[str], typer.Option("--source", help="Where the size comes from.")]


def _format_fields(width=None, height=None, coc_divisor=None, alias=None, description=None, source=None) -> dict:
    return {
        "width_mm": maybe(length_option, width, "--width"),
        "height_mm": maybe(length_option, height, "--height"),
        "coc_divisor": number_option(coc_divisor, "coc-divisor"),
        "aliases": alias,
        "description": description,
        "source": source,
    }


# The format's size, CoC rule and words, shared by add and edit, as the service's keyword arguments.
_FIELDS = OptionGroup("fields", (("width", WidthOpt), ("height", HeightOpt), ("coc_divisor", CocDivisorOpt),
                                 ("alias", FormatAliasOpt), ("description", DescriptionOpt),
                                 ("source", SourceOpt)), _format_fields)


@format_app.command("add")
@uses(_FIELDS)
def format_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="A unique name, e.g. 36x24.")],
    fields: dict,
) -> None:
    """Add a sensor format (--width and --height are required)."""
    if fields["width_mm"] is None or fields["height_mm"] is None:
        raise InvalidValue("format add needs --width and --height (mm)")
    show_saved(ctx, NOUN, "Added", lambda session: service().add_format(session, name, **given(fields)))


@format_app.command("edit")
@uses(_FIELDS)
def format_edit(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Format name or alias.")],
    new_name: NewNameOpt = None,
    *,
    fields: dict,
) -> None:
    """Change a sensor format; bodies of this format follow."""
    show_saved(ctx, NOUN, "Changed", lambda session: service().edit_format(session, name, new_name=new_name, **fields))


@format_app.command("remove")
def format_remove(ctx: typer.Context, name: Annotated[str, typer.Argument(help="Format name or alias.")]) -> None:
    """Remove a sensor format no body uses."""
    with catalog_session(ctx) as session:
        service().remove_format(session, name)
    say(f"Removed format {name}.")
