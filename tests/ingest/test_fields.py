"""The field table's pure parts: lens names, distance codes, focus points, sensor pixels."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sharpzone.ingest import fields


@pytest.mark.parametrize(("name", "spec"), [
    # Lens names as makers print them (invented makers; the notation is the trade's own).
    ("Altamira 18-55mm F3.5-5.6", (18.0, 55.0, 3.5, 5.6)),
    ("Altamira 50mm f/1.8", (50.0, 50.0, 1.8, 1.8)),
    ("Korvath 70-200mm F2.8 Sports", (70.0, 200.0, 2.8, 2.8)),
    ("Korvath AF 35-90mm F4", (35.0, 90.0, 4.0, 4.0)),
    ("Orlen 12-40mm F2.8 PRO", (12.0, 40.0, 2.8, 2.8)),
    ("Orlen 100 mm 1:2.8 Macro", (100.0, 100.0, 2.8, 2.8)),
    ("Orlen 16-35mm", (16.0, 35.0, None, None)),
    ("Orlen 4.5-13.5mm f/3.5-5.6", (4.5, 13.5, 3.5, 5.6)),
])
def test_lens_spec_from_name(name, spec):
    assert fields.lens_spec_from_name(name) == spec


@pytest.mark.parametrize("name", [None, "", "Orlen Pancake", "F2.8 only", "55-18mm F4"])
def test_lens_name_without_a_focal_range(name):
    assert fields.lens_spec_from_name(name) is None


def test_step_code_distance():
    # From memory: 0.01 m x 10^(code / 40); code 80 = 1 m, 120 = 10 m (libexiv2 prints the same).
    nominal, near, far = fields.step_code_distance_mm(80)
    assert nominal == pytest.approx(1000.0)
    assert near == pytest.approx(1000.0 / 10 ** (1 / 80)) and far == pytest.approx(1000.0 * 10 ** (1 / 80))
    assert fields.step_code_distance_mm(120)[0] == pytest.approx(10000.0)


@pytest.mark.parametrize(("text", "mm"), [("2.50 m", 2500.0), ("Infinity", math.inf), ("Infinite", math.inf),
                                          ("n/a", None), ("2500", None), (None, None)])
def test_printed_metres(text, mm):
    assert fields.printed_metres_mm(text) == mm


def test_canon_bracket_nominal_is_the_middle_in_dioptres():
    tags = {"Exif.CanonFi.FocusDistanceLower": 200, "Exif.CanonFi.FocusDistanceUpper": 300}
    found = fields.focus_distance(tags, [], 1.0)
    # 2 / (1/2000 + 1/3000) = 2400 mm (computed by hand).
    assert (found.near_mm, found.far_mm, found.nominal_mm) == (2000.0, 3000.0, pytest.approx(2400.0))


@pytest.mark.parametrize(("area", "point"), [
    ((600, 200), (0.5, 0.25, 0.0, 0.0)),            # CIPA DC-008: 2 values, a point
    ((600, 200, 80), (0.5, 0.25, 80 / 1200, 0.1)),  # 3 values, a circle of that diameter
    ((600, 200, 120, 80), (0.5, 0.25, 0.1, 0.1)),   # 4 values, a rectangle
])
def test_focus_point_shapes(area, point):
    found, key = fields.focus_point({"Exif.Photo.SubjectArea": area}, 1200, 800)
    assert found == pytest.approx(point) and key == "Exif.Photo.SubjectArea"


def test_focus_point_from_subject_location_and_outside_the_image():
    assert fields.focus_point({"Exif.Photo.SubjectLocation": (300, 400)}, 1200, 800)[0] == pytest.approx(
        (0.25, 0.5, 0.0, 0.0))
    assert fields.focus_point({"Exif.Photo.SubjectArea": (5000, 10)}, 1200, 800) == (None, None)
    assert fields.focus_point({"Exif.Photo.SubjectArea": (5, 10)}, None, 800) == (None, None)


def test_maker_note_af_area_when_exif_has_none():
    tags = {"Exif.NikonAf2.AFImageWidth": 6000, "Exif.NikonAf2.AFImageHeight": 4000,
            "Exif.NikonAf2.AFAreaXPosition": 3000, "Exif.NikonAf2.AFAreaYPosition": 1000,
            "Exif.NikonAf2.AFAreaWidth": 600, "Exif.NikonAf2.AFAreaHeight": 400}
    assert fields.focus_point(tags, None, None) == (pytest.approx((0.5, 0.25, 0.1, 0.1)),
                                                    "Exif.NikonAf2.AFAreaXPosition")
    assert fields.focus_point({**tags, "Exif.NikonAf2.AFAreaXPosition": 0}, None, None) == (None, None)


def test_sensor_pixels_of_a_raw_file_take_the_primary_image():
    tags = {fields.CONTAINER_IS_RAW: True,
            "Exif.Image.NewSubfileType": 1, "Exif.Image.ImageWidth": 256, "Exif.Image.ImageLength": 171,
            "Exif.SubImage1.NewSubfileType": 1, "Exif.SubImage1.ImageWidth": 3408,
            "Exif.SubImage1.ImageLength": 2272,
            "Exif.SubImage2.NewSubfileType": 0, "Exif.SubImage2.ImageWidth": 5472,
            "Exif.SubImage2.ImageLength": 3648,
            "Exif.Photo.PixelXDimension": 3408, "Exif.Photo.PixelYDimension": 2272}
    assert fields.sensor_pixels(tags) == (5472, 3648)


def test_every_distance_key_documents_its_units_and_codes():
    for entry in fields.DISTANCE_KEYS:
        assert entry.note and entry.precision in (fields.EXACT, fields.BRACKET, fields.STEP, fields.RESOLUTION)
        assert (entry.mm_per_unit is None) == (entry.precision == fields.STEP)


def test_keys_for_make_keep_standard_keys_and_the_makers_groups():
    keys = fields.wanted_keys()
    canon = fields.keys_for_make(keys, "Canon", is_raw=False)
    assert "Exif.Photo.FNumber" in canon and "Exif.CanonFi.FocusDistanceUpper" in canon
    assert not any(key.startswith(("Exif.Nikon", "Exif.SubImage")) for key in canon)
    assert "Exif.SubImage1.ImageWidth" in fields.keys_for_make(keys, "Canon", is_raw=True)
    # A Make the table does not know: every maker-note key is looked up.
    assert set(fields.keys_for_make(keys, "Korvath", is_raw=True)) == set(keys)


@settings(max_examples=400, deadline=None)
@given(st.tuples(*(st.integers(0, limit) for limit in (9999, 99, 99, 99, 99, 99))))
def test_capture_times_read_as_the_standard_library_reads_them(parts):
    """The capture time's fast reading against ``datetime.strptime`` with the EXIF 2.3 form
    (CIPA DC-008 4.6.5, DateTimeOriginal "YYYY:MM:DD HH:MM:SS"): the same moment, or the
    same refusal, for every such string, valid or not."""
    from datetime import datetime

    from sharpzone.ingest.fields import _exif_moment

    text = "{:04d}:{:02d}:{:02d} {:02d}:{:02d}:{:02d}".format(*parts)
    try:
        expected = datetime.strptime(text, "%Y:%m:%d %H:%M:%S")
    except ValueError:
        with pytest.raises(ValueError):
            _exif_moment(text)
    else:
        assert _exif_moment(text) == expected
