"""Focus distances and lens names from maker notes that libexiv2 itself wrote.

The reference for every expected value is libexiv2 0.28's own printed (calibrated) value
of the same tag in the same file ("2.50 m", "Infinite", "n/a"), read separately through
``makernotes.printed``; the record must agree with it. Formulas recalled from memory are
marked so.
"""

from __future__ import annotations

import math
import struct

import exiv2
import pytest

from sharpzone.ingest import fields
from sharpzone.ingest.capture import read_capture
from sharpzone.ingest.records import CaptureRecord

from . import images, makernotes


def _metres(printed: str) -> float:
    """mm from libexiv2's printed "2.50 m"."""
    number, unit = printed.split()
    assert unit == "m"
    return float(number) * 1000.0


def _frame(written, name: str, data: bytes) -> CaptureRecord:
    record = read_capture(written(name, data))
    assert isinstance(record, CaptureRecord), record
    return record


# --- Canon file info: a lower/upper bracket -------------------------------------------------

def test_canon_bracket(written):
    data = makernotes.makernote_jpeg(makernotes.CANON, {
        "Exif.CanonFi.FocusDistanceUpper": "250", "Exif.CanonFi.FocusDistanceLower": "240"})
    record = _frame(written, "canon.jpg", data)
    upper = _metres(makernotes.printed(data, ".jpg", "Exif.CanonFi.FocusDistanceUpper"))
    lower = _metres(makernotes.printed(data, ".jpg", "Exif.CanonFi.FocusDistanceLower"))
    assert (upper, lower) == (2500.0, 2400.0)  # libexiv2 prints "2.50 m", "2.40 m"
    assert (record.focus_near_mm, record.focus_far_mm) == (pytest.approx(lower), pytest.approx(upper))
    assert lower < record.focus_mm < upper
    assert (record.focus_source, record.focus_key) == ("makernote", "Exif.CanonFi.FocusDistanceLower")


def test_canon_bracket_reaching_infinity(written):
    data = makernotes.makernote_jpeg(makernotes.CANON, {
        "Exif.CanonFi.FocusDistanceUpper": "-1", "Exif.CanonFi.FocusDistanceLower": "1500"})
    assert makernotes.printed(data, ".jpg", "Exif.CanonFi.FocusDistanceUpper") == "Infinite"
    record = _frame(written, "canon-far.jpg", data)
    assert (record.focus_near_mm, record.focus_far_mm) == (pytest.approx(15000.0), math.inf)
    assert record.focus_mm == pytest.approx(15000.0)


def test_canon_unknown_distance(written):
    data = makernotes.makernote_jpeg(makernotes.CANON, {
        "Exif.CanonFi.FocusDistanceUpper": "0", "Exif.CanonFi.FocusDistanceLower": "0"})
    record = _frame(written, "canon-unknown.jpg", data)
    assert (record.focus_mm, record.focus_source, record.focus_key) == (None, "none", None)


# --- Nikon lens data: a logarithmic step code ---------------------------------------------

@pytest.mark.parametrize("version", sorted(makernotes.NIKON_LENS_DATA))
@pytest.mark.parametrize("code", [80, 120, 60])
def test_nikon_step_code_each_version(written, version, code):
    data = makernotes.makernote_jpeg(makernotes.NIKON, makernotes.nikon_lens_data(version, code))
    group = makernotes.NIKON_LENS_DATA[version]
    reference = _metres(makernotes.printed(data, ".jpg", f"Exif.{group}.FocusDistance"))
    record = _frame(written, f"nikon-{version}.jpg", data)
    # libexiv2 prints to 0.01 m; from memory: distance = 0.01 m x 10^(code / 40).
    assert record.focus_mm == pytest.approx(reference, abs=5.0)
    assert record.focus_mm == pytest.approx(10.0 * 10 ** (code / 40))
    # ± half a step: one step is a factor 10^(1/40).
    assert record.focus_far_mm / record.focus_near_mm == pytest.approx(10 ** (1 / 40))
    assert record.focus_near_mm < record.focus_mm < record.focus_far_mm
    assert (record.focus_source, record.focus_key) == ("makernote", f"Exif.{group}.FocusDistance")


@pytest.mark.parametrize("version", ["0101", "0800"])
def test_nikon_step_code_zero_is_unknown(written, version):
    data = makernotes.makernote_jpeg(makernotes.NIKON, makernotes.nikon_lens_data(version, 0))
    group = makernotes.NIKON_LENS_DATA[version]
    assert makernotes.printed(data, ".jpg", f"Exif.{group}.FocusDistance") == "n/a"
    assert _frame(written, "nikon-unknown.jpg", data).focus_source == "none"


def test_nikon_encrypted_lens_data_is_stored_encrypted(written):
    """Versions 0201 and later are stored encrypted: the bytes after the version are not the
    plain ones of version 0101 (zeros, then the code 80 = 0x50), yet read back as 1 m."""
    plain = makernotes.makernote_jpeg(makernotes.NIKON, makernotes.nikon_lens_data("0101", 80))
    data = makernotes.makernote_jpeg(makernotes.NIKON, makernotes.nikon_lens_data("0201", 80))
    plain_block = plain[plain.index(b"0101") + 4 :][:6]
    assert plain_block == b"\x00\x00\x00\x00\x00\x50"
    assert data[data.index(b"0201") + 4 :][:6] != plain_block
    assert _frame(written, "nikon-0201.jpg", data).focus_mm == pytest.approx(1000.0)


# --- single distances ---------------------------------------------------------------------

@pytest.mark.parametrize(("make_model", "key", "value"), [
    (makernotes.OLYMPUS, "Exif.OlympusFi.FocusDistance", "2500/1"),
    (makernotes.NIKON_COMPACT, "Exif.Nikon3.FocusDistance", "123/10"),
    (makernotes.CANON_COMPACT, "Exif.CanonSi.SubjectDistance", "250"),
    (makernotes.CASIO, "Exif.Casio.ObjectDistance", "2500"),
])
def test_single_maker_note_distance_agrees_with_libexiv2(written, make_model, key, value):
    data = makernotes.makernote_jpeg(make_model, {key: value})
    reference = _metres(makernotes.printed(data, ".jpg", key))
    record = _frame(written, "single.jpg", data)
    assert record.focus_mm == pytest.approx(reference, abs=5.0)
    assert record.focus_near_mm <= record.focus_mm <= record.focus_far_mm
    assert (record.focus_source, record.focus_key) == ("makernote", key)


def test_olympus_focus_info_infinity(written):
    # Numerator 0xFFFFFFFF: libexiv2's string parser refuses it, so it is given as a value.
    far = exiv2.URationalValue([(0xFFFFFFFF, 1)])
    data = makernotes.makernote_jpeg(makernotes.OLYMPUS, {"Exif.OlympusFi.FocusDistance": far})
    assert makernotes.printed(data, ".jpg", "Exif.OlympusFi.FocusDistance") == "Infinity"
    assert _frame(written, "olympus-far.jpg", data).focus_mm == math.inf


def test_uncalibrated_distances_are_not_used(written):
    """libexiv2 prints these as bare numbers: their unit is not known, so they are left out."""
    data = makernotes.makernote_jpeg(makernotes.MINOLTA, {"Exif.MinoltaCsNew.FocusDistance": "2500"})
    assert makernotes.printed(data, ".jpg", "Exif.MinoltaCsNew.FocusDistance") == "2500"
    assert _frame(written, "minolta.jpg", data).focus_source == "none"


def test_standard_subject_distance_wins_over_the_maker_note(written):
    data = makernotes.makernote_jpeg(
        makernotes.CANON,
        {"Exif.CanonFi.FocusDistanceUpper": "250", "Exif.CanonFi.FocusDistanceLower": "240"},
        exif=images.exif_block(subject_distance=(32, 10)))
    record = _frame(written, "both.jpg", data)
    assert (record.focus_mm, record.focus_key, record.focus_source) == (
        pytest.approx(3200.0), "Exif.Photo.SubjectDistance", "exif")
    assert record.focus_near_mm == record.focus_far_mm == record.focus_mm


def test_user_distance_wins_over_the_maker_note(written):
    data = makernotes.makernote_jpeg(makernotes.NIKON, makernotes.nikon_lens_data("0204", 80))
    record = read_capture(written("user.jpg", data), user_focus_mm=4200.0)
    assert (record.focus_mm, record.focus_source, record.focus_key) == (4200.0, "user", None)
    assert record.focus_near_mm == record.focus_far_mm == 4200.0


# --- lens names from lens ids ---------------------------------------------------------------

def test_lens_name_from_a_maker_note_lens_id(written):
    data = makernotes.makernote_jpeg(makernotes.PENTAX, {"Exif.Pentax.LensType": "3 44"})
    reference = makernotes.printed(data, ".jpg", "Exif.Pentax.LensType")
    record = _frame(written, "pentax.jpg", data)
    assert record.lens_model == reference and record.lens_candidates == (reference,)
    # The focal range and apertures parsed from the name libexiv2 gives ("... 35-90mm F4 ...").
    assert record.lens_spec == fields.lens_spec_from_name(reference)


def _sony_id_with_candidates() -> tuple[int, str]:
    """A Sony lens id that libexiv2's table maps to several lenses ("A or B")."""
    for lens_id in range(1, 400):
        data = makernotes.makernote_jpeg(makernotes.SONY, {"Exif.Sony2.LensID": str(lens_id)})
        text = makernotes.printed(data, ".jpg", "Exif.Sony2.LensID")
        if text and " or " in text:
            return lens_id, text
    pytest.skip("libexiv2's Sony table has no id with several lenses")


def test_lens_id_with_several_candidates_keeps_them_all(written):
    lens_id, text = _sony_id_with_candidates()
    data = makernotes.makernote_jpeg(makernotes.SONY, {"Exif.Sony2.LensID": str(lens_id)})
    record = _frame(written, "sony.jpg", data)
    expected = tuple(name.strip() for name in text.split(" or "))
    assert record.lens_candidates == expected and record.lens_model == expected[0]


def test_lens_specification_from_a_nikon_lens_record(written):
    data = makernotes.makernote_jpeg(makernotes.NIKON, {"Exif.Nikon3.Lens": "180/10 550/10 35/10 56/10"})
    assert makernotes.printed(data, ".jpg", "Exif.Nikon3.Lens") == "18-55mm F3.5-5.6"
    assert _frame(written, "nikon-lens.jpg", data).lens_spec == (18.0, 55.0, 3.5, 5.6)


def test_focal_range_from_canon_camera_settings(written):
    data = makernotes.makernote_jpeg(makernotes.CANON, {"Exif.CanonCs.Lens": "85 18 1"})
    assert makernotes.printed(data, ".jpg", "Exif.CanonCs.Lens") == "18.0 - 85.0 mm"
    assert _frame(written, "canon-zoom.jpg", data).lens_spec == (18.0, 85.0, None, None)


def test_lens_model_wins_over_the_lens_id(written):
    data = makernotes.makernote_jpeg(makernotes.PENTAX, {"Exif.Pentax.LensType": "3 44"},
                                     exif=images.exif_block(subject_distance=None))
    record = _frame(written, "pentax-named.jpg", data)
    assert record.lens_model == "Altamira Optical 24-70mm F2.8" and record.lens_candidates == ()


def test_unknown_lens_id_gives_no_name(written):
    data = makernotes.makernote_jpeg(makernotes.CANON, {"Exif.CanonCs.LensType": "137"})
    assert makernotes.printed(data, ".jpg", "Exif.CanonCs.LensType").startswith("Unknown")
    record = _frame(written, "canon-lens.jpg", data)
    assert record.lens_model is None and record.lens_candidates == ()


# --- sensor size ----------------------------------------------------------------------------

def test_sensor_size_from_a_maker_note_pixel_pitch(written):
    exif = images.exif_block(extra_exif={0xA002: 1200, 0xA003: 800})
    base = images.pillow_image("JPEG", exif, size=(1200, 800))
    data = makernotes.with_exiv2(base, ".jpg", makernotes.NIKON, {"Exif.Nikon3.SensorPixelSize": "84/10 84/10"})
    assert makernotes.printed(data, ".jpg", "Exif.Nikon3.SensorPixelSize") == "8.4 x 8.4 um"
    record = _frame(written, "pitch.jpg", data)
    # 1200 px x 8.4 µm = 10.08 mm; 800 px x 8.4 µm = 6.72 mm (computed by hand).
    assert (record.sensor_width_mm, record.sensor_height_mm) == (pytest.approx(10.08), pytest.approx(6.72))


# --- AF area --------------------------------------------------------------------------------

def test_af_area_from_a_nikon_maker_note(written):
    # AF info 2, version 0100, as libexiv2 lays it out: version, 4 flags, 7 point bytes and
    # one spare, then 16-bit image width/height and area centre x/y, width, height, in the
    # byte order of the file (piexif writes big-endian, "MM").
    block = b"0100" + bytes([1, 0, 1, 0]) + bytes(8) + struct.pack(">6H", 6048, 4024, 3024, 1006, 302, 201) + bytes(2)
    data = makernotes.makernote_jpeg(makernotes.NIKON, {
        "Exif.Nikon3.Version": "48 50 49 48", "Exif.Nikon3.AFInfo2": " ".join(str(byte) for byte in block)})
    assert makernotes.printed(data, ".jpg", "Exif.NikonAf2.AFAreaXPosition") == "3024"
    record = _frame(written, "af.jpg", data)
    assert record.focus_point == pytest.approx((0.5, 0.25, 302 / 6048, 201 / 4024))
    assert record.focus_point_key == "Exif.NikonAf2.AFAreaXPosition"


# --- a raw container: CR3 ---------------------------------------------------------------------

def test_cr3_raw_gives_its_tags_and_the_bracket(written):
    from sharpzone.ingest import formats
    from sharpzone.ingest.scan import sniff_file

    data = makernotes.cr3(focus_upper_cm=250, focus_lower_cm=240)
    path = written("frame.cr3", data)
    assert sniff_file(path) == formats.BMFF_RAW
    assert makernotes.printed(data, ".cr3", "Exif.CanonFi.FocusDistanceUpper") == "2.50 m"
    record = read_capture(path)
    assert (record.exif_make, record.f_number, record.focal_mm) == ("Canon", pytest.approx(5.6), 35.0)
    assert (record.focus_near_mm, record.focus_far_mm) == (pytest.approx(2400.0), pytest.approx(2500.0))
    assert record.focus_source == "makernote"


# --- the reader's inline fast path reads every tag as its general path does ----------------

@pytest.mark.parametrize("make_model", [makernotes.CANON, makernotes.NIKON, makernotes.SONY, makernotes.PANASONIC,
                                        makernotes.OLYMPUS, makernotes.FUJIFILM, makernotes.PENTAX])
def test_each_tag_is_read_as_the_general_path_reads_it(written, make_model):
    # Text, whole numbers and single rationals are read inline; everything goes through
    # _plain_value too here, on the first entry of each key, as the reader keeps it.
    from sharpzone.ingest.readers import exiv2_reader

    extra = makernotes.nikon_lens_data("0204", 80) if make_model == makernotes.NIKON else {}
    path = written("frame.jpg", makernotes.makernote_jpeg(make_model, extra, exif=images.exif_block(
        # Infinity (CIPA DC-008 SubjectDistance 0xFFFFFFFF/1) and an unknown 0/0 ApertureValue.
        subject_distance=(0xFFFFFFFF, 1), extra_exif={0x9214: (1000, 800, 200, 100), 0x9202: (0, 0)})))
    image = exiv2.ImageFactory.open(path)
    image.readMetadata()
    data = image.exifData()
    tags = exiv2_reader._tags(data, False)
    types = exiv2_reader._type_table()
    first = {}
    for datum in data:
        first.setdefault(datum.key(), exiv2_reader._plain_value(datum, types))
    read = {key: value for key, value in tags.items() if not key.endswith(fields.PRINTED)}
    assert len(read) >= 15
    assert read == {key: first[key] for key in read}
    kinds = {type(value) for value in read.values()}
    assert {str, int, float, tuple} <= kinds
    assert read["Exif.Photo.SubjectDistance"] == math.inf
    assert first["Exif.Photo.ApertureValue"] is None and "Exif.Photo.ApertureValue" not in tags


class _Entry:
    """A decoded entry as libexiv2's bindings hand it over: text (type name "Ascii")."""

    def __init__(self, key: str, text: str) -> None:
        self._key, self._text = key, text

    def key(self):
        return self._key

    def typeName(self):  # noqa: N802 - the bindings' name
        return "Ascii"

    def toString(self):  # noqa: N802 - the bindings' name
        return self._text

    def print(self, data):
        return self._text


@pytest.mark.parametrize(("make", "kept"), [("Canon", False), ("NIKON CORPORATION", True), ("Unknown Works", True),
                                            (None, True)])
def test_only_the_maker_note_groups_a_make_can_hold_are_kept(make, kept):
    # The Make is learned in the same pass as the other entries, after some of them (here a
    # Nikon maker-note entry comes first): entries of another Make's maker notes are dropped.
    from sharpzone.ingest.readers import exiv2_reader

    entries = [_Entry("Exif.Nikon3.SerialNumber", "2007511"), _Entry("Exif.Photo.LensModel", "Test 50mm"),
               *([_Entry("Exif.Image.Make", make)] if make else []), _Entry("Exif.Image.Make", "Second Make")]
    tags = exiv2_reader._tags(entries, False)
    assert ("Exif.Nikon3.SerialNumber" in tags) is kept
    assert tags["Exif.Photo.LensModel"] == "Test 50mm"
    assert tags["Exif.Image.Make"] == (make or "Second Make")
