"""The pure part of matching a frame to the catalogue: which format its sensor is.

Crop factor = FocalLengthIn35mmFilm / FocalLength (CIPA DC-008, tag 0xA405); the
focal-plane size comes from FocalPlaneX/YResolution (tags 0xA20E/0xA20F). Formats here are
invented; sizes are round numbers.
"""

from __future__ import annotations

import pytest

from sharpzone.ingest.match import infer_format
from sharpzone.ingest.records import CaptureRecord
from sharpzone.optics.formats import SensorFormat

FULL = SensorFormat("test-36x24", 36.0, 24.0)
CROP = SensorFormat("test-24x16", 24.0, 16.0)  # diagonal 28.84 mm: crop factor 1.5
SMALL = SensorFormat("test-17x13", 17.3, 13.0)
FORMATS = (FULL, CROP, SMALL)


def test_no_formats_no_answer():
    assert infer_format(CaptureRecord(path="a.jpg", focal_mm=50, focal_35mm_mm=75), ()) == (None, "")


@pytest.mark.parametrize(("focal", "equivalent", "expected"), [(50, 50, FULL), (50, 75, CROP), (20, 40, SMALL)])
def test_the_35mm_equivalent_focal_length_names_the_format(focal, equivalent, expected):
    # 20 mm → 40 mm is a crop factor of 2: diagonal 43.27 / 2 = 21.6 mm, 17.3 × 13 is 21.64.
    assert infer_format(CaptureRecord(path="a.jpg", focal_mm=focal, focal_35mm_mm=equivalent), FORMATS) == (
        expected, "35 mm equivalent focal length")


def test_a_crop_factor_far_from_every_format_gives_nothing():
    # 50 → 300 mm: crop 6, diagonal 7.2 mm, 64 % below the smallest format.
    assert infer_format(CaptureRecord(path="a.jpg", focal_mm=50, focal_35mm_mm=300), FORMATS) == (None, "")


def test_the_focal_plane_size_names_the_format_either_way_round():
    record = CaptureRecord(path="a.jpg", focal_plane_width_mm=16.1, focal_plane_height_mm=24.2)
    assert infer_format(record, FORMATS) == (CROP, "focal-plane resolution")


def test_within_eight_percent_only():
    near = CaptureRecord(path="a.jpg", focal_plane_width_mm=36 * 1.07, focal_plane_height_mm=24 * 1.07)
    far = CaptureRecord(path="a.jpg", focal_plane_width_mm=36 * 1.10, focal_plane_height_mm=24 * 1.10)
    assert infer_format(near, (FULL,))[0] is FULL
    assert infer_format(far, (FULL,)) == (None, "")
