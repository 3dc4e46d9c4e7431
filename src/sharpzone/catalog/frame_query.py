"""The frames query behind ``frames``, ``check`` and ``stats``: every filter in SQL, the rows
read from the driver's cursor a chunk at a time, and the few shoots, bodies (with formats)
and lenses fetched on their own, so the wide per-frame fetch stays narrow.

Plain rows out (tuples and column names); ``analysis.frames`` turns them into the frames
table the zones and checks read.
"""

from __future__ import annotations

import datetime as dt
from typing import TYPE_CHECKING, Protocol

if TYPE_CHECKING:
    from collections.abc import Iterator, Sequence

    from sqlalchemy.orm import Session


class FrameWhere(Protocol):
    """What the query filters on (``analysis.frames.FrameFilter``; the verdict is not SQL's)."""

    shoot: str | None
    body: str | None
    lens: str | None
    date_from: dt.date | None
    date_to: dt.date | None
    f_number_min: float | None
    f_number_max: float | None
    focal_min_mm: float | None
    focal_max_mm: float | None


def frames_statement(session: Session, where: FrameWhere, extra_columns: Sequence = (), *, join_blur: bool = True):
    """The one query of the frames matching ``where``, every filter in SQL, in capture order;
    ``extra_columns`` are labelled columns of ``frame`` or of ``frame_blur`` (outer-joined,
    so unmeasured frames stay; ``join_blur=False`` leaves the join out, for columns of
    ``frame`` alone). Named shoots, bodies and lenses are looked up first, so a misspelt name
    is an error, not an empty list."""
    from sqlalchemy import select

    from sharpzone.catalog import service  # each look-up's module loads when it is needed
    from sharpzone.catalog.models import Frame, FrameBlur

    statement = select(
        Frame.id.label("frame_id"), Frame.path, Frame.shoot_id, Frame.body_id, Frame.lens_id, Frame.focal_mm,
        Frame.f_number, Frame.exposure_s, Frame.iso, Frame.focus_mm, Frame.focus_source, Frame.captured_at,
        Frame.utc_offset_minutes, Frame.focus_near_mm, Frame.focus_far_mm, Frame.focus_key,
        Frame.subject_distance_range, *extra_columns,
    )
    if join_blur:
        statement = statement.outerjoin(FrameBlur, FrameBlur.frame_id == Frame.id)
    statement = statement.order_by(Frame.captured_at, Frame.path, Frame.id)
    if where.shoot:
        statement = statement.where(Frame.shoot_id == service.get_shoot(session, where.shoot).id)
    if where.body:
        statement = statement.where(Frame.body_id == service.get_body(session, where.body).id)
    if where.lens:
        statement = statement.where(Frame.lens_id == service.get_lens(session, where.lens).id)
    if where.date_from:
        statement = statement.where(Frame.captured_at >= dt.datetime.combine(where.date_from, dt.time.min))
    if where.date_to:
        statement = statement.where(Frame.captured_at < dt.datetime.combine(where.date_to, dt.time.min)
                                    + dt.timedelta(days=1))
    if where.f_number_min is not None:
        statement = statement.where(Frame.f_number >= where.f_number_min)
    if where.f_number_max is not None:
        statement = statement.where(Frame.f_number <= where.f_number_max)
    if where.focal_min_mm is not None:
        statement = statement.where(Frame.focal_mm >= where.focal_min_mm)
    if where.focal_max_mm is not None:
        statement = statement.where(Frame.focal_mm <= where.focal_max_mm)
    return statement


def iter_frame_rows(session: Session, where: FrameWhere, extra_columns: Sequence = (), *,
                    chunk_rows: int | None) -> Iterator[tuple[list[str], list[tuple]]]:
    """``(column names, rows)`` of ``frames_statement`` a chunk of at most ``chunk_rows``
    rows at a time (``None``: all at once); at least one (perhaps empty) chunk.

    SQLite's cursor steps through the result as it is fetched and its rows are read
    straight from the driver (SQLAlchemy's per-value result processing costs more than the
    query at 100,000 frames; values come as the driver gives them, e.g. times as text);
    PostgreSQL's client-side cursor would hold every row, so there a server-side cursor is
    asked for (whose first rows SQLAlchemy buffers, so it is read through the result).

    While no frame's blur has been measured (``frame_blur`` empty) the ``extra_columns`` of
    ``frame_blur`` and the join are left out of the query (a third of its time at 100,000
    frames): their names are then missing from the chunks, and every value of theirs is
    unknown."""
    from sqlalchemy import select

    from sharpzone.catalog.models import FrameBlur

    if session.execute(select(FrameBlur.frame_id).limit(1)).first() is None:
        blur_table = FrameBlur.__table__
        extra_columns = [column for column in extra_columns
                         if getattr(getattr(column, "element", column), "table", None) is not blur_table]
        statement = frames_statement(session, where, extra_columns, join_blur=False)
    else:
        statement = frames_statement(session, where, extra_columns)
    connection = session.connection()
    server_side = chunk_rows is not None and connection.dialect.supports_server_side_cursors
    if server_side:
        connection = connection.execution_options(stream_results=True)
    result = connection.execute(statement)
    names = list(result.keys())
    source = result if server_side else result.cursor
    try:
        first = True
        while True:
            rows = source.fetchall() if chunk_rows is None else source.fetchmany(chunk_rows)
            if not rows and not first:
                return
            first = False
            yield names, rows
            if chunk_rows is None or len(rows) < chunk_rows:
                return
    finally:
        result.close()


def small_tables(session: Session) -> list[tuple[str, list[str], list[tuple]]]:
    """Shoots, bodies (with their formats; a body may lack one) and lenses as ``(id column,
    column names, rows)``, the id first in each row: few rows, fetched once."""
    from sqlalchemy import select

    from sharpzone.catalog.models import Body, Lens, SensorFormatRow, Shoot

    statements = (
        ("shoot_id", select(
            Shoot.id.label("shoot_id"), Shoot.name.label("shoot"), Shoot.coc_policy.label("shoot_coc_policy"),
            Shoot.plan_kind, Shoot.plan_near_mm, Shoot.plan_far_mm, Shoot.plan_front_mm, Shoot.plan_back_mm,
            Shoot.planned_focal_mm, Shoot.planned_f_number, Shoot.planned_focus_mm)),
        ("body_id", select(
            Body.id.label("body_id"), Body.name.label("body"), Body.pixel_width, Body.pixel_height,
            SensorFormatRow.name.label("format_name"), SensorFormatRow.width_mm.label("format_width_mm"),
            SensorFormatRow.height_mm.label("format_height_mm"),
            SensorFormatRow.coc_divisor.label("format_coc_divisor"),
        ).outerjoin(SensorFormatRow, Body.format_id == SensorFormatRow.id)),
        ("lens_id", select(
            Lens.id.label("lens_id"), Lens.name.label("lens"), Lens.pupil_magnification,
            Lens.min_aperture.label("lens_min_aperture"), Lens.close_focus_mm.label("lens_close_focus_mm"),
            Lens.max_magnification.label("lens_max_magnification"))),
    )
    tables = []
    for key, statement in statements:
        result = session.execute(statement)
        tables.append((key, list(result.keys()), [tuple(row) for row in result.all()]))
    return tables


def has_frames(session: Session, where: FrameWhere, *, planned_only: bool = False) -> bool:
    """Whether any frame matches ``where`` (with ``planned_only``, any whose shoot has a
    plan), asked of the database without reading the frames."""
    from sqlalchemy import select

    from sharpzone.catalog.models import Shoot

    matching = frames_statement(session, where).order_by(None).subquery()
    query = select(matching.c.frame_id)
    if planned_only:
        query = query.where(matching.c.shoot_id.in_(select(Shoot.id).where(Shoot.plan_kind.is_not(None))))
    return session.execute(query.limit(1)).first() is not None


def plan_status(session: Session, where: FrameWhere) -> tuple[bool, bool]:
    """(whether any frame matches ``where``, whether any matching frame's shoot has a plan):
    one query when one is planned."""
    if has_frames(session, where, planned_only=True):
        return True, True
    return has_frames(session, where), False
