"""What reading a maker note costs (run on demand).

    .venv/bin/python -m pytest tests/benchmarks/test_bench_makernote.py -m benchmark -s

JPEGs whose EXIF carries a Canon maker note of about 30 kB (camera settings, shot info and
file info arrays plus a 30 kB colour-data block, written by libexiv2), read by read_capture
(libexiv2, maker notes included) against a one-process
``exifread.process_file(details=False)`` loop over the same files (no maker notes at all).
"""

from __future__ import annotations

import pytest

from sharpzone.ingest.capture import read_capture
from sharpzone.ingest.records import CaptureRecord

from ..ingest import makernotes
from .test_bench_read import _best_of, bare_exifread_loop

FILES = 500


@pytest.fixture(scope="module")
def makernote_jpegs(tmp_path_factory):
    folder = tmp_path_factory.mktemp("makernotes")
    data = makernotes.makernote_jpeg(makernotes.CANON, {
        "Exif.Canon.CameraSettings": " ".join(["0"] * 48),
        "Exif.Canon.ShotInfo": " ".join(["0"] * 34),
        "Exif.CanonFi.FocusDistanceUpper": "250", "Exif.CanonFi.FocusDistanceLower": "240",
        "Exif.Canon.0x4001": " ".join(["7"] * 30000),
    })
    assert len(data) > 30000
    paths = []
    for index in range(FILES):
        path = folder / f"frame-{index:04d}.jpg"
        path.write_bytes(data)
        paths.append(str(path))
    return paths


@pytest.mark.benchmark
def test_maker_note_read_against_bare_exifread(makernote_jpegs):
    def ours():
        return [read_capture(path) for path in makernote_jpegs]

    records = ours()
    assert all(isinstance(record, CaptureRecord) and record.focus_source == "makernote" for record in records)
    bare_s = _best_of(3, lambda: bare_exifread_loop(makernote_jpegs))
    ours_s = _best_of(3, ours)
    print(f"\n{FILES} JPEGs with a 30 kB maker note: bare exifread {bare_s / FILES * 1e3:.3f} ms/file, "
          f"read_capture {ours_s / FILES * 1e3:.3f} ms/file, ratio {ours_s / bare_s:.2f}")
