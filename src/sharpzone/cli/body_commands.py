"""``sharpzone body …``: camera bodies, how EXIF names them and which sensor format they have."""

from __future__ import annotations

import re
from typing import Annotated, Optional

import typer

from sharpzone.cli.noun_commands import NewNameOpt, Noun, ReassignOpt, noun_group, removed_line, service, show_row, tables
from sharpzone.cli.state import catalog_session
from sharpzone.errors import InvalidValue

NOUN = Noun(
    "body", lambda session: service().list_bodies(session), lambda session, name: service().get_body(session, name),
    lambda: tables().BODY_FIELDS, "Camera bodies", "No camera bodies yet: add one with 'sharpzone body add'.",
    "Body name.", "List camera bodies with their EXIF names and sensor formats.", "Show one camera body.", False,
)
body_app = noun_group(NOUN, "Camera bodies: how EXIF names them and which sensor format they have.")


def register(app: typer.Typer) -> None:
    app.add_typer(body_app, name="body")


MakeOpt = Annotated[Optional[str], typer.Option("--make", help="EXIF Make exactly as the camera writes it.")]
ModelOpt = Annotated[Optional[str], typer.Option("--model", help="EXIF Model exactly as the camera writes it.")]
SerialOpt = Annotated[Optional[str], typer.Option("--serial", help="EXIF body serial number, to tell two bodies of one model apart ('' clears it).")]
FormatOpt = Annotated[Optional[str], typer.Option("--format", help="Sensor format name or alias (see 'sharpzone format list').")]
PixelsOpt = Annotated[Optional[str], typer.Option("--pixels", help="Full image size in pixels, e.g. 6000x4000.")]


def _pixels_option(value: str | None) -> tuple[int | None, int | None]:
    if value is None:
        return None, None
    match = re.fullmatch(r"\s*(\d+)\s*[x×]\s*(\d+)\s*", value)
    if not match:
        raise InvalidValue(f"--pixels: {value!r} is not valid: expected width x height in pixels, e.g. 6000x4000")
    return int(match.group(1)), int(match.group(2))


@body_app.command("add")
def body_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Our name for the body, unique.")],
    make: MakeOpt = None,
    model: ModelOpt = None,
    format: FormatOpt = None,
    serial: SerialOpt = None,
    pixels: PixelsOpt = None,
    unconfirmed: Annotated[bool, typer.Option("--unconfirmed", help="Mark it as still to be checked.")] = False,
) -> None:
    """Add a camera body (--make, --model and --format are required)."""
    if make is None or model is None or format is None:
        raise InvalidValue("body add needs --make, --model (as EXIF writes them) and --format")
    width, height = _pixels_option(pixels)
    with catalog_session(ctx) as session:
        row = service().add_body(session, name, exif_make=make, exif_model=model, format_name=format, serial=serial,
                                 pixel_width=width, pixel_height=height, confirmed=not unconfirmed)
    show_row(row, NOUN, title=f"Added body {row.name}")


@body_app.command("edit")
def body_edit(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Body name.")],
    new_name: NewNameOpt = None,
    make: MakeOpt = None,
    model: ModelOpt = None,
    format: FormatOpt = None,
    serial: SerialOpt = None,
    pixels: PixelsOpt = None,
    confirmed: Annotated[Optional[bool], typer.Option("--confirmed/--unconfirmed", help="Mark the body as checked (or not).", show_default=False)] = None,
) -> None:
    """Change a camera body; its frames follow."""
    width, height = _pixels_option(pixels)
    with catalog_session(ctx) as session:
        row = service().edit_body(session, name, new_name=new_name, exif_make=make, exif_model=model, serial=serial,
                                  format_name=format, pixel_width=width, pixel_height=height, confirmed=confirmed)
    show_row(row, NOUN, title=f"Changed body {row.name}")


@body_app.command("remove")
def body_remove(ctx: typer.Context, name: Annotated[str, typer.Argument(help="Body name.")], reassign_to: ReassignOpt = None) -> None:
    """Remove a camera body; frames taken with it need --reassign-to."""
    with catalog_session(ctx) as session:
        moved = service().remove_body(session, name, reassign_to=reassign_to)
    removed_line("body", name, moved, reassign_to)
