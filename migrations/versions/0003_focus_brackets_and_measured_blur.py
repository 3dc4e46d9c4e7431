"""Focus distances with their bracket and key, focus points, file identity, bodies without a
format, lens maximum magnification, and measured blur.

Revision ID: 0003
Revises: 0002
Created: 2026-12-02

Reviewed by hand. Existing rows:
- a frame that has a focus distance gets a bracket of exactly that distance (0002
  catalogues only knew exact distances: SubjectDistance, the user's CSV or the XMP
  sidecar) and the key it came from; frames without one keep none;
- focus points, device and inode stay empty until the file is read again (a rescan fills
  device and inode without reopening the file);
- every body keeps its format (the column only becomes optional);
- lenses get no maximum magnification (today's model stays for them);
- the measured-blur table starts empty.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

import sharpzone.catalog.models

revision = "0003"
down_revision = "0002"
branch_labels = None
depends_on = None

# The key each 0002 focus source was read from.
_KEY_OF_SOURCE = {"exif": "Exif.Photo.SubjectDistance", "user": "user distances CSV", "xmp": "Xmp.exif.SubjectDistance"}


def upgrade() -> None:
    op.create_table(
        "frame_blur",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("frame_id", sa.Integer(), nullable=False),
        sa.Column("method", sa.String(length=64), nullable=False),
        sa.Column("method_version", sa.Integer(), nullable=False),
        sa.Column("measured_at", sharpzone.catalog.models.WallClockDateTime(), nullable=False),
        sa.Column("analysed_long_px", sa.Integer(), nullable=False),
        sa.Column("focus_blur_px", sa.Double(), nullable=True),
        sa.Column("focus_edges", sa.Integer(), nullable=True),
        sa.Column("focus_x", sa.Double(), nullable=True),
        sa.Column("focus_y", sa.Double(), nullable=True),
        sa.Column("best_blur_px", sa.Double(), nullable=True),
        sa.Column("best_x", sa.Double(), nullable=True),
        sa.Column("best_y", sa.Double(), nullable=True),
        sa.Column("median_blur_px", sa.Double(), nullable=True),
        sa.Column("regions_measured", sa.Integer(), server_default="0", nullable=False),
        sa.Column("regions_total", sa.Integer(), server_default="0", nullable=False),
        sa.Column("grid", sa.Text(), nullable=True),
        sa.ForeignKeyConstraint(
            ["frame_id"], ["frame.id"], name=op.f("fk_frame_blur_frame_id_frame"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_frame_blur")),
        sa.UniqueConstraint("frame_id", name=op.f("uq_frame_blur_frame_id")),
    )
    _set_body_format_optional(True)
    with op.batch_alter_table("frame") as batch_op:
        batch_op.add_column(sa.Column("focus_near_mm", sa.Double(), nullable=True))
        batch_op.add_column(sa.Column("focus_far_mm", sa.Double(), nullable=True))
        batch_op.add_column(sa.Column("focus_key", sa.String(length=200), nullable=True))
        batch_op.add_column(sa.Column("subject_distance_range", sa.String(length=16), nullable=True))
        batch_op.add_column(sa.Column("focus_point_x", sa.Double(), nullable=True))
        batch_op.add_column(sa.Column("focus_point_y", sa.Double(), nullable=True))
        batch_op.add_column(sa.Column("focus_point_w", sa.Double(), nullable=True))
        batch_op.add_column(sa.Column("focus_point_h", sa.Double(), nullable=True))
        batch_op.add_column(sa.Column("focus_point_key", sa.String(length=200), nullable=True))
        batch_op.add_column(sa.Column("device", sa.BigInteger(), nullable=True))
        batch_op.add_column(sa.Column("inode", sa.BigInteger(), nullable=True))
        batch_op.create_index("ix_frame_device_inode", ["device", "inode"], unique=False)
    with op.batch_alter_table("lens") as batch_op:
        batch_op.add_column(sa.Column("max_magnification", sa.Double(), nullable=True))

    frame = sa.table(
        "frame",
        sa.column("focus_mm", sa.Double()),
        sa.column("focus_source", sa.String()),
        sa.column("focus_near_mm", sa.Double()),
        sa.column("focus_far_mm", sa.Double()),
        sa.column("focus_key", sa.String()),
    )
    for source, key in _KEY_OF_SOURCE.items():
        op.execute(
            frame.update()
            .where(frame.c.focus_source == source, frame.c.focus_mm.is_not(None))
            .values(focus_near_mm=frame.c.focus_mm, focus_far_mm=frame.c.focus_mm, focus_key=key)
        )


def downgrade() -> None:
    """Back to 0002: brackets, keys, focus points, identities and measurements are dropped;
    a body without a format cannot be kept by 0002, so such bodies must be given one first."""
    with op.batch_alter_table("lens") as batch_op:
        batch_op.drop_column("max_magnification")
    with op.batch_alter_table("frame") as batch_op:
        batch_op.drop_index("ix_frame_device_inode")
        for column in ("inode", "device", "focus_point_key", "focus_point_h", "focus_point_w", "focus_point_y",
                       "focus_point_x", "subject_distance_range", "focus_key", "focus_far_mm", "focus_near_mm"):
            batch_op.drop_column(column)
    _set_body_format_optional(False)
    op.drop_table("frame_blur")


def _set_body_format_optional(optional: bool) -> None:
    # SQLite's batch mode copies the table and cannot carry an expression index across,
    # so the body identity index of 0001 is dropped and made again around the change.
    op.drop_index("uq_body_exif_identity", table_name="body")
    with op.batch_alter_table("body") as batch_op:
        batch_op.alter_column("format_id", existing_type=sa.Integer(), nullable=optional)
    op.create_index(
        "uq_body_exif_identity", "body", ["exif_make", "exif_model", sa.text("coalesce(serial, '')")], unique=True
    )
