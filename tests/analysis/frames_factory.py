"""Tiny frames DataFrames for the analysis tests (invented data)."""

from __future__ import annotations

import math

import pandas as pd


def frames_frame(*rows: dict) -> pd.DataFrame:
    """One row per dict; anything not given takes a plain default (50 mm f/8 at 3 m on 36×24)."""
    defaults = {
        "path": "/shoots/invented/IMG_0001.JPG", "shoot": "invented", "body": "Korvath K1", "lens": "Korvath 50/1.8",
        "focal_mm": 50.0, "f_number": 8.0, "focus_mm": 3000.0, "focus_source": "exif",
        "format_name": "36x24", "format_width_mm": 36.0, "format_height_mm": 24.0, "format_coc_divisor": 1500.0,
        "pixel_width": 6000, "pupil_magnification": 1.0, "shoot_coc_policy": None, "lens_min_aperture": 22.0,
        "plan_kind": None, "plan_near_mm": math.nan, "plan_far_mm": math.nan, "plan_front_mm": math.nan,
        "plan_back_mm": math.nan, "planned_focal_mm": math.nan, "planned_f_number": math.nan,
        "planned_focus_mm": math.nan,
    }
    records = []
    for number, row in enumerate(rows, start=1):
        record = {**defaults, "path": f"/shoots/invented/IMG_{number:04d}.JPG", **row}
        records.append(record)
    return pd.DataFrame.from_records(records)
