"""A catalogued lens's sharp-zone sheet: the lens, body and format looked up, then the pure
``analysis.sheets.build_sheet``."""

from __future__ import annotations

from typing import TYPE_CHECKING

from sharpzone.analysis.setting import DEFAULT_SENSOR, choose_coc
from sharpzone.analysis.sheets import LensSpec, Sheet, build_sheet
from sharpzone.catalog.service.bodies import get_body
from sharpzone.catalog.service.formats import get_format
from sharpzone.catalog.service.lenses import get_lens
from sharpzone.errors import InvalidValue

if TYPE_CHECKING:
    from sqlalchemy.orm import Session


def sheet_from_catalog(
    session: Session,
    lens_name: str,
    *,
    body: str | None = None,
    sensor: str | None = None,
    coc_mm: float | None = None,
    coc_policy: str | None = None,
    **sheet_options,
) -> Sheet:
    """The sheet of the catalogued lens ``lens_name`` (name or EXIF alias) for the format of
    ``body`` or the format called ``sensor`` (default 36x24); ``sheet_options`` are
    ``build_sheet``'s (``focal_lengths``, ``stops``, ``distances``, ``reference``, ``imperial``)."""
    if body and sensor:
        raise InvalidValue("give either --body or --sensor, not both")
    lens = LensSpec.from_row(get_lens(session, lens_name))
    pixel_pitch_mm = None
    if body:
        body_row = get_body(session, body)
        if body_row.sensor_format is None:
            raise InvalidValue(f"body {body_row.name!r} has no sensor format yet",
                               hint=f"set it with 'sharpzone body edit {body_row.name!r} --format FORMAT' or give --sensor")
        fmt = body_row.sensor_format.to_core()
        pixel_pitch_mm = body_row.pixel_pitch_mm
    else:
        fmt = get_format(session, sensor or DEFAULT_SENSOR).to_core()
    coc = choose_coc(sensor=fmt.name, coc_mm=coc_mm, coc_policy=coc_policy, pixel_pitch_mm=pixel_pitch_mm,
                     lookup=lambda _name: fmt)
    return build_sheet(lens, coc, **sheet_options)
