"""normalise_capture from plain tag dictionaries: EXIF 2.3 (CIPA DC-008) semantics, absurd values."""

from __future__ import annotations

import math
import pickle
from datetime import datetime

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sharpzone.ingest.fields import STANDARD_TAGS
from sharpzone.ingest.normalise import normalise_capture
from sharpzone.ingest.records import CaptureRecord

PATH = "/shoots/harbour/frame-0001.jpg"


def standard_key(name: str) -> str:
    """The readers' full key of a standard tag from its short name (exifread's or libexiv2's)."""
    name = {"ExifImageWidth": "PixelXDimension", "ExifImageLength": "PixelYDimension"}.get(name, name)
    return next(key for key in STANDARD_TAGS.values() if key.rsplit(".", 1)[1] == name)


def keyed(tags: dict) -> dict:
    """Short tag names (as CIPA DC-008 names them) → the readers' full keys."""
    return {standard_key(name): value for name, value in tags.items()}


def capture(**tags) -> CaptureRecord:
    return normalise_capture(keyed(tags), PATH)


def test_a_complete_frame():
    record = capture(
        Make="Korvath", Model="Korvath KV-7 ", LensMake="Altamira Optical", LensModel="Altamira 50mm F1.8\x00",
        BodySerialNumber="KV7-000123", LensSerialNumber="AO-98765",
        FNumber=2.8, FocalLength=50.0, ExposureTime=0.004, ISOSpeedRatings=400, SubjectDistance=3.2,
        FocalLengthIn35mmFilm=75, SubjectDistanceRange=2, LensSpecification=(24.0, 70.0, 2.8, None),
        DateTimeOriginal="2026:05:17 14:03:22", SubSecTimeOriginal="05", OffsetTimeOriginal="+05:30",
        ExifImageWidth=6000, ExifImageLength=4000,
    )
    assert record.path == PATH
    assert (record.exif_make, record.exif_model, record.lens_model) == (
        "Korvath", "Korvath KV-7", "Altamira 50mm F1.8")
    assert record.body_serial == "KV7-000123"
    assert (record.f_number, record.focal_mm, record.exposure_s, record.iso) == (2.8, 50.0, 0.004, 400)
    # SubjectDistance is in metres (CIPA DC-008); records hold millimetres.
    assert record.focus_mm == pytest.approx(3200.0) and record.focus_source == "exif"
    # FocalLengthIn35mmFilm 0xA405; SubjectDistanceRange 0xA40C: 2 = close view.
    assert record.focal_35mm_mm == 75 and record.subject_distance_range == "close"
    assert record.lens_spec == (24.0, 70.0, 2.8, None)
    # SubSecTimeOriginal "05" is a decimal fraction: 0.05 s.
    assert record.captured_at == datetime(2026, 5, 17, 14, 3, 22, 50000)
    assert record.utc_offset_minutes == 330
    assert (record.width_px, record.height_px) == (6000, 4000)
    assert record.warnings == ()
    assert pickle.loads(pickle.dumps(record)) == record


def test_empty_tags_give_an_empty_record():
    record = capture()
    assert record == CaptureRecord(path=PATH)


# --- f-number -----------------------------------------------------------------------------

def test_f_number_from_aperture_value_when_fnumber_is_missing():
    # APEX: N = 2^(Av/2); REFERENCES (CIPA DC-008): f/1.8 <-> Av 1.695994.
    record = capture(ApertureValue=1.695994)
    assert record.f_number == pytest.approx(1.8, abs=1e-5)
    assert any("ApertureValue" in warning for warning in record.warnings)


def test_absurd_aperture_value_is_dropped_not_overflowed():
    record = capture(ApertureValue=2048)
    assert record.f_number is None and "ApertureValue" in record.warnings[0]


def test_fnumber_wins_over_aperture_value():
    assert capture(FNumber=4.0, ApertureValue=1.695994).f_number == 4.0


@pytest.mark.parametrize("value", [0, 0.0, 0.3, -2.8, "f/2", (float("nan"),)])
def test_absurd_f_number_is_dropped_with_a_warning(value):
    # f/0.5 is the limit in air (encyclopedia article "F-number": N = 1/(2 NA), NA <= 1).
    record = capture(FNumber=value)
    assert record.f_number is None
    assert len(record.warnings) == 1 and "f-number" in record.warnings[0]


def test_unknown_f_number_0_over_0_is_silently_unknown():
    assert capture(FNumber=None) == CaptureRecord(path=PATH)


# --- focal length -------------------------------------------------------------------------

@pytest.mark.parametrize("value", [0, 0.0, -35.0])
def test_absurd_focal_length_is_dropped_with_a_warning(value):
    record = capture(FocalLength=value)
    assert record.focal_mm is None and "focal length" in record.warnings[0]


def test_focal_length_in_35mm_film_zero_means_unknown():
    # CIPA DC-008 FocalLengthIn35mmFilm: 0 = unknown.
    record = capture(FocalLengthIn35mmFilm=0)
    assert record.focal_35mm_mm is None and record.warnings == ()


# --- subject distance ---------------------------------------------------------------------

def test_subject_distance_zero_means_unknown():
    # CIPA DC-008 SubjectDistance: numerator 0 = distance unknown (not a warning).
    record = capture(SubjectDistance=0.0)
    assert record.focus_mm is None and record.focus_source == "none" and record.warnings == ()


@pytest.mark.parametrize("value", ["inf", math.inf])
def test_subject_distance_infinity(value):
    # CIPA DC-008 SubjectDistance: numerator 0xFFFFFFFF = infinity (read_tags gives "inf").
    record = capture(SubjectDistance=value)
    assert record.focus_mm == math.inf and record.focus_source == "exif"


@pytest.mark.parametrize("metres", [-1.5, 0.0004])
def test_negative_or_sub_millimetre_distance_is_dropped(metres):
    record = capture(SubjectDistance=metres)
    assert record.focus_mm is None and record.focus_source == "none"
    assert "subject distance" in record.warnings[0]


def test_subject_distance_range_codes():
    # CIPA DC-008 SubjectDistanceRange: 0 unknown, 1 macro, 2 close view, 3 distant view.
    assert [capture(SubjectDistanceRange=code).subject_distance_range for code in (0, 1, 2, 3, 9)] == [
        None, "macro", "close", "distant", None]


# --- lens specification -------------------------------------------------------------------

def test_lens_specification_with_unknown_apertures():
    # CIPA DC-008 LensSpecification: unknown F written 0/0, which read_tags gives as None.
    assert capture(LensSpecification=(70.0, 200.0, None, None)).lens_spec == (70.0, 200.0, None, None)
    assert capture(LensSpecification=(None, None, None, None)).lens_spec is None
    assert capture(LensSpecification=(0.0, 0.0, 0.0, 0.0)).lens_spec is None


def test_malformed_lens_specification_is_a_warning():
    record = capture(LensSpecification=(24.0, 70.0))
    assert record.lens_spec is None and "lens specification" in record.warnings[0]


# --- time ---------------------------------------------------------------------------------

@pytest.mark.parametrize(("offset", "minutes"), [("+05:30", 330), ("-03:00", -180), ("+00:00", 0), ("   :  ", None)])
def test_utc_offset(offset, minutes):
    # CIPA DC-008 OffsetTimeOriginal: "±HH:MM"; unknown written as blanks.
    record = capture(OffsetTimeOriginal=offset)
    assert record.utc_offset_minutes == minutes and record.warnings == ()


def test_bad_utc_offset_is_a_warning():
    record = capture(OffsetTimeOriginal="+5:30")
    assert record.utc_offset_minutes is None and "UTC offset" in record.warnings[0]


@pytest.mark.parametrize(("sub_second", "microseconds"), [("1", 100000), ("123", 123000), ("000007", 7)])
def test_sub_second_digits_are_a_decimal_fraction(sub_second, microseconds):
    record = capture(DateTimeOriginal="2026:01:02 03:04:05", SubSecTimeOriginal=sub_second)
    assert record.captured_at == datetime(2026, 1, 2, 3, 4, 5, microseconds)


def test_unknown_capture_time_is_blank_or_zeros():
    # CIPA DC-008: an unknown date/time may be written as spaces (or, by some writers, zeros).
    for text in ("    :  :     :  :  ", "0000:00:00 00:00:00"):
        record = capture(DateTimeOriginal=text)
        assert record.captured_at is None and record.warnings == ()
    assert "capture time" in capture(DateTimeOriginal="yesterday").warnings[0]


# --- focal plane --------------------------------------------------------------------------

@pytest.mark.parametrize(("unit", "x_resolution"), [(2, 6000 / (36 / 25.4)), (3, 6000 / 3.6), (None, 6000 / (36 / 25.4))])
def test_sensor_size_from_focal_plane_resolution(unit, x_resolution):
    # CIPA DC-008 FocalPlaneXResolution: pixels per FocalPlaneResolutionUnit (2 inch, 3 cm;
    # default 2). A 36 x 24 mm focal plane with 6000 x 4000 px (computed).
    tags = dict(ExifImageWidth=6000, ExifImageLength=4000,
                FocalPlaneXResolution=x_resolution, FocalPlaneYResolution=x_resolution)
    if unit is not None:
        tags["FocalPlaneResolutionUnit"] = unit
    record = normalise_capture(keyed(tags), PATH)
    assert record.focal_plane_width_mm == pytest.approx(36.0)
    assert record.focal_plane_height_mm == pytest.approx(24.0)


def test_focal_plane_in_an_unknown_unit_is_a_warning():
    record = capture(ImageWidth=100, FocalPlaneXResolution=10.0, FocalPlaneResolutionUnit=1)
    assert record.focal_plane_width_mm is None and "FocalPlaneXResolution" in record.warnings[0]


def test_iso_of_65535_defers_to_the_recommended_exposure_index():
    # EXIF 2.3 PhotographicSensitivity: 65535 means "65535 or more"; see the sensitivity tags.
    assert capture(ISOSpeedRatings=65535, RecommendedExposureIndex=102400).iso == 102400
    assert capture(ISOSpeedRatings=(200, 200)).iso == 200


_ANY_VALUE = st.one_of(
    st.none(), st.integers(-(2**40), 2**40), st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=30),
    st.binary(max_size=8), st.tuples(st.one_of(st.none(), st.floats())), st.lists(st.floats(), max_size=5).map(tuple),
)
_TAG_NAMES = st.sampled_from([
    "FNumber", "ApertureValue", "FocalLength", "ExposureTime", "ISOSpeedRatings", "SubjectDistance",
    "SubjectDistanceRange", "FocalLengthIn35mmFilm", "LensSpecification", "Make", "LensModel",
    "DateTimeOriginal", "SubSecTimeOriginal", "OffsetTimeOriginal", "ExifImageWidth", "ImageLength",
    "FocalPlaneXResolution", "FocalPlaneResolutionUnit", "RecommendedExposureIndex",
])


# Generation is cheap but a cold start (fresh venv, no bytecode yet) can trip the speed check.
@settings(deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.dictionaries(_TAG_NAMES, _ANY_VALUE))
def test_never_raises_and_keeps_only_sane_numbers(tags):
    record = normalise_capture(keyed(tags), PATH)
    assert record.f_number is None or record.f_number >= 0.5
    assert record.focal_mm is None or record.focal_mm > 0
    assert record.focus_mm is None or record.focus_mm >= 1.0
    assert all(isinstance(warning, str) for warning in record.warnings)


def test_lens_specification_from_the_lens_name():
    # Lens names print focal range and widest apertures the trade's way: "18-55mm F3.5-5.6".
    assert capture(LensModel="Altamira 18-55mm F3.5-5.6").lens_spec == (18.0, 55.0, 3.5, 5.6)
    # A recorded focal range without apertures is completed from the name when they agree.
    assert capture(LensModel="Altamira 18-55mm F3.5-5.6",
                   LensSpecification=(18.0, 55.0, None, None)).lens_spec == (18.0, 55.0, 3.5, 5.6)
    assert capture(LensModel="Altamira 18-55mm F3.5-5.6",
                   LensSpecification=(18.0, 70.0, None, None)).lens_spec == (18.0, 70.0, None, None)
