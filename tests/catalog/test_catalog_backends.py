"""Where SQLite and PostgreSQL differ, the catalogue must not: names, times, infinity.

Each test runs on both databases through the ``catalog_url`` fixture.
"""

from __future__ import annotations

import datetime as dt
import math

from sqlalchemy import select

from sharpzone.catalog.engine import create_catalog_engine
from sharpzone.catalog.models import Frame, IngestProblem
from sharpzone.catalog.service import add_body, add_lens, find_body_for_exif, get_lens


def test_names_with_letters_beyond_ascii_are_found_as_spelt_and_ascii_case_is_ignored(catalog):
    # SQLite's lower() folds ASCII only; Python's str.lower folds "Ö" too. Both sides of
    # the comparison must go through the same function.
    with catalog.session_scope() as session:
        add_lens(session, "Ödland Optik 35/2", focal_min_mm=35, max_aperture_wide=2)
        add_body(session, "Ödland body", exif_make="ÖDLAND", exif_model="Ö-1", format_name="36x24")
    with catalog.session_scope() as session:
        assert get_lens(session, "Ödland Optik 35/2").focal_min_mm == 35
        assert get_lens(session, "  ödland optik 35/2 ".replace("ö", "Ö")).name == "Ödland Optik 35/2"
        assert get_lens(session, "ÖDLAND OPTIK 35/2").name == "Ödland Optik 35/2"
        assert find_body_for_exif(session, "ÖDLAND", "Ö-1").name == "Ödland body"


def test_times_are_stored_as_the_wall_clock_they_show_on_every_database(catalog):
    # PostgreSQL would shift a zone-aware value into the server's zone before dropping the
    # zone; the catalogue keeps the wall-clock time (the offset has its own column).
    shown = dt.datetime(2026, 5, 1, 18, 30, 15, 250000)
    aware = shown.replace(tzinfo=dt.timezone(dt.timedelta(hours=-7)))
    with catalog.session_scope() as session:
        session.add(Frame(path="/c/aware.jpg", file_size=1, file_mtime_ns=1, captured_at=aware, utc_offset_minutes=-420))
        session.add(Frame(path="/c/naive.jpg", file_size=1, file_mtime_ns=2, captured_at=shown))
        session.add(IngestProblem(path="/c/bad.jpg", reason="truncated"))
    engine = create_catalog_engine(catalog.url)
    with engine.connect() as connection:
        times = dict(connection.execute(select(Frame.path, Frame.captured_at)).all())
        seen_at = connection.execute(select(IngestProblem.seen_at)).scalar()
    engine.dispose()
    assert times == {"/c/aware.jpg": shown, "/c/naive.jpg": shown}
    assert seen_at.tzinfo is None
    assert abs(seen_at - dt.datetime.now(dt.timezone.utc).replace(tzinfo=None)) < dt.timedelta(minutes=5)


def test_infinity_and_tiny_values_round_trip(catalog):
    # (-inf no longer fits any column: every length is above 0, ck_frame_focus_mm_positive.)
    values = {"/c/far.jpg": math.inf, "/c/tiny.jpg": 5e-324, "/c/third.jpg": 1 / 3}
    with catalog.session_scope() as session:
        for number, (path, value) in enumerate(values.items()):
            session.add(Frame(path=path, file_size=1, file_mtime_ns=number, focus_mm=value))
    engine = create_catalog_engine(catalog.url)
    with engine.connect() as connection:
        assert dict(connection.execute(select(Frame.path, Frame.focus_mm)).all()) == values
    engine.dispose()
