"""read_tags: every container, every exifread trap (shown to exist, then worked around), bad files.

Tag semantics are those of EXIF 2.3 (CIPA DC-008 / JEITA CP-3451); Pillow's own EXIF reader
is the independent cross-check on the same files.
"""

from __future__ import annotations

import io
import math
import os
import subprocess
import sys

import exifread
import piexif
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from PIL import Image

from sharpzone.errors import ReadError
from sharpzone.ingest.readers.exifread_reader import ExifreadReader


def read_tags(path) -> dict:
    """The fallback reader's tags with the group dropped from each key (CIPA DC-008's names)."""
    return {key.rsplit(".", 1)[1]: value for key, value in ExifreadReader().read(path).items()}

from sharpzone.ingest.records import FileReadError

from . import images

PLAIN_TYPES = (int, float, str, bytes, tuple, type(None))


def _assert_standard_tags(tags: dict) -> None:
    # FNumber 0x829D: the f-number; written 28/10.
    assert tags["FNumber"] == pytest.approx(2.8)
    # FocalLength 0x920A: actual focal length in mm; written 50/1.
    assert tags["FocalLength"] == pytest.approx(50.0)
    # SubjectDistance 0x9206: metres; written 32/10.
    assert tags["SubjectDistance"] == pytest.approx(3.2)
    # LensModel 0xA434: ASCII.
    assert tags["LensModel"] == "Altamira Optical 24-70mm F2.8"
    # LensSpecification 0xA432: min/max focal, min F at each end; unknown F is 0/0.
    assert tags["LensSpecification"] == (24.0, 70.0, pytest.approx(2.8), None)
    # OffsetTimeOriginal 0x9011 "±HH:MM"; SubSecTimeOriginal 0x9291 digits.
    assert tags["OffsetTimeOriginal"] == "+05:30"
    assert tags["SubSecTimeOriginal"] == "05"
    # FocalPlaneXResolution 0xA20E, unit 0xA210 (2 = inch).
    assert tags["FocalPlaneXResolution"] == pytest.approx(4233.333)
    assert tags["FocalPlaneResolutionUnit"] == 2
    assert tags["Make"] == "Korvath"
    assert "ExifOffset" not in tags  # a pointer between IFDs, not information
    assert all(isinstance(value, PLAIN_TYPES) for value in tags.values())


@pytest.mark.parametrize("image_format", ["JPEG", "PNG", "TIFF"])
def test_reads_the_tags_pillow_wrote(written, image_format):
    path = written(f"frame.{image_format.lower()}", images.pillow_image(image_format, images.exif_block()))
    _assert_standard_tags(read_tags(path))


@pytest.mark.parametrize("image_format", ["JPEG", "PNG", "TIFF"])
def test_agrees_with_pillows_own_exif_reader(written, image_format):
    path = written(f"frame.{image_format.lower()}", images.pillow_image(image_format, images.exif_block()))
    ours = read_tags(path)
    with Image.open(path) as image:
        exif = image.getexif()
        exif_ifd = exif.get_ifd(0x8769)
    # Cross-check: Pillow's reader (an independent implementation) on the same bytes.
    assert ours["Make"] == exif[0x010F]
    assert ours["FNumber"] == pytest.approx(float(exif_ifd[0x829D]))
    assert ours["FocalLength"] == pytest.approx(float(exif_ifd[0x920A]))
    assert ours["SubjectDistance"] == pytest.approx(float(exif_ifd[0x9206]))
    assert ours["LensModel"] == exif_ifd[0xA434]
    assert ours["OffsetTimeOriginal"] == exif_ifd[0x9011]
    pillow_spec = [float(value) for value in exif_ifd[0xA432]]
    assert ours["LensSpecification"][:3] == pytest.approx(pillow_spec[:3])
    assert math.isnan(pillow_spec[3]) and ours["LensSpecification"][3] is None  # 0/0: Pillow NaN, ours None


def test_heif_exif_item_is_read(written):
    path = written("frame.heic", images.heif(images.exif_block()))
    _assert_standard_tags(read_tags(path))


def test_heif_brands_exifread_does_not_know_are_read(written):
    # ISO/IEC 23008-12 'heix' (10-bit HEVC still image): exifread 3.5.1 returns nothing.
    data = images.heif(images.exif_block(), brand=b"heix")
    assert exifread.process_file(io.BytesIO(data), details=False) == {}
    path = written("frame-10bit.heic", data)
    assert read_tags(path)["FNumber"] == pytest.approx(2.8)


def test_file_without_exif_gives_no_tags(written):
    assert read_tags(written("plain.jpg", images.jpeg())) == {}
    assert read_tags(written("plain.png", images.pillow_image("PNG"))) == {}


# --- the exifread traps listed in DESIGN.md, each shown to exist and then avoided --------

def test_trap_exif_segment_after_4kb_of_other_segments(written):
    data = images.insert_segments_before_app1(images.jpeg(images.exif_block()), 5000)
    # The trap: exifread reads base + 4000 bytes when looking for APP1 and gives up silently.
    assert exifread.process_file(io.BytesIO(data), details=False) == {}
    short = images.insert_segments_before_app1(images.jpeg(images.exif_block()), 2000)
    assert "EXIF FNumber" in exifread.process_file(io.BytesIO(short), details=False)
    # Ours walks the segments (ISO/IEC 10918-1 B.1.1.4 lengths) and finds it at any depth.
    for padding in (5000, 70000):
        path = written(f"padded-{padding}.jpg", images.insert_segments_before_app1(images.jpeg(images.exif_block()), padding))
        _assert_standard_tags(read_tags(path))


def test_trap_raw_container_with_embedded_exif_jpeg(written):
    data = images.raw_with_embedded_jpeg(images.jpeg(images.exif_block()))
    assert exifread.process_file(io.BytesIO(data), details=False) == {}  # the trap
    _assert_standard_tags(read_tags(written("frame.raw", data)))


def test_trap_heif_reader_keeps_state_between_files(written):
    with_exif = images.heif(images.exif_block())
    without_items = images.heif(images.exif_block(), with_item_info=False)
    # The trap: exifread's HEIF boxes share one class-level dict, so a file that declares no
    # items fails when read first but "has" the previous file's EXIF when read after one.
    with pytest.raises(KeyError):
        exifread.process_file(io.BytesIO(without_items), details=False)
    exifread.process_file(io.BytesIO(with_exif), details=False)
    assert "EXIF FNumber" in exifread.process_file(io.BytesIO(without_items), details=False)
    # Ours parses the boxes afresh each time: no item info, no tags, whatever came before.
    first = written("a.heic", with_exif)
    second = written("b.heic", without_items)
    assert read_tags(first)["FNumber"] == pytest.approx(2.8)
    assert read_tags(second) == {}
    assert read_tags(first)["FNumber"] == pytest.approx(2.8)


def test_trap_zero_over_zero_rational(written):
    exif = images.exif_block(f_number=(0, 0), subject_distance=(0, 0))
    raw = exifread.process_file(io.BytesIO(images.jpeg(exif)), details=False)
    with pytest.raises(ZeroDivisionError):  # the trap
        float(raw["EXIF FNumber"].values[0])
    tags = read_tags(written("zero.jpg", images.jpeg(exif)))
    assert tags.get("FNumber") is None and tags.get("SubjectDistance") is None


@pytest.mark.parametrize("denominator", [1, 100])
def test_subject_distance_infinity_mark_survives_any_denominator(written, denominator):
    # CIPA DC-008 SubjectDistance: numerator 0xFFFFFFFF = infinity, whatever the denominator.
    exif = images.exif_block(subject_distance=(images.INFINITY_NUMERATOR, denominator))
    raw = exifread.process_file(io.BytesIO(images.jpeg(exif)), details=False)
    stored = raw["EXIF SubjectDistance"].values[0]
    if denominator == 100:  # exifread reduces the fraction: the mark is gone from its value
        assert stored.numerator != images.INFINITY_NUMERATOR
    assert read_tags(written("far.jpg", images.jpeg(exif)))["SubjectDistance"] == math.inf


def test_subject_distance_zero_numerator_is_kept_as_zero(written):
    # CIPA DC-008: numerator 0 = distance unknown; read_tags keeps 0.0, normalise decides.
    tags = read_tags(written("unknown.jpg", images.jpeg(images.exif_block(subject_distance=(0, 1)))))
    assert tags["SubjectDistance"] == 0.0


def test_trap_foreign_exceptions_escape_exifread():
    # The trap: a JPEG cut after its SOI makes exifread raise IndexError, not its own error.
    with pytest.raises(IndexError):
        exifread.process_file(io.BytesIO(b"\xff\xd8"), details=False)


def test_trap_png_chunk_names_decoded_eagerly(written):
    import struct
    import zlib

    png = images.pillow_image("PNG", images.exif_block())
    # A private chunk whose name is not ASCII (damage), placed right after IHDR (8 + 25 bytes).
    odd = b"\xe9tXt" + b"x"
    chunk = struct.pack(">I", 1) + odd + struct.pack(">I", zlib.crc32(odd))
    data = png[:33] + chunk + png[33:]
    with pytest.raises(UnicodeDecodeError):  # the trap: a foreign exception from exifread
        exifread.process_file(io.BytesIO(data), details=False)
    _assert_standard_tags(read_tags(written("odd-chunk.png", data)))


def test_trap_logger_writes_to_stderr_and_ours_is_quiet(tmp_path):
    path = tmp_path / "loop.tif"
    path.write_bytes(images.tiff_with_ifd_loop())
    bare = "import exifread,sys; exifread.process_file(open(sys.argv[1],'rb'), details=False)"
    ours = ("import sys; from sharpzone.ingest.readers.exifread_reader import ExifreadReader; "
            "print(ExifreadReader().read(sys.argv[1])['Exif.Image.Make'])")
    bare_run = subprocess.run([sys.executable, "-c", bare, str(path)], capture_output=True, text=True, check=True)
    assert "IFD loop detected" in bare_run.stderr  # the trap
    our_run = subprocess.run([sys.executable, "-c", ours, str(path)], capture_output=True, text=True, check=True)
    assert our_run.stderr == ""
    assert our_run.stdout.strip() == "Kor"


def test_silencing_exifread_leaves_other_logging_alone(written, caplog):
    import logging

    root_level = logging.getLogger().level
    read_tags(written("loop.tif", images.tiff_with_ifd_loop()))
    logging.getLogger("sharpzone.test").warning("still heard")
    assert [record.name for record in caplog.records] == ["sharpzone.test"]
    assert logging.getLogger().level == root_level


# --- bad files ----------------------------------------------------------------------------

def _reason(path) -> str:
    with pytest.raises(ReadError) as caught:
        read_tags(path)
    assert isinstance(caught.value, FileReadError)
    return caught.value.reason


def test_empty_file(written):
    assert _reason(written("empty.jpg", b"")) == "empty file"


def test_random_bytes_with_jpeg_extension(written):
    assert _reason(written("noise.jpg", bytes(range(7, 256)) * 40)) == "not an image"


def test_truncated_jpeg(written):
    data = images.jpeg(images.exif_block())
    app1 = data.index(b"\xff\xe1")
    assert _reason(written("cut.jpg", data[: app1 + 40])) == "truncated JPEG"
    assert _reason(written("cut-after-soi.jpg", data[:2] + b"\xff")) == "truncated JPEG"


def test_jpeg_cut_in_the_image_data_still_gives_its_tags(written):
    data = images.jpeg(images.exif_block())
    assert read_tags(written("cut-late.jpg", data[: data.index(b"\xff\xda") + 20]))["FNumber"] == pytest.approx(2.8)


@pytest.mark.parametrize("data", [b"II*\x00", b"II*\x00\xf0\xff\xff\xff" + b"\x00" * 40, b"MM\x00*\x00\x00\x00\x02" + b"\x00" * 40])
def test_broken_tiff_header(written, data):
    assert _reason(written("broken.tif", data)) == "broken TIFF header"


def test_directory_running_past_the_end_is_refused_quickly(written):
    import time

    data = bytearray(images.pillow_image("TIFF", images.exif_block(), size=(4, 4)))
    first_ifd = int.from_bytes(data[4:8], "little")
    data[first_ifd : first_ifd + 2] = b"\xff\x8f"  # 36863 entries in a file of a few hundred bytes
    start = time.perf_counter()
    assert _reason(written("long-ifd.tif", bytes(data))) == "damaged EXIF (a directory runs past the end)"
    # exifread alone walks every entry through garbage (about 0.4 s measured); refused up front.
    assert time.perf_counter() - start < 0.1


def test_truncated_png(written):
    data = images.pillow_image("PNG", images.exif_block())
    assert _reason(written("cut.png", data[: data.index(b"eXIf") + 20])) == "truncated PNG"


def test_damaged_exif_block_inside_a_jpeg(written):
    data = images.jpeg(images.exif_block())
    tiff_start = data.index(b"Exif\x00\x00") + 6
    damaged = data[:tiff_start] + b"XX" + data[tiff_start + 2 :]
    assert _reason(written("damaged.jpg", damaged)) == "broken TIFF header"


def test_file_without_read_permission(written):
    path = written("locked.jpg", images.jpeg(images.exif_block()))
    os.chmod(path, 0)
    if os.access(path, os.R_OK):
        pytest.skip("running as a user whom file permissions do not stop (root)")
    assert _reason(path) == "permission denied"


def test_permission_error_is_named_even_when_running_as_root(written, monkeypatch):
    from sharpzone.ingest.readers import exifread_reader as exif_module

    def refuse(*args, **kwargs):
        raise PermissionError(13, "Permission denied")

    path = written("locked.jpg", images.jpeg(images.exif_block()))
    monkeypatch.setattr(exif_module, "open", refuse, raising=False)
    assert _reason(path) == "permission denied"


def test_missing_file_and_folder(tmp_path):
    assert _reason(tmp_path / "nowhere.jpg").startswith("no such file")
    assert _reason(tmp_path) == "is a folder, not a file"


def test_error_message_names_the_file_printably(written):
    path = written(b"bad-\xff.jpg", b"")
    with pytest.raises(ReadError) as caught:
        read_tags(path)
    assert "bad-\\xff.jpg: empty file" in str(caught.value)
    str(caught.value).encode("utf-8")  # printable on a strict UTF-8 stream


def test_read_error_pickles_for_worker_processes(written):
    import pickle

    with pytest.raises(FileReadError) as caught:
        read_tags(written("empty.jpg", b""))
    copy = pickle.loads(pickle.dumps(caught.value))
    assert (copy.path, copy.reason, str(copy)) == (caught.value.path, "empty file", str(caught.value))


# --- fuzz ---------------------------------------------------------------------------------

_SEED_FILES = {
    "jpg": images.jpeg(images.exif_block()),
    "tif": images.pillow_image("TIFF", images.exif_block(), size=(4, 4)),
    "png": images.pillow_image("PNG", images.exif_block()),
    "heic": images.heif(images.exif_block()),
    "raw": images.raw_with_embedded_jpeg(images.jpeg(images.exif_block())),
}


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(
    kind=st.sampled_from(sorted(_SEED_FILES)),
    **images.mutation_strategies(),
)
def test_mutated_files_give_tags_or_read_error_only(tmp_path, kind, changes, keep):
    path = tmp_path / f"fuzz.{kind}"
    path.write_bytes(images.mutated(_SEED_FILES[kind], changes, keep))
    try:
        tags = read_tags(path)
    except FileReadError as err:
        assert err.reason and "\n" not in err.reason
        return
    assert all(isinstance(name, str) and isinstance(value, PLAIN_TYPES) for name, value in tags.items())
