"""The readers behind one protocol: libexiv2 and exifread cross-checked on the same files,
the work budget against a crafted directory, raw and HEIF/AVIF containers, the fallback.

Standard-tag semantics are CIPA DC-008 (EXIF 2.3); the writers of the test files are
Pillow and piexif (standard tags), libexiv2 (maker notes) and tests/ingest/tiffbuild.py
(structures no library writes).
"""

from __future__ import annotations

import dataclasses
import io
import subprocess
import sys

import exiv2
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from PIL import Image

from sharpzone.ingest import fields
from sharpzone.ingest.capture import read_capture
from sharpzone.ingest.normalise import normalise_capture
from sharpzone.ingest.readers import read_tags
from sharpzone.ingest.readers.exifread_reader import ExifreadReader
from sharpzone.ingest.readers.exiv2_reader import Exiv2Reader
from sharpzone.ingest.records import CaptureRecord, FileReadError, ReadProblem

from . import images, tiffbuild

READERS = [Exiv2Reader(), ExifreadReader()]
CRAFTED_REASON = "damaged EXIF (its directories claim more data than the file holds)"


def _jpeg_with_tiff(tiff: bytes) -> bytes:
    """A JPEG whose APP1 holds ``tiff`` as its EXIF block (ISO/IEC 10918-1 segment)."""
    payload = b"Exif\x00\x00" + tiff
    segment = b"\xff\xe1" + len(payload + b"..").to_bytes(2, "big") + payload
    plain = images.jpeg()
    return plain[:2] + segment + plain[2:]


def test_every_key_of_the_field_table_is_a_libexiv2_key():
    for key in fields.wanted_keys():
        exiv2.ExifKey(key)  # raises for a key libexiv2 does not know


# --- both readers, same files, same record ----------------------------------------------------

def _avif(exif: bytes) -> bytes:
    buffer = io.BytesIO()
    Image.new("RGB", (16, 12), (120, 90, 60)).save(buffer, "AVIF", exif=exif)
    return buffer.getvalue()


CONTAINERS = {
    "frame.jpg": lambda exif: images.jpeg(exif),
    "frame.png": lambda exif: images.pillow_image("PNG", exif),
    "frame.tif": lambda exif: images.pillow_image("TIFF", exif),
    "frame.webp": lambda exif: images.pillow_image("WEBP", exif),
    "frame.heic": lambda exif: images.heif(exif),
    "frame.avif": _avif,
}


@pytest.mark.parametrize("name", sorted(CONTAINERS))
def test_both_readers_give_the_same_record(written, name):
    path = written(name, CONTAINERS[name](images.exif_block()))
    records = [normalise_capture(reader.read(path), path) for reader in READERS]
    # Only libexiv2 tells the container's own pixel size; with PixelXDimension 6000 on a
    # 16 px image it is not the sensor's, so no field may differ.
    assert records[0] == records[1]
    record = records[0]
    # Written by piexif: FNumber 28/10, FocalLength 50/1, SubjectDistance 32/10 m.
    assert (record.f_number, record.focal_mm, record.focus_mm) == (
        pytest.approx(2.8), 50.0, pytest.approx(3200.0))
    assert record.lens_spec == (24.0, 70.0, pytest.approx(2.8), None)
    assert (record.focus_key, record.focus_source) == ("Exif.Photo.SubjectDistance", "exif")


@pytest.mark.parametrize("image_format", ["JPEG", "PNG", "TIFF", "WEBP"])
def test_both_readers_agree_on_a_full_size_image(written, image_format):
    """A full-size 1200 x 800 image whose EXIF pixel dimensions are its own: both readers
    give it as the sensor's pixel size (the containers' own headers agree)."""
    exif = images.exif_block(extra_exif={0xA002: 1200, 0xA003: 800})
    buffer = io.BytesIO()
    Image.new("RGB", (1200, 800), (120, 90, 60)).save(buffer, image_format, exif=exif)
    path = written(f"full.{image_format.lower()}", buffer.getvalue())
    records = [normalise_capture(reader.read(path), path) for reader in READERS]
    assert records[0] == records[1]
    assert (records[0].sensor_width_px, records[0].sensor_height_px) == (1200, 800)


@pytest.mark.parametrize("distance", [(0xFFFFFFFF, 1), (0xFFFFFFFF, 100), (0, 1), (0, 0)])
def test_both_readers_agree_on_infinity_and_unknown(written, distance):
    # CIPA DC-008 SubjectDistance: numerator 0xFFFFFFFF = infinity, 0 = unknown.
    path = written("far.jpg", images.jpeg(images.exif_block(subject_distance=distance)))
    focus = [normalise_capture(reader.read(path), path).focus_mm for reader in READERS]
    assert focus[0] == focus[1] == (float("inf") if distance[0] else None)


# --- the work budget -----------------------------------------------------------------------

@pytest.mark.parametrize("reader", READERS, ids=lambda reader: reader.name)
def test_crafted_directory_is_damage_for_every_reader(written, reader):
    data = _jpeg_with_tiff(tiffbuild.crafted_directory_tiff())
    assert 25_000 < len(data) < 40_000
    path = written("crafted.jpg", data)
    with pytest.raises(FileReadError) as caught:
        reader.read(path)
    assert caught.value.reason == CRAFTED_REASON


def test_crafted_directory_is_a_read_problem_not_a_frame(written):
    path = written("crafted.jpg", _jpeg_with_tiff(tiffbuild.crafted_directory_tiff(entries=4790)))
    assert read_capture(path) == ReadProblem(path, CRAFTED_REASON)


def test_trap_libexiv2_drops_a_crafted_directory_silently(written):
    """Left to itself, libexiv2 reads such a file as one without any EXIF (no error)."""
    path = written("crafted.jpg", _jpeg_with_tiff(tiffbuild.crafted_directory_tiff()))
    image = exiv2.ImageFactory.open(path)
    image.readMetadata()
    assert image.exifData().count() == 0


def test_crafted_directory_costs_little_memory(tmp_path):
    """Peak memory of one read in a fresh process stays far under 100 MB (ru_maxrss, kB)."""
    path = tmp_path / "crafted.jpg"
    path.write_bytes(_jpeg_with_tiff(tiffbuild.crafted_directory_tiff(entries=4790)))
    code = (
        "import resource, sys; from sharpzone.ingest.capture import read_capture; "
        "import exiv2, exifread; before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss; "
        "print(read_capture(sys.argv[1]).reason); "
        "print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - before)"
    )
    run = subprocess.run([sys.executable, "-c", code, str(path)], capture_output=True, text=True, check=True)
    reason, growth_kb = run.stdout.split("\n")[:2]
    assert reason == CRAFTED_REASON
    assert int(growth_kb) < 100 * 1024


@pytest.mark.parametrize("reader", READERS, ids=lambda reader: reader.name)
def test_a_directory_reached_twice_is_read_once(written, reader):
    path = written("loop.tif", tiffbuild.self_pointing_tiff())
    tags = reader.read(path)
    assert tags["Exif.Image.Make"] == "Korvath"
    assert not any(key.startswith("Exif.Photo.") for key in tags)  # IFD0 not re-read as Exif


# --- containers ------------------------------------------------------------------------------

def _dng(exif_entries: dict) -> bytes:
    """A minimal DNG-like raw: IFD0 a 256 x 171 preview, its SubIFD the 5472 x 3648 sensor
    image (NewSubfileType 0), an Exif IFD (TIFF/EP, DNG 1.4 layout; no pixel data needed)."""
    raw = tiffbuild.Directory({
        0x00FE: tiffbuild.long(0), 0x0100: tiffbuild.long(5472), 0x0101: tiffbuild.long(3648),
        0x0102: tiffbuild.short(16), 0x0103: tiffbuild.short(1), 0x0106: tiffbuild.short(32803),
    })
    exif = tiffbuild.Directory(exif_entries)
    root = tiffbuild.Directory({
        0x00FE: tiffbuild.long(1), 0x0100: tiffbuild.long(256), 0x0101: tiffbuild.long(171),
        0x0102: tiffbuild.short(8, 8, 8), 0x0103: tiffbuild.short(1), 0x0106: tiffbuild.short(2),
        0x010F: tiffbuild.ascii("Korvath"), 0x0110: tiffbuild.ascii("Korvath KV-9"),
        0xC612: (tiffbuild.BYTE, 4, bytes([1, 4, 0, 0])),  # DNGVersion 1.4.0.0
    })
    root.point(tiffbuild.SUB_IFDS, raw).point(tiffbuild.EXIF_IFD, exif)
    return tiffbuild.tiff(root)


def test_raw_container_gives_the_sensor_size_not_the_preview(written):
    path = written("frame.dng", _dng({0x829D: tiffbuild.rational((56, 10)), 0x920A: tiffbuild.rational((35, 1)),
                                      0xA002: tiffbuild.long(3408), 0xA003: tiffbuild.long(2272)}))
    record = normalise_capture(Exiv2Reader().read(path), path)
    assert (record.f_number, record.focal_mm) == (pytest.approx(5.6), 35.0)
    # The SubIFD marked NewSubfileType 0 is the full image (TIFF 6.0, DNG 1.4 section on SubIFDs).
    assert (record.sensor_width_px, record.sensor_height_px) == (5472, 3648)
    # The fallback sees IFD0 only (a preview): it must not take it for the sensor.
    fallback = normalise_capture(ExifreadReader().read(path), path)
    assert (fallback.sensor_width_px, fallback.f_number) == (None, pytest.approx(5.6))


def test_avif_is_read_by_libexiv2(written):
    path = written("frame.avif", _avif(images.exif_block()))
    assert Exiv2Reader().read(path)["Exif.Photo.FNumber"] == pytest.approx(2.8)


def test_sensor_pixels_of_a_full_size_jpeg(written):
    exif = images.exif_block(extra_exif={0xA002: 1200, 0xA003: 800})
    path = written("full.jpg", images.pillow_image("JPEG", exif, size=(1200, 800)))
    record = read_capture(path)
    assert (record.sensor_width_px, record.sensor_height_px) == (1200, 800)


def test_sensor_pixels_are_not_taken_from_a_copy_or_a_small_image(written):
    # PixelXDimension of another image (6000 px on a 16 px file), and a small file's own size.
    copy = written("copy.jpg", images.jpeg(images.exif_block()))
    small = written("small.jpg", images.pillow_image(
        "JPEG", images.exif_block(extra_exif={0xA002: 160, 0xA003: 120}), size=(160, 120)))
    assert read_capture(copy).sensor_width_px is None
    assert read_capture(small).sensor_width_px is None


def test_focus_point_from_subject_area(written):
    # CIPA DC-008 SubjectArea with 4 values: centre (600, 200), 120 x 80 px, on 1200 x 800.
    exif = images.exif_block(extra_exif={0xA002: 1200, 0xA003: 800, 0x9214: (600, 200, 120, 80)})
    record = read_capture(written("area.jpg", images.pillow_image("JPEG", exif, size=(1200, 800))))
    assert record.focus_point == pytest.approx((0.5, 0.25, 0.1, 0.1))
    assert record.focus_point_key == "Exif.Photo.SubjectArea"


# --- the protocol and the fallback ---------------------------------------------------------

def test_a_file_libexiv2_does_not_open_is_read_by_the_fallback(written):
    path = written("frame.raw", images.raw_with_embedded_jpeg(images.jpeg(images.exif_block())))
    assert read_tags(path)["Exif.Photo.FNumber"] == pytest.approx(2.8)


@dataclasses.dataclass
class _ScriptedReader:
    name: str
    kinds: frozenset
    result: object
    calls: list = dataclasses.field(default_factory=list)

    def read(self, path, *, checked=False, metadata=None):
        self.calls.append((path, checked))
        if isinstance(self.result, Exception):
            raise self.result
        return self.result


def test_readers_are_tried_in_order_until_one_reads(written):
    path = written("frame.jpg", images.jpeg())
    failing = _ScriptedReader("first", frozenset({"jpeg"}), FileReadError(path, "refused"))
    skipped = _ScriptedReader("png only", frozenset({"png"}), {"Exif.Image.Make": "no"})
    second = _ScriptedReader("second", frozenset({"jpeg"}), {"Exif.Image.Make": "Korvath"})
    assert read_tags(path, (failing, skipped, second)) == {"Exif.Image.Make": "Korvath"}
    assert (len(failing.calls), len(skipped.calls)) == (1, 0)


def test_damage_found_by_the_budget_is_final(written):
    path = written("frame.jpg", images.jpeg())
    damaged = _ScriptedReader("first", frozenset({"jpeg"}), FileReadError(path, CRAFTED_REASON))
    second = _ScriptedReader("second", frozenset({"jpeg"}), {})
    with pytest.raises(FileReadError):
        read_tags(path, (damaged, second))
    assert second.calls == []


def test_read_tags_checks_the_budget_once_itself_before_any_reader(written):
    # The shared check runs on the open that sniffs the kind; the readers are told so, and
    # a crafted directory never reaches one.
    crafted = written("crafted.jpg", _jpeg_with_tiff(tiffbuild.crafted_directory_tiff()))
    sound = written("sound.jpg", images.jpeg(images.exif_block()))
    reader = _ScriptedReader("any", frozenset({"jpeg"}), {"Exif.Image.Make": "Korvath"})
    with pytest.raises(FileReadError) as caught:
        read_tags(crafted, (reader,))
    assert caught.value.reason == CRAFTED_REASON and reader.calls == []
    assert read_tags(sound, (reader,)) == {"Exif.Image.Make": "Korvath"}
    assert reader.calls == [(sound, True)]


def test_no_reader_for_the_kind(written):
    path = written("frame.jpg", images.jpeg())
    with pytest.raises(FileReadError) as caught:
        read_tags(path, (_ScriptedReader("png", frozenset({"png"}), {}),))
    assert caught.value.reason == "no reader opens jpeg files"


def test_records_from_libexiv2_are_plain_and_picklable(written):
    import pickle

    record = read_capture(written("frame.jpg", images.jpeg(images.exif_block())))
    assert isinstance(record, CaptureRecord)
    assert pickle.loads(pickle.dumps(record)) == record


_SEED_FILES = {
    "jpg": images.jpeg(images.exif_block()),
    "tif": images.pillow_image("TIFF", images.exif_block(), size=(4, 4)),
    "webp": images.pillow_image("WEBP", images.exif_block()),
    "heic": images.heif(images.exif_block()),
}


@settings(max_examples=150, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(
    kind=st.sampled_from(sorted(_SEED_FILES)),
    **images.mutation_strategies(),
)
def test_mutated_files_give_a_record_or_a_read_problem_through_both_readers(tmp_path, kind, changes, keep):
    path = tmp_path / f"fuzz.{kind}"
    path.write_bytes(images.mutated(_SEED_FILES[kind], changes, keep))
    result = read_capture(str(path))
    assert isinstance(result, (CaptureRecord, ReadProblem))
    if isinstance(result, ReadProblem):
        assert result.reason and "\n" not in result.reason
