"""Ingest against a bare exifread loop on JPEGs that carry a ~30 KB maker note, per-file cost
at 5,000 and 20,000 files, and peak memory (issue 10 part 9).

Run: ``python -m pytest tests/benchmarks/test_bench_pipeline.py -m benchmark -s``.
Goals: ingest (default workers) ≤ 1.0 × a one-process ``exifread.process_file(details=False)``
loop over the same files (which reads no maker note at all); per-file cost at 20,000 files
within 10 % of that at 5,000; peak memory (the parent and the largest worker) under 300 MB.
"""

from __future__ import annotations

import os
import textwrap

import piexif
import pytest

from tests.benchmarks.test_bench_ingest import BARE_LOOP, _run
from tests.ingest.images import exif_block, jpeg

pytestmark = pytest.mark.benchmark

MAKER_NOTE_BYTES = 30_000

INGEST = textwrap.dedent("""
    import json, resource, sys, time
    from sharpzone.catalog.engine import open_catalog
    from sharpzone.ingest.pipeline import ingest_paths
    url, folder = sys.argv[1], sys.argv[2]
    with open_catalog(url) as catalog:
        start = time.perf_counter()
        result = ingest_paths(catalog, [folder], shoot="Bench")
        seconds = time.perf_counter() - start
    print(json.dumps({"seconds": seconds, "added": result.added, "failed": len(result.failed),
                      "parent_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
                      "worker_mb": resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024}))
""")


def _with_maker_note(number: int) -> bytes:
    exif = piexif.load(exif_block(subject_distance=(1000 + 37 * number, 1000)))
    # Bytes that vary like real maker-note data, not one repeated value.
    exif["Exif"][piexif.ExifIFD.MakerNote] = bytes((number * 7 + i * 31) % 251 for i in range(MAKER_NOTE_BYTES))
    return jpeg(piexif.dump(exif))


def _card(folder, count):
    os.makedirs(folder, exist_ok=True)
    variants = [_with_maker_note(n) for n in range(50)]
    for number in range(count):
        with open(os.path.join(folder, f"IMG_{number:05d}.JPG"), "wb") as file:
            file.write(variants[number % len(variants)])


def test_ingest_with_maker_notes_against_a_bare_exifread_loop_and_at_four_times_the_files(tmp_path):
    runs = {}
    for count in (5000, 20000):
        card = tmp_path / f"card{count}"
        _card(card, count)
        bare = _run(BARE_LOOP, card)["seconds"]
        ingest = _run(INGEST, f"sqlite:///{tmp_path / f'bench{count}.sqlite'}", card)
        assert ingest["added"] == count and ingest["failed"] == 0
        runs[count] = (bare, ingest)
        print(f"\n{count:,} JPEGs with a {MAKER_NOTE_BYTES // 1000} KB maker note: bare exifread loop {bare:.2f} s; "
              f"ingest {ingest['seconds']:.2f} s (ratio {ingest['seconds'] / bare:.2f}); "
              f"peak RSS parent {ingest['parent_mb']:.0f} MB, largest worker {ingest['worker_mb']:.0f} MB")
        for name in os.listdir(card):
            os.unlink(card / name)  # keep the disk use to one card at a time
    per_file = {count: ingest["seconds"] / count for count, (_, ingest) in runs.items()}
    drift = per_file[20000] / per_file[5000]
    print(f"per-file cost: {per_file[5000] * 1e3:.3f} ms at 5,000, {per_file[20000] * 1e3:.3f} ms at 20,000 "
          f"(ratio {drift:.2f})")
    bare, ingest = runs[5000]
    assert ingest["seconds"] / bare <= 1.0
    assert drift <= 1.10
    assert max(ingest["parent_mb"], ingest["worker_mb"]) < 300
