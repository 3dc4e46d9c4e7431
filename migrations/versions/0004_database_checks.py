"""Rules in the database: CHECK constraints on the enumerations and ranges.

Revision ID: 0004
Revises: 0003
Created: 2026-12-02

The conditions are the ones ``sharpzone.catalog.rules.CHECKS`` held when this revision was
written, copied here so that the revision means the same thing forever; the models declare
the current ones and a test compares them with a catalogue upgraded to head. Covered: the
plan kind and its limits, focus sources (with "makernote") and subject distance ranges,
lengths, times and counts above 0, f-numbers of at least f/0.5, the focus bracket
(nearest <= focus <= farthest), focus-point fractions in [0, 1] and measured blur >= 0.

Existing rows: none is changed. A catalogue holding a row that breaks a rule (only a
bundle imported before 0004 could have stored one) is refused with one line naming the
table, the rule and the row, and left as it was; the backup made before the upgrade keeps
it too.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

from sharpzone.errors import CatalogError

revision = "0004"
down_revision = "0003"
branch_labels = None
depends_on = None

# table -> [(rule, SQL condition)]; constraint names are ck_<table>_<rule>.
CHECKS = {'sensor_format': [('width_mm_positive', 'width_mm IS NULL OR width_mm > 0'),
                   ('height_mm_positive', 'height_mm IS NULL OR height_mm > 0'),
                   ('coc_divisor_positive', 'coc_divisor IS NULL OR coc_divisor > 0')],
 'body': [('pixel_width_positive', 'pixel_width IS NULL OR pixel_width > 0'),
          ('pixel_height_positive', 'pixel_height IS NULL OR pixel_height > 0')],
 'lens': [('focal_min_mm_positive', 'focal_min_mm IS NULL OR focal_min_mm > 0'),
          ('pupil_magnification_positive', 'pupil_magnification IS NULL OR pupil_magnification > 0'),
          ('close_focus_mm_positive', 'close_focus_mm IS NULL OR close_focus_mm > 0'),
          ('max_magnification_positive', 'max_magnification IS NULL OR max_magnification > 0'),
          ('focal_range', 'focal_max_mm >= focal_min_mm'),
          ('max_aperture_wide_f_number', 'max_aperture_wide IS NULL OR max_aperture_wide >= 0.5'),
          ('max_aperture_tele_f_number', 'max_aperture_tele IS NULL OR max_aperture_tele >= 0.5'),
          ('aperture_range', 'min_aperture >= max_aperture_wide AND min_aperture >= max_aperture_tele')],
 'shoot': [('plan_kind', "plan_kind IS NULL OR plan_kind IN ('range', 'depth')"),
           ('plan_shape',
            '(plan_kind IS NULL AND plan_near_mm IS NULL AND plan_far_mm IS NULL AND plan_front_mm IS NULL '
            "AND plan_back_mm IS NULL) OR (plan_kind = 'range' AND plan_near_mm > 0 AND plan_far_mm > "
            "plan_near_mm AND plan_front_mm IS NULL AND plan_back_mm IS NULL) OR (plan_kind = 'depth' AND "
            'plan_front_mm >= 0 AND plan_back_mm >= 0 AND plan_front_mm + plan_back_mm > 0 AND plan_near_mm '
            'IS NULL AND plan_far_mm IS NULL)'),
           ('planned_focal_mm_positive', 'planned_focal_mm IS NULL OR planned_focal_mm > 0'),
           ('planned_focus_mm_positive', 'planned_focus_mm IS NULL OR planned_focus_mm > 0'),
           ('planned_f_number_f_number', 'planned_f_number IS NULL OR planned_f_number >= 0.5')],
 'frame': [('focus_source', "focus_source IN ('user', 'exif', 'makernote', 'xmp', 'none')"),
           ('subject_distance_range',
            "subject_distance_range IS NULL OR subject_distance_range IN ('macro', 'close', 'distant')"),
           ('focal_mm_positive', 'focal_mm IS NULL OR focal_mm > 0'),
           ('focal_35mm_mm_positive', 'focal_35mm_mm IS NULL OR focal_35mm_mm > 0'),
           ('exposure_s_positive', 'exposure_s IS NULL OR exposure_s > 0'),
           ('iso_positive', 'iso IS NULL OR iso > 0'),
           ('width_px_positive', 'width_px IS NULL OR width_px > 0'),
           ('height_px_positive', 'height_px IS NULL OR height_px > 0'),
           ('focus_mm_positive', 'focus_mm IS NULL OR focus_mm > 0'),
           ('focus_near_mm_positive', 'focus_near_mm IS NULL OR focus_near_mm > 0'),
           ('focus_far_mm_positive', 'focus_far_mm IS NULL OR focus_far_mm > 0'),
           ('f_number_f_number', 'f_number IS NULL OR f_number >= 0.5'),
           ('file_size_not_negative', 'file_size IS NULL OR file_size >= 0'),
           ('focus_bracket',
            '(focus_near_mm IS NULL OR focus_mm IS NULL OR focus_near_mm <= focus_mm) AND (focus_far_mm IS '
            'NULL OR focus_mm IS NULL OR focus_mm <= focus_far_mm) AND (focus_near_mm IS NULL OR '
            'focus_far_mm IS NULL OR focus_near_mm <= focus_far_mm)'),
           ('focus_point_x_fraction', 'focus_point_x IS NULL OR (focus_point_x >= 0 AND focus_point_x <= 1)'),
           ('focus_point_y_fraction', 'focus_point_y IS NULL OR (focus_point_y >= 0 AND focus_point_y <= 1)'),
           ('focus_point_w_fraction', 'focus_point_w IS NULL OR (focus_point_w >= 0 AND focus_point_w <= 1)'),
           ('focus_point_h_fraction',
            'focus_point_h IS NULL OR (focus_point_h >= 0 AND focus_point_h <= 1)')],
 'frame_blur': [('focus_blur_px_not_negative', 'focus_blur_px IS NULL OR focus_blur_px >= 0'),
                ('best_blur_px_not_negative', 'best_blur_px IS NULL OR best_blur_px >= 0'),
                ('median_blur_px_not_negative', 'median_blur_px IS NULL OR median_blur_px >= 0'),
                ('focus_edges_not_negative', 'focus_edges IS NULL OR focus_edges >= 0'),
                ('regions_measured_not_negative', 'regions_measured IS NULL OR regions_measured >= 0'),
                ('method_version_not_negative', 'method_version IS NULL OR method_version >= 0'),
                ('analysed_long_px_positive', 'analysed_long_px IS NULL OR analysed_long_px > 0'),
                ('focus_x_fraction', 'focus_x IS NULL OR (focus_x >= 0 AND focus_x <= 1)'),
                ('focus_y_fraction', 'focus_y IS NULL OR (focus_y >= 0 AND focus_y <= 1)'),
                ('best_x_fraction', 'best_x IS NULL OR (best_x >= 0 AND best_x <= 1)'),
                ('best_y_fraction', 'best_y IS NULL OR (best_y >= 0 AND best_y <= 1)'),
                ('regions', 'regions_measured <= regions_total')]}


def upgrade() -> None:
    connection = op.get_bind()
    for table, rules in CHECKS.items():
        for rule, condition in rules:
            row = connection.execute(sa.text(f"SELECT id FROM {table} WHERE NOT ({condition}) ORDER BY id LIMIT 1")).first()
            if row is not None:
                raise CatalogError(
                    f"cannot add the rule {rule!r} to table {table}: row id {row[0]} breaks it "
                    f"({condition}); the catalogue was left unchanged",
                    hint="correct or remove that row with the program that wrote it, then open the catalogue again",
                )
    for table, rules in CHECKS.items():
        _around_body_index(table, True)
        with op.batch_alter_table(table) as batch_op:
            for rule, condition in rules:
                batch_op.create_check_constraint(op.f(f"ck_{table}_{rule}"), sa.text(condition))
        _around_body_index(table, False)


def downgrade() -> None:
    for table, rules in CHECKS.items():
        _around_body_index(table, True)
        with op.batch_alter_table(table) as batch_op:
            for rule, _condition in rules:
                batch_op.drop_constraint(op.f(f"ck_{table}_{rule}"), type_="check")
        _around_body_index(table, False)


def _around_body_index(table: str, before: bool) -> None:
    # SQLite's batch mode copies the table and cannot carry the expression index of 0001
    # across, so it is dropped before the body table changes and made again after (as in 0003).
    if table != "body":
        return
    if before:
        op.drop_index("uq_body_exif_identity", table_name="body")
    else:
        op.create_index(
            "uq_body_exif_identity", "body", ["exif_make", "exif_model", sa.text("coalesce(serial, '')")], unique=True
        )
