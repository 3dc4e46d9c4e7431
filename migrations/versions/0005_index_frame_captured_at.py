"""An index on frame.captured_at, so a date range is read through the index.

Revision ID: 0005
Revises: 0004
Created: 2026-12-02

Reviewed by hand. ``frames``, ``check`` and ``stats`` with ``--from``/``--to`` filter on
``captured_at`` in SQL; without an index a catalogue of tens of millions of frames is read
whole for a week's frames (docs/stream.md shows the plans). The shoot filter already has
``ix_frame_shoot_id`` (0001).

Existing rows: none is changed; the index is built over them during the upgrade (on
PostgreSQL this holds a write lock on ``frame`` while it builds: about a minute per ten
million frames on ordinary hardware, from memory; run it when nothing ingests).
"""

from __future__ import annotations

from alembic import op

revision = "0005"
down_revision = "0004"
branch_labels = None
depends_on = None


def upgrade() -> None:
    # A plain CREATE INDEX on both back ends: SQLite needs no batch copy of the table for it.
    op.create_index(op.f("ix_frame_captured_at"), "frame", ["captured_at"], unique=False)


def downgrade() -> None:
    op.drop_index(op.f("ix_frame_captured_at"), table_name="frame")
