"""Ingest speed and memory on a card of small JPEGs.

Run: ``python -m pytest tests/benchmarks/test_bench_ingest.py -m benchmark -s``.
Goals (issue 4): 5,000 files ingested in at most 0.8 × the time of a bare one-process
exifread loop over the same files (2 cores); a rescan of the unchanged files at most 5 % of
the first ingest; peak memory flat in the number of files.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap

import pytest

from tests.ingest.images import exif_block, jpeg

pytestmark = pytest.mark.benchmark

FILES = 5000

BARE_LOOP = textwrap.dedent("""
    import json, logging, os, sys, time
    import exifread
    logging.getLogger("exifread").setLevel(logging.CRITICAL)
    folder = sys.argv[1]
    paths = sorted(os.path.join(folder, name) for name in os.listdir(folder))
    start = time.perf_counter()
    for path in paths:
        with open(path, "rb") as file:
            exifread.process_file(file, details=False)
    print(json.dumps({"seconds": time.perf_counter() - start}))
""")

INGEST = textwrap.dedent("""
    import json, resource, sys, time
    from sharpzone.catalog.engine import open_catalog
    from sharpzone.ingest.pipeline import ingest_paths
    url, folder = sys.argv[1], sys.argv[2]
    with open_catalog(url) as catalog:
        start = time.perf_counter()
        first = ingest_paths(catalog, [folder], shoot="Bench", jobs=2)
        first_seconds = time.perf_counter() - start
        start = time.perf_counter()
        again = ingest_paths(catalog, [folder], shoot="Bench", jobs=2)
        rescan_seconds = time.perf_counter() - start
    print(json.dumps({"first": first_seconds, "rescan": rescan_seconds, "added": first.added,
                      "unchanged": again.unchanged,
                      "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}))
""")


def _card(folder, count):
    os.makedirs(folder, exist_ok=True)
    variants = [jpeg(exif_block(subject_distance=(1000 + 37 * n, 1000))) for n in range(50)]
    for number in range(count):
        with open(os.path.join(folder, f"IMG_{number:05d}.JPG"), "wb") as file:
            file.write(variants[number % len(variants)])


def _run(script, *args):
    output = subprocess.run([sys.executable, "-c", script, *map(str, args)], check=True, capture_output=True, text=True)
    return json.loads(output.stdout)


def test_ingest_against_a_bare_exifread_loop(tmp_path):
    _card(tmp_path / "card", FILES)
    bare = min(_run(BARE_LOOP, tmp_path / "card")["seconds"] for _ in range(3))
    runs = []
    for attempt in range(2):
        runs.append(_run(INGEST, f"sqlite:///{tmp_path / f'bench{attempt}.sqlite'}", tmp_path / "card"))
    best = min(runs, key=lambda run: run["first"])
    ratio = best["first"] / bare
    rescan_share = best["rescan"] / best["first"]
    print(f"\n{FILES:,} JPEGs: bare exifread loop {bare:.2f} s; ingest {best['first']:.2f} s (ratio {ratio:.2f}); "
          f"rescan {best['rescan']:.3f} s ({rescan_share:.1%} of the first); peak RSS {best['peak_mb']:.0f} MB")
    assert best["added"] == FILES and best["unchanged"] == FILES
    assert rescan_share <= 0.05
    assert ratio <= 0.8


def test_memory_is_flat_in_the_number_of_files(tmp_path):
    peaks = {}
    for count in (1000, 4000):
        _card(tmp_path / f"card{count}", count)
        peaks[count] = _run(INGEST, f"sqlite:///{tmp_path / f'm{count}.sqlite'}", tmp_path / f"card{count}")["peak_mb"]
    print(f"\npeak RSS: {peaks[1000]:.0f} MB for 1,000 files, {peaks[4000]:.0f} MB for 4,000 files")
    assert peaks[4000] <= peaks[1000] * 1.25
