"""Lens pupil magnification, frame warnings, and the ingest problem log.

Revision ID: 0002
Revises: 0001
Created: 2026-12-01

Reviewed by hand. Existing lenses get pupil magnification 1 (a symmetric design: the
close-up formulas then reduce to the plain ones, which is what 0001 catalogues computed);
existing frames get no warnings; the problem log starts empty.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0002"
down_revision = "0001"
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table("lens") as batch_op:
        batch_op.add_column(sa.Column("pupil_magnification", sa.Double(), server_default="1", nullable=False))
    with op.batch_alter_table("frame") as batch_op:
        batch_op.add_column(sa.Column("warnings", sa.Text(), nullable=True))
    op.create_table(
        "ingest_problem",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("shoot_id", sa.Integer(), nullable=True),
        sa.Column("path", sa.Text(), nullable=False),
        sa.Column("reason", sa.Text(), nullable=False),
        sa.Column("seen_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(
            ["shoot_id"], ["shoot.id"], name=op.f("fk_ingest_problem_shoot_id_shoot"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_ingest_problem")),
    )
    op.create_index(op.f("ix_ingest_problem_shoot_id"), "ingest_problem", ["shoot_id"])


def downgrade() -> None:
    op.drop_index(op.f("ix_ingest_problem_shoot_id"), table_name="ingest_problem")
    op.drop_table("ingest_problem")
    with op.batch_alter_table("frame") as batch_op:
        batch_op.drop_column("warnings")
    with op.batch_alter_table("lens") as batch_op:
        batch_op.drop_column("pupil_magnification")
