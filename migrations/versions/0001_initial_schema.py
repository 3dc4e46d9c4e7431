"""Initial schema: sensor formats, bodies, lenses with EXIF aliases, shoots, frames.

Revision ID: 0001
Revises:
Created: 2026-12-01

Reviewed by hand. Constraint names follow the naming convention in
sharpzone.catalog.models so later batch migrations can find them.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0001"
down_revision = None
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "sensor_format",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("width_mm", sa.Double(), nullable=False),
        sa.Column("height_mm", sa.Double(), nullable=False),
        sa.Column("coc_divisor", sa.Double(), server_default="1500", nullable=False),
        sa.Column("aliases", sa.Text(), server_default="", nullable=False),
        sa.Column("description", sa.Text(), server_default="", nullable=False),
        sa.Column("source", sa.Text(), server_default="", nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_sensor_format")),
        sa.UniqueConstraint("name", name=op.f("uq_sensor_format_name")),
    )
    op.create_table(
        "body",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("exif_make", sa.String(length=200), nullable=False),
        sa.Column("exif_model", sa.String(length=200), nullable=False),
        sa.Column("serial", sa.String(length=200), nullable=True),
        sa.Column("format_id", sa.Integer(), nullable=False),
        sa.Column("pixel_width", sa.Integer(), nullable=True),
        sa.Column("pixel_height", sa.Integer(), nullable=True),
        sa.Column("confirmed", sa.Boolean(), server_default=sa.true(), nullable=False),
        sa.ForeignKeyConstraint(["format_id"], ["sensor_format.id"], name=op.f("fk_body_format_id_sensor_format")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_body")),
        sa.UniqueConstraint("name", name=op.f("uq_body_name")),
    )
    op.create_index(op.f("ix_body_format_id"), "body", ["format_id"])
    # A missing serial counts as the empty one: at most one "any serial" body per model.
    op.create_index(
        "uq_body_exif_identity",
        "body",
        ["exif_make", "exif_model", sa.text("coalesce(serial, '')")],
        unique=True,
    )
    op.create_table(
        "lens",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("focal_min_mm", sa.Double(), nullable=False),
        sa.Column("focal_max_mm", sa.Double(), nullable=False),
        sa.Column("max_aperture_wide", sa.Double(), nullable=False),
        sa.Column("max_aperture_tele", sa.Double(), nullable=False),
        sa.Column("min_aperture", sa.Double(), nullable=False),
        sa.Column("close_focus_mm", sa.Double(), nullable=True),
        sa.Column("confirmed", sa.Boolean(), server_default=sa.true(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_lens")),
        sa.UniqueConstraint("name", name=op.f("uq_lens_name")),
    )
    op.create_table(
        "lens_alias",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("lens_id", sa.Integer(), nullable=False),
        sa.Column("exif_name", sa.String(length=200), nullable=False),
        sa.ForeignKeyConstraint(
            ["lens_id"], ["lens.id"], name=op.f("fk_lens_alias_lens_id_lens"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_lens_alias")),
        sa.UniqueConstraint("exif_name", name=op.f("uq_lens_alias_exif_name")),
    )
    op.create_index(op.f("ix_lens_alias_lens_id"), "lens_alias", ["lens_id"])
    op.create_table(
        "shoot",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("root_folder", sa.Text(), nullable=True),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.Column("plan_kind", sa.String(length=16), nullable=True),
        sa.Column("plan_near_mm", sa.Double(), nullable=True),
        sa.Column("plan_far_mm", sa.Double(), nullable=True),
        sa.Column("plan_front_mm", sa.Double(), nullable=True),
        sa.Column("plan_back_mm", sa.Double(), nullable=True),
        sa.Column("planned_focal_mm", sa.Double(), nullable=True),
        sa.Column("planned_f_number", sa.Double(), nullable=True),
        sa.Column("planned_focus_mm", sa.Double(), nullable=True),
        sa.Column("coc_policy", sa.String(length=200), nullable=True),
        sa.Column("notes", sa.Text(), nullable=True),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_shoot")),
        sa.UniqueConstraint("name", name=op.f("uq_shoot_name")),
    )
    op.create_table(
        "frame",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("shoot_id", sa.Integer(), nullable=True),
        sa.Column("path", sa.Text(), nullable=False),
        sa.Column("file_size", sa.BigInteger(), nullable=False),
        sa.Column("file_mtime_ns", sa.BigInteger(), nullable=False),
        sa.Column("captured_at", sa.DateTime(), nullable=True),
        sa.Column("utc_offset_minutes", sa.Integer(), nullable=True),
        sa.Column("body_id", sa.Integer(), nullable=True),
        sa.Column("lens_id", sa.Integer(), nullable=True),
        sa.Column("focal_mm", sa.Double(), nullable=True),
        sa.Column("f_number", sa.Double(), nullable=True),
        sa.Column("exposure_s", sa.Double(), nullable=True),
        sa.Column("iso", sa.Integer(), nullable=True),
        sa.Column("focus_mm", sa.Double(), nullable=True),
        sa.Column("focus_source", sa.String(length=16), server_default="none", nullable=False),
        sa.Column("focal_35mm_mm", sa.Double(), nullable=True),
        sa.Column("width_px", sa.Integer(), nullable=True),
        sa.Column("height_px", sa.Integer(), nullable=True),
        sa.Column("exif_make", sa.Text(), nullable=True),
        sa.Column("exif_model", sa.Text(), nullable=True),
        sa.Column("exif_lens_model", sa.Text(), nullable=True),
        sa.ForeignKeyConstraint(["body_id"], ["body.id"], name=op.f("fk_frame_body_id_body")),
        sa.ForeignKeyConstraint(["lens_id"], ["lens.id"], name=op.f("fk_frame_lens_id_lens")),
        sa.ForeignKeyConstraint(
            ["shoot_id"], ["shoot.id"], name=op.f("fk_frame_shoot_id_shoot"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_frame")),
        sa.UniqueConstraint("path", name=op.f("uq_frame_path")),
    )
    op.create_index(op.f("ix_frame_body_id"), "frame", ["body_id"])
    op.create_index(op.f("ix_frame_lens_id"), "frame", ["lens_id"])
    op.create_index(op.f("ix_frame_shoot_id"), "frame", ["shoot_id"])


def downgrade() -> None:
    for table in ("frame", "shoot", "lens_alias", "lens", "body", "sensor_format"):
        op.drop_table(table)
