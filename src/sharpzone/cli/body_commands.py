"""``sharpzone body …``: camera bodies, how EXIF names them and which sensor format they have."""

from __future__ import annotations

import re
from typing import Annotated, Optional

import typer

from sharpzone.cli.noun_commands import (
    NewNameOpt,
    Noun,
    UnconfirmedOpt,
    confirmed_option,
    noun_group,
    reassigning_remove_command,
    service,
    show_saved,
    tables,
)
from sharpzone.cli.option_groups import OptionGroup, uses
from sharpzone.errors import InvalidValue

NOUN = Noun(
    "body", lambda session: service().list_bodies(session), lambda session, name: service().get_body(session, name),
    lambda: tables().BODY_FIELDS, "Camera bodies", "No camera bodies yet: add one with 'sharpzone body add'.",
    "Body name.", "List camera bodies with their EXIF names and sensor formats.", "Show one camera body.", False,
)
body_app, register = noun_group(NOUN, "Camera bodies: how EXIF names them and which sensor format they have.")


MakeOpt = Annotated[Optional[str], typer.Option("--make", help="EXIF Make exactly as the camera writes it.")]
ModelOpt = Annotated[Optional[str], typer.Option("--model", help="EXIF Model exactly as the camera writes it.")]
SerialOpt = Annotated[Optional[str], typer.Option("--serial", help="EXIF body serial number, to tell two bodies of one model apart ('' clears it).")]
FormatOpt = Annotated[Optional[str], typer.Option("--format", help="Sensor format name or alias (see 'sharpzone format list').")]
ConfirmedOpt = confirmed_option("body")
PixelsOpt = Annotated[Optional[str], typer.Option("--pixels", help="Full image size in pixels, e.g. 6000x4000.")]


def _pixels_option(value: str | None) -> tuple[int | None, int | None]:
    if value is None:
        return None, None
    match = re.fullmatch(r"\s*(\d+)\s*[x×]\s*(\d+)\s*", value)
    if not match:
        raise InvalidValue(f"--pixels: {value!r} is not valid: expected width x height in pixels, e.g. 6000x4000")
    return int(match.group(1)), int(match.group(2))


def _body_fields(make=None, model=None, format=None, serial=None, pixels=None) -> dict:
    width, height = _pixels_option(pixels)
    return {"exif_make": make, "exif_model": model, "format_name": format, "serial": serial,
            "pixel_width": width, "pixel_height": height}


# What EXIF calls the body, its format and pixels, shared by add and edit, as the service's keyword arguments.
_FIELDS = OptionGroup("fields", (("make", MakeOpt), ("model", ModelOpt), ("format", FormatOpt),
                                 ("serial", SerialOpt), ("pixels", PixelsOpt)), _body_fields)


@body_app.command("add")
@uses(_FIELDS)
def body_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Our name for the body, unique.")],
    fields: dict,
    unconfirmed: UnconfirmedOpt = False,
) -> None:
    """Add a camera body (--make, --model and --format are required)."""
    if None in (fields["exif_make"], fields["exif_model"], fields["format_name"]):
        raise InvalidValue("body add needs --make, --model (as EXIF writes them) and --format")
    show_saved(ctx, NOUN, "Added",
               lambda session: service().add_body(session, name, confirmed=not unconfirmed, **fields))


@body_app.command("edit")
@uses(_FIELDS)
def body_edit(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Body name.")],
    new_name: NewNameOpt = None,
    *,
    fields: dict,
    confirmed: ConfirmedOpt = None,
) -> None:
    """Change a camera body; its frames follow."""
    show_saved(ctx, NOUN, "Changed",
               lambda session: service().edit_body(session, name, new_name=new_name, confirmed=confirmed, **fields))


reassigning_remove_command(body_app, NOUN, "Remove a camera body; frames taken with it need --reassign-to.",
                           lambda session, name, to: service().remove_body(session, name, reassign_to=to))
