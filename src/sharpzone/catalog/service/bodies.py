"""Camera bodies in the catalogue: list, show, add, edit, remove, and EXIF matching.

A body is known to EXIF by (make, model, serial). At most one body per make and model may
leave the serial empty; EXIF matching prefers the body with the frame's serial and falls
back to that one (see ``find_body_for_exif``).
"""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from sharpzone.catalog.models import Body, Frame
from sharpzone.catalog.rules import clean_name, optional_text, positive_int
from sharpzone.catalog.service.common import (
    equal_ignoring_case,
    get_by_name,
    merged,
    remove_reassigning_frames,
    require_name_free,
    saved,
)
from sharpzone.catalog.service.formats import get_format
from sharpzone.errors import Conflict, InvalidValue


def list_bodies(session: Session) -> list[Body]:
    """Every body, by name, with its sensor format loaded."""
    return list(session.scalars(select(Body).order_by(Body.name)).unique())


def get_body(session: Session, name: str) -> Body:
    """The body called ``name`` (ignoring case); ``NotFound`` lists the known ones."""
    return get_by_name(session, Body, name, "body")


def find_body_for_exif(session: Session, make: str, model: str, serial: str | None = None) -> Body | None:
    """The body EXIF names: same make and model (ignoring case and outer spaces) and the
    same serial, else the body of that make and model without a serial, else ``None``."""
    candidates = session.scalars(
        select(Body).where(
            equal_ignoring_case(Body.exif_make, make),
            equal_ignoring_case(Body.exif_model, model),
        )
    ).unique()
    by_serial = {body.serial: body for body in candidates}
    wanted = optional_text(serial)
    return by_serial.get(wanted) if wanted in by_serial else by_serial.get(None)


def add_body(
    session: Session,
    name: str,
    *,
    exif_make: str,
    exif_model: str,
    format_name: str | None,
    serial: str | None = None,
    pixel_width: int | None = None,
    pixel_height: int | None = None,
    confirmed: bool = True,
) -> Body:
    """Add a body named ``name`` with the EXIF make/model (and serial) it writes and its
    sensor format (by name or alias; ``None`` while unknown: its frames are then not judged
    until it is set); pixel dimensions are the full image in pixels. One of make and model
    may be empty (some files name only one)."""
    return saved(session, Body(), _apply, locals())


def edit_body(
    session: Session,
    name: str,
    *,
    new_name: str | None = None,
    exif_make: str | None = None,
    exif_model: str | None = None,
    serial: str | None = None,
    format_name: str | None = None,
    pixel_width: int | None = None,
    pixel_height: int | None = None,
    confirmed: bool | None = None,
) -> Body:
    """Change the given fields of body ``name`` (``None`` keeps a field; ``serial=""`` clears it)."""
    return saved(session, get_body(session, name), _apply, locals())


def remove_body(session: Session, name: str, *, reassign_to: str | None = None) -> int:
    """Remove body ``name``. Frames taken with it are refused (``Conflict``) unless
    ``reassign_to`` names the body they move to. Returns how many frames moved."""
    return remove_reassigning_frames(session, Body, Frame.body_id, name, reassign_to, "body")


def _apply(session, body, *, format_name, **changes) -> None:
    """Validate the complete new state of ``body`` (``None`` keeps a field, ``format_name``
    too), then set it."""
    values = merged(body, **changes)
    name = clean_name(values["name"], "body")
    make, model = optional_text(values["exif_make"]) or "", optional_text(values["exif_model"]) or ""
    if not make and not model:
        raise InvalidValue(f"body {name!r}: EXIF make and model must not both be empty")
    make = clean_name(make, f"body {name!r}: EXIF make") if make else make
    model = clean_name(model, f"body {name!r}: EXIF model") if model else model
    serial = optional_text(values["serial"])
    sensor_format = body.sensor_format if format_name is None else get_format(session, format_name, error=InvalidValue)
    pixel_width = positive_int(values["pixel_width"], f"body {name!r}: pixel width")
    pixel_height = positive_int(values["pixel_height"], f"body {name!r}: pixel height")
    require_name_free(session, Body, name, "body", keep=body)
    twin = find_body_for_exif(session, make, model, serial)
    if twin is not None and twin is not body and (twin.serial or None) == serial:
        what = f"serial {serial!r}" if serial else "no serial"
        raise Conflict(f"body {twin.name!r} already is {make} {model} with {what}")
    body.name = name
    body.exif_make = make
    body.exif_model = model
    body.serial = serial
    body.sensor_format = sensor_format
    body.pixel_width = pixel_width
    body.pixel_height = pixel_height
    body.confirmed = bool(values["confirmed"])
