"""Hostile bundles against the whole ``catalog import`` command: each is refused in one line
with a peak memory under 300 MB (run on demand; builds about 1.7 GB of scratch data).

    .venv/bin/python -m pytest tests/benchmarks/test_bench_bundle.py -m benchmark -s

``SHARPZONE_BENCH_JSON_MB`` sets the size of the large JSON bundle (200 by default).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time
import zipfile

import pytest

pytestmark = pytest.mark.benchmark

HEADER = {"format": "sharpzone-catalogue-bundle", "format_version": 1, "schema_revision": "0004"}
LIMIT_MB = 300


def _import(tmp_path, bundle) -> tuple[int, str, float, float]:
    """Exit code, output, peak resident memory (MB) and seconds of one ``catalog import``."""
    command = [sys.executable, "-m", "sharpzone", "--catalog", str(tmp_path / "c.sqlite"), "catalog", "import", str(bundle)]
    start = time.perf_counter()
    process = subprocess.Popen(command, stdout=subprocess.PIPE, stderr=subprocess.STDOUT)
    output = process.stdout.read().decode("utf-8", "replace")
    _pid, status, usage = os.wait4(process.pid, 0)
    seconds = time.perf_counter() - start
    return os.waitstatus_to_exitcode(status), output, usage.ru_maxrss / 1024, seconds


def _check(tmp_path, bundle, words):
    code, output, peak_mb, seconds = _import(tmp_path, bundle)
    size_mb = bundle.stat().st_size / 2**20
    print(f"\n{bundle.name}: {size_mb:.1f} MB file, exit {code}, peak {peak_mb:.0f} MB, {seconds:.1f} s: {output.strip()[:160]}")
    assert code == 2 and words in output
    assert len(output.strip().splitlines()) == 1 and "Traceback" not in output
    assert peak_mb < LIMIT_MB


def test_zip_bomb(tmp_path):
    bundle = tmp_path / "bomb.zip"
    chunk = b"0" * (1 << 20)
    with zipfile.ZipFile(bundle, "w", compression=zipfile.ZIP_DEFLATED, compresslevel=9) as archive:
        archive.writestr("manifest.json", json.dumps({**HEADER, "tables": ["ingest_problem"]}))
        with archive.open("ingest_problem.csv", "w", force_zip64=True) as entry:
            entry.write(b"path,reason,seen_at,shoot\n")
            for _ in range(1536):  # 1.5 GiB of zeros, about 1.5 MB compressed
                entry.write(chunk)
    _check(tmp_path, bundle, "a bundle may hold")


def test_large_json_bundle_streams(tmp_path):
    # Many valid rows, then a bad one: the whole file is read and checked, row by row.
    megabytes = int(os.environ.get("SHARPZONE_BENCH_JSON_MB", "200"))
    bundle = tmp_path / "large.json"
    row = json.dumps({"path": "/photos/" + "x" * 200, "reason": "truncated JPEG " + "y" * 200,
                      "seen_at": "2026-12-01T10:00:00", "shoot": None})
    rows = (megabytes << 20) // (len(row) + 2)
    with open(bundle, "w", encoding="utf-8") as out:
        out.write(json.dumps(HEADER)[:-1] + ', "tables": {"ingest_problem": [\n')
        for _ in range(rows):
            out.write(row + ",\n")
        out.write(json.dumps({"path": "/photos/last.jpg", "reason": "", "seen_at": "2026-12-01T10:00:00"}) + "]}}\n")
    _check(tmp_path, bundle, "path and reason must not be empty")


def test_deep_json_bundle(tmp_path):
    bundle = tmp_path / "deep.json"
    bundle.write_text(json.dumps(HEADER)[:-1] + ', "tables": {"lens": [' + "[" * 100_000 + "]" * 100_000 + "]}}")
    _check(tmp_path, bundle, "expected an object of fields")
