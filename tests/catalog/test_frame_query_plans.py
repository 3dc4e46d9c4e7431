"""The frames query of ``frames``/``check``/``stats`` reads a shoot or a date range through an
index, not the whole ``frame`` table (docs/streamed-output.md): the plans as the database itself
reports them (PostgreSQL ``EXPLAIN``, SQLite ``EXPLAIN QUERY PLAN``; both documented in the
servers' manuals). PostgreSQL is told ``SET enable_seqscan = off`` so that a small table
shows the plan it would choose for a large one; SQLite prefers an index without statistics."""

from __future__ import annotations

import datetime as dt

import pytest

from sharpzone.analysis.frames import FrameFilter
from sharpzone.catalog.frame_query import frames_statement
from sharpzone.catalog.location import sqlite_path


@pytest.fixture
def filled(catalog):
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_shoot

    with catalog.session_scope() as session:
        shoots = [add_shoot(session, name) for name in ("Quay at dawn", "Orchard wedding")]
        session.add_all(Frame(path=f"/cards/{number:04d}.jpg", file_size=1, file_mtime_ns=number,
                              shoot=shoots[number % 2], focal_mm=50.0, f_number=8.0,
                              captured_at=dt.datetime(2026, 5, 1) + dt.timedelta(hours=number))
                        for number in range(400))
    return catalog


def _plan(session, where: FrameFilter) -> str:
    connection = session.connection()
    compiled = frames_statement(session, where).compile(dialect=connection.dialect)
    params = compiled.construct_params()
    if compiled.positional:
        params = tuple(params[name] for name in compiled.positiontup)
    if connection.dialect.name == "postgresql":
        connection.exec_driver_sql("SET LOCAL enable_seqscan = off")
        explain = "EXPLAIN"
    else:
        explain = "EXPLAIN QUERY PLAN"
    rows = connection.exec_driver_sql(f"{explain} {compiled}", params).all()
    return "\n".join(" ".join(str(value) for value in row) for row in rows)


def test_a_shoot_is_read_through_the_shoot_index(filled, catalog_url):
    with filled.session_scope() as session:
        plan = _plan(session, FrameFilter(shoot="Quay at dawn"))
    assert "ix_frame_shoot_id" in plan, plan
    if not sqlite_path(catalog_url):
        assert "Seq Scan on frame" not in plan, plan


def test_a_date_range_is_read_through_the_capture_time_index(filled, catalog_url):
    with filled.session_scope() as session:
        plan = _plan(session, FrameFilter(date_from=dt.date(2026, 5, 3), date_to=dt.date(2026, 5, 4)))
    assert "ix_frame_captured_at" in plan, plan
    if not sqlite_path(catalog_url):
        assert "Seq Scan on frame" not in plan, plan
