"""read_capture end to end: tags, normalising, focus-distance precedence, picklable results."""

from __future__ import annotations

import math
import pickle
from concurrent.futures import ProcessPoolExecutor

import pytest

from sharpzone.ingest.capture import read_capture
from sharpzone.ingest.records import CaptureRecord, ReadProblem

from . import images
from .test_sidecar import attribute_form


def test_a_jpeg_frame(written):
    path = written("frame.jpg", images.jpeg(images.exif_block()))
    record = read_capture(path)
    assert isinstance(record, CaptureRecord)
    assert (record.f_number, record.focal_mm) == (pytest.approx(2.8), 50.0)
    assert (record.focus_mm, record.focus_source) == (pytest.approx(3200.0), "exif")
    assert record.lens_spec == (24.0, 70.0, pytest.approx(2.8), None)
    assert record.lens_model == "Altamira Optical 24-70mm F2.8"
    assert record.utc_offset_minutes == 330
    # 6000 px at 4233.333 px per inch on the focal plane (CIPA DC-008): 36.0 mm (computed).
    assert record.focal_plane_width_mm == pytest.approx(36.0, abs=0.001)
    assert record.focal_plane_height_mm == pytest.approx(24.0, abs=0.001)


def test_infinity_and_unknown_subject_distance(written):
    far = written("far.jpg", images.jpeg(images.exif_block(subject_distance=(images.INFINITY_NUMERATOR, 1))))
    unknown = written("unknown.jpg", images.jpeg(images.exif_block(subject_distance=(0, 1))))
    assert read_capture(far).focus_mm == math.inf
    assert (read_capture(unknown).focus_mm, read_capture(unknown).focus_source) == (None, "none")


def test_user_distance_wins_over_exif(written):
    path = written("frame.jpg", images.jpeg(images.exif_block()))
    record = read_capture(path, user_focus_mm=1500.0)
    assert (record.focus_mm, record.focus_source) == (1500.0, "user")


def test_sidecar_is_used_only_when_exif_has_no_distance(written):
    with_exif = written("a.jpg", images.jpeg(images.exif_block()))
    without = written("b.jpg", images.jpeg(images.exif_block(subject_distance=(0, 1))))
    written("a.xmp", attribute_form("75/10"))
    written("b.xmp", attribute_form("75/10"))
    assert read_capture(with_exif).focus_source == "exif"
    record = read_capture(without)
    assert (record.focus_mm, record.focus_source) == (pytest.approx(7500.0), "xmp")


def test_damaged_sidecar_is_a_warning_not_a_failure(written):
    path = written("b.jpg", images.jpeg(images.exif_block(subject_distance=None)))
    written("b.xmp", b"<not xml")
    record = read_capture(path)
    assert record.focus_source == "none"
    assert any(warning.startswith("XMP sidecar ignored: XMP sidecar is not well-formed") for warning in record.warnings)


def test_unreadable_file_is_a_read_problem(written):
    path = written("cut.jpg", images.jpeg(images.exif_block())[:30])
    assert read_capture(path) == ReadProblem(path, "truncated JPEG")


def test_results_survive_a_process_pool(written):
    paths = [written(f"f{index}.jpg", images.jpeg(images.exif_block(focal_length=(24 + index, 1)))) for index in range(3)]
    paths.append(written("bad.jpg", b"nope"))
    with ProcessPoolExecutor(max_workers=2) as pool:
        results = list(pool.map(read_capture, paths))
    assert [result.focal_mm for result in results[:3]] == [24.0, 25.0, 26.0]
    assert results[3] == ReadProblem(paths[3], "not an image")
    assert pickle.loads(pickle.dumps(results)) == results


def test_importing_the_read_stages_loads_no_heavy_library():
    import subprocess
    import sys

    code = (
        "import sys, sharpzone.ingest.capture, sharpzone.ingest.scan; "
        "print(sorted(m for m in ('exifread', 'defusedxml', 'PIL', 'sqlalchemy', 'pandas') if m in sys.modules))"
    )
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert run.stdout.strip() == "[]"


def test_sidecar_beside_a_raw_file_gives_its_key_and_an_exact_bracket(written):
    from . import makernotes

    path = written("frame.cr3", makernotes.cr3(focus_upper_cm=0, focus_lower_cm=0))
    written("frame.xmp", attribute_form("75/10"))
    record = read_capture(path)
    assert (record.focus_mm, record.focus_source, record.focus_key) == (
        pytest.approx(7500.0), "xmp", "Xmp.exif.SubjectDistance")
    assert record.focus_near_mm == record.focus_far_mm == record.focus_mm


def test_exif_distance_keeps_its_key_through_read_capture(written):
    record = read_capture(written("frame.jpg", images.jpeg(images.exif_block())))
    assert (record.focus_key, record.focus_near_mm, record.focus_far_mm) == (
        "Exif.Photo.SubjectDistance", pytest.approx(3200.0), pytest.approx(3200.0))
