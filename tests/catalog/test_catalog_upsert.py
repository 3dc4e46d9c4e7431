"""``upsert_rows``: bulk writes with each database's own upsert, exact counts, ids in step.

Runs on SQLite and (with SHARPZONE_TEST_POSTGRES_URL) PostgreSQL via ``catalog_url``.
"""

from __future__ import annotations

import math

import pytest
from sqlalchemy import func, select

from sharpzone.catalog.engine import open_catalog
from sharpzone.catalog.models import Body, Frame, Lens, SensorFormatRow
from sharpzone.catalog.upsert import BATCH_ROWS, UpsertResult, sync_id_sequences, upsert_rows
from sharpzone.errors import Conflict


def frame_row(number: int, **fields) -> dict:
    return {"path": f"/cards/a/{number:06d}.jpg", "file_size": 1000 + number, "file_mtime_ns": number,
            "focal_mm": 50.0, "f_number": 8.0, "focus_mm": 3000.0, "focus_source": "exif", **fields}


def frames_by_path(catalog) -> dict[str, Frame]:
    with catalog.session_scope() as session:
        return {frame.path: frame for frame in session.scalars(select(Frame))}


def test_new_rows_are_inserted_and_known_keys_updated_with_exact_counts(catalog):
    rows = [frame_row(n) for n in range(BATCH_ROWS + 250)]  # more than one statement's worth
    with catalog.session_scope() as session:
        assert upsert_rows(session, Frame, rows, ["path"]) == UpsertResult(inserted=len(rows))
    changed = [frame_row(n, f_number=2.8) for n in range(0, len(rows), 2)] + [frame_row(10_000 + n) for n in range(7)]
    with catalog.session_scope() as session:
        result = upsert_rows(session, Frame, changed, ["path"])
    assert result == UpsertResult(inserted=7, updated=len(range(0, len(rows), 2)))
    stored = frames_by_path(catalog)
    assert len(stored) == len(rows) + 7
    assert stored["/cards/a/000000.jpg"].f_number == 2.8
    assert stored["/cards/a/000001.jpg"].f_number == 8.0


def test_infinity_and_defaults_survive_and_rows_may_differ_in_shape(catalog):
    rows = [frame_row(1, focus_mm=math.inf), {"path": "/cards/a/bare.jpg", "file_size": 1, "file_mtime_ns": 2}]
    with catalog.session_scope() as session:
        assert upsert_rows(session, Frame, rows, ["path"]).inserted == 2
    stored = frames_by_path(catalog)
    assert stored["/cards/a/000001.jpg"].focus_mm == math.inf
    assert stored["/cards/a/bare.jpg"].focus_source == "none"  # the column default applied
    assert stored["/cards/a/bare.jpg"].focus_mm is None


def test_only_the_named_columns_change_and_empty_means_keep(catalog):
    with catalog.session_scope() as session:
        upsert_rows(session, Frame, [frame_row(1)], ["path"])
    with catalog.session_scope() as session:
        result = upsert_rows(session, Frame, [frame_row(1, f_number=4.0, iso=800)], ["path"], ["iso"])
    assert result == UpsertResult(updated=1)
    frame = frames_by_path(catalog)["/cards/a/000001.jpg"]
    assert (frame.f_number, frame.iso) == (8.0, 800)
    with catalog.session_scope() as session:
        result = upsert_rows(session, Frame, [frame_row(1, iso=100), frame_row(2)], ["path"], ())
    assert result == UpsertResult(inserted=1, kept=1)
    assert frames_by_path(catalog)["/cards/a/000001.jpg"].iso == 800


def test_a_key_given_twice_in_one_call_keeps_the_last_row(catalog):
    with catalog.session_scope() as session:
        result = upsert_rows(session, Frame, [frame_row(1, iso=100), frame_row(1, iso=400)], ["path"])
    assert result == UpsertResult(inserted=1)
    assert frames_by_path(catalog)["/cards/a/000001.jpg"].iso == 400


def test_expression_index_is_a_conflict_target(catalog):
    # The body identity index treats a missing serial as '' (see models.Body).
    with catalog.session_scope() as session:
        format_id = session.scalar(select(SensorFormatRow.id).limit(1))
        body = {"name": "Korvath K1", "exif_make": "Korvath", "exif_model": "K1", "serial": None,
                "format_id": format_id, "pixel_width": 6000}
        key = [Body.exif_make, Body.exif_model, func.coalesce(Body.serial, "")]
        assert upsert_rows(session, Body, [body], key) == UpsertResult(inserted=1)
        again = upsert_rows(session, Body, [{**body, "pixel_width": 6048}], key, ["pixel_width"])
        assert again == UpsertResult(updated=1)
        other = upsert_rows(session, Body, [{**body, "name": "Korvath K1 #2", "serial": "0042"}], key)
        assert other == UpsertResult(inserted=1)
    with catalog.session_scope() as session:
        widths = dict(session.execute(select(Body.name, Body.pixel_width)).all())
    assert widths == {"Korvath K1": 6048, "Korvath K1 #2": 6000}


def test_plain_insert_without_a_key_refuses_duplicates_and_writes_nothing(catalog):
    with pytest.raises(Conflict):
        with catalog.session_scope() as session:
            upsert_rows(session, Frame, [frame_row(1), frame_row(2)])
            upsert_rows(session, Frame, [frame_row(3), frame_row(1)])
    assert frames_by_path(catalog) == {}


LENS = {"focal_min_mm": 35.0, "focal_max_mm": 35.0, "max_aperture_wide": 2.0, "max_aperture_tele": 2.0,
        "min_aperture": 22.0}


def test_rows_with_explicit_ids_leave_the_id_sequence_past_them(catalog):
    with catalog.session_scope() as session:
        upsert_rows(session, Lens, [{"id": 40, "name": "Altamira 35/2", **LENS}], ["name"])
    with catalog.session_scope() as session:  # an id the database picks must not collide
        session.add(Lens(name="Altamira 35/1.4", **{**LENS, "max_aperture_wide": 1.4, "max_aperture_tele": 1.4}))
    with catalog.session_scope() as session:
        assert sorted(session.scalars(select(Lens.id))) == [40, 41]


def test_sequences_can_be_put_right_after_hand_written_ids(catalog):
    from sqlalchemy import insert

    with catalog.session_scope() as session:
        session.execute(insert(Lens), [{"id": 7, "name": "Altamira 35/2", **LENS}])
        sync_id_sequences(session.connection())
        session.add(Lens(name="Altamira 28/2", **{**LENS, "focal_min_mm": 28.0, "focal_max_mm": 28.0}))
    with catalog.session_scope() as session:
        assert sorted(session.scalars(select(Lens.id))) == [7, 8]


def test_nothing_to_write_touches_nothing(catalog_url):
    with open_catalog(catalog_url) as catalog, catalog.session_scope() as session:
        assert upsert_rows(session, Frame, [], ["path"]) == UpsertResult()


def test_text_with_tabs_newlines_backslashes_and_quotes_arrives_intact(catalog):
    # PostgreSQL's bulk path goes through COPY's text format, where these characters are special.
    awkward = "tab\there\\N back\\slash 'quote' \"double\" new\nline ∞ café \\."
    with catalog.session_scope() as session:
        upsert_rows(session, Frame, [frame_row(1, path=f"/cards/{awkward}.jpg", warnings=awkward, file_size=2**40)],
                    ["path"])
    (frame,) = frames_by_path(catalog).values()
    assert (frame.path, frame.warnings, frame.file_size) == (f"/cards/{awkward}.jpg", awkward, 2**40)


def test_defaults_only_python_knows_are_filled_in(catalog):
    from sharpzone.catalog.models import Shoot

    with catalog.session_scope() as session:  # Shoot.created_at has no server-side default
        assert upsert_rows(session, Shoot, [{"name": "Quay"}, {"name": "Dock"}], ["name"]).inserted == 2
    with catalog.session_scope() as session:
        assert all(shoot.created_at is not None for shoot in session.scalars(select(Shoot)))


def test_the_row_by_row_path_for_other_databases_gives_the_same_result(catalog):
    from sharpzone.catalog.upsert import _upsert_one_by_one

    with catalog.session_scope() as session:
        connection = session.connection()
        table = Frame.__table__
        assert _upsert_one_by_one(connection, table, [frame_row(1), frame_row(2)], ["path"], None) == UpsertResult(2)
        again = _upsert_one_by_one(connection, table, [frame_row(1, iso=800), frame_row(3)], ["path"], None)
        assert again == UpsertResult(inserted=1, updated=1)
        kept = _upsert_one_by_one(connection, table, [frame_row(1, iso=50)], ["path"], ())
        assert kept == UpsertResult(kept=1)
    stored = frames_by_path(catalog)
    assert len(stored) == 3 and stored["/cards/a/000001.jpg"].iso == 800


def test_rows_as_tuples_in_any_column_order_read_back_like_rows_as_dicts(catalog):
    import datetime as dt

    from sharpzone.catalog.upsert import upsert_values

    taken = dt.datetime(2026, 5, 17, 14, 3, 22, 50_000)
    columns = ("warnings", "captured_at", "path", "file_mtime_ns", "file_size", "focus_mm")  # not the table's order
    with catalog.session_scope() as session:
        rows = [(None, taken, "/cards/t/1.jpg", 1, 10, math.inf), ("odd", None, "/cards/t/2.jpg", 2, 20, 3000.0),
                (None, taken, "/cards/t/1.jpg", 3, 30, 2500.0)]  # the last row of a key wins
        assert upsert_values(session, Frame, columns, rows, ["path"]) == UpsertResult(inserted=2)
        upsert_rows(session, Frame, [frame_row(3, captured_at=taken)], ["path"])
    with catalog.session_scope() as session:
        again = upsert_values(session, Frame, columns, [(None, None, "/cards/t/2.jpg", 4, 40, None),
                                                         (None, None, "/cards/t/9.jpg", 5, 50, None)], ["path"])
    assert again == UpsertResult(inserted=1, updated=1)
    stored = frames_by_path(catalog)
    first = stored["/cards/t/1.jpg"]
    assert (first.captured_at, first.file_size, first.focus_mm) == (taken, 30, 2500.0)
    assert stored["/cards/a/000003.jpg"].captured_at == taken  # the dict path stores it the same way
    assert (stored["/cards/t/2.jpg"].warnings, stored["/cards/t/2.jpg"].file_size) == (None, 40)
    assert stored["/cards/t/9.jpg"].focus_source == "none"  # the column default applied
