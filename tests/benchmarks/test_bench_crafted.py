"""What a crafted EXIF directory costs the readers (run on demand).

    .venv/bin/python -m pytest tests/benchmarks/test_bench_crafted.py -m benchmark -s

The file of issue 10: 2,100 (and 4,790) entries of 999 rationals sharing one value, with
the Exif and GPS pointers leading back to the same directory. Reported next to the cost of
reading an ordinary frame in the same run.
"""

from __future__ import annotations

import pytest

from sharpzone.ingest.capture import read_capture
from sharpzone.ingest.records import ReadProblem

from ..ingest import images, tiffbuild
from ..ingest.test_readers import _jpeg_with_tiff
from .test_bench_read import _best_of


@pytest.mark.benchmark
@pytest.mark.parametrize("entries", [2100, 4790])
def test_crafted_directory_against_an_ordinary_frame(tmp_path, entries):
    crafted = tmp_path / "crafted.jpg"
    crafted.write_bytes(_jpeg_with_tiff(tiffbuild.crafted_directory_tiff(entries=entries)))
    ordinary = tmp_path / "ordinary.jpg"
    ordinary.write_bytes(images.jpeg(images.exif_block()))
    assert isinstance(read_capture(str(crafted)), ReadProblem)
    crafted_s = _best_of(5, lambda: read_capture(str(crafted)))
    ordinary_s = _best_of(5, lambda: read_capture(str(ordinary)))
    print(f"\ncrafted {entries} entries: {crafted_s * 1e3:.2f} ms, ordinary frame {ordinary_s * 1e3:.2f} ms, "
          f"ratio {crafted_s / ordinary_s:.1f}")
