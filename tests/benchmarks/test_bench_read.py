"""How much read_capture costs per file next to a bare exifread loop (run on demand).

    .venv/bin/python -m pytest tests/benchmarks -m benchmark -s
"""

from __future__ import annotations

import time

import pytest

from sharpzone.ingest.capture import read_capture
from sharpzone.ingest.records import CaptureRecord

from ..ingest import images

FILES = 2000


@pytest.fixture(scope="module")
def small_jpegs(tmp_path_factory):
    folder = tmp_path_factory.mktemp("bench")
    paths = []
    for index in range(FILES):
        exif = images.exif_block(focal_length=(24 + index % 50, 1))
        path = folder / f"frame-{index:04d}.jpg"
        path.write_bytes(images.jpeg(exif))
        paths.append(str(path))
    return paths


def _best_of(runs: int, work) -> float:
    timings = []
    for _ in range(runs):
        start = time.perf_counter()
        work()
        timings.append(time.perf_counter() - start)
    return min(timings)


def bare_exifread_loop(paths) -> None:
    """The reference: one process, ``exifread.process_file(details=False)`` per file."""
    import exifread

    for path in paths:
        with open(path, "rb") as file:
            exifread.process_file(file, details=False)


@pytest.mark.benchmark
def test_read_capture_against_bare_exifread(small_jpegs):
    def bare():
        bare_exifread_loop(small_jpegs)

    def ours():
        return [read_capture(path) for path in small_jpegs]

    records = ours()  # warm up, and check the work was really done
    assert all(isinstance(record, CaptureRecord) and record.f_number is not None for record in records)
    bare_s = _best_of(3, bare)
    ours_s = _best_of(3, ours)
    ratio = ours_s / bare_s
    print(
        f"\n{FILES} small JPEGs: bare exifread {bare_s / FILES * 1e3:.3f} ms/file, "
        f"read_capture {ours_s / FILES * 1e3:.3f} ms/file, ratio {ratio:.2f}"
    )
    # read_capture adds segment walking, raw rational re-reads, normalising and a sidecar
    # lookup; more than 3x the bare parse would mean something went badly wrong.
    assert ratio < 3.0
