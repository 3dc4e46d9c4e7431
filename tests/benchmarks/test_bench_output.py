"""Machine output that streams (issue 16 part 1): ``frames``/``check`` ``--json``, ``--jsonl``
and ``--csv`` as whole commands against a bare baseline run in the same session: one pandas
``read_sql`` of the same join, the thin-lens formula in numpy and ``to_json``, in one process.

Run: ``python -m pytest tests/benchmarks/test_bench_output.py -m benchmark -s``
(``SHARPZONE_BENCH_FRAMES=300000,1000000`` for more sizes; default 300,000).
Goals: each command ≤ 2 × the baseline's time and ≤ 1.5 × its peak memory (maximum resident
set size from ``/usr/bin/time -f %M``); the commands' memory stays flat as the catalogue grows.
Each figure is the faster of two runs (and the larger peak memory), the baseline's too.
"""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
import time

import pytest

from tests.benchmarks.test_bench_check import FILL

pytestmark = pytest.mark.benchmark

SIZES = [int(size) for size in os.environ.get("SHARPZONE_BENCH_FRAMES", "300000").split(",")]

# The baseline: what a script would do by hand with pandas, nothing of sharpzone's.
BASELINE = textwrap.dedent("""
    import sys
    import numpy as np, pandas as pd, sqlalchemy
    engine = sqlalchemy.create_engine(sys.argv[1])
    query = '''select frame.id, frame.path, frame.focal_mm, frame.f_number, frame.exposure_s, frame.iso,
                      frame.focus_mm, frame.focus_near_mm, frame.focus_far_mm, frame.focus_source,
                      frame.captured_at, shoot.name as shoot, body.name as body, lens.name as lens,
                      sensor_format.width_mm, sensor_format.height_mm
               from frame join shoot on shoot.id = frame.shoot_id
               left join body on body.id = frame.body_id
               left join sensor_format on sensor_format.id = body.format_id
               left join lens on lens.id = frame.lens_id
               order by frame.captured_at, frame.path'''
    with engine.connect() as connection:
        frames = pd.read_sql(sqlalchemy.text(query), connection)
    f, n, s = frames["focal_mm"].to_numpy(), frames["f_number"].to_numpy(), frames["focus_mm"].to_numpy()
    c = np.hypot(frames["width_mm"], frames["height_mm"]).to_numpy() / 1500
    h = f * f / (n * c) + f  # thin-lens hyperfocal distance
    with np.errstate(invalid="ignore", divide="ignore"):
        frames["coc_mm"] = c
        frames["hyperfocal_mm"] = h
        frames["near_mm"] = s * (h - f) / (h + s - 2 * f)
        frames["far_mm"] = np.where(s < h, s * (h - f) / (h - s), np.inf)
    sys.stdout.write(frames.to_json(orient="records"))
""")


def _measure(command: list[str]) -> tuple[float, float]:
    """Wall seconds and peak resident memory (MB) of one whole process, output thrown away."""
    start = time.perf_counter()
    done = subprocess.run(["/usr/bin/time", "-f", "%M", *command], stdout=subprocess.DEVNULL,
                          stderr=subprocess.PIPE, text=True, check=True, env={**os.environ, "COLUMNS": "120"})
    seconds = time.perf_counter() - start
    return seconds, int(done.stderr.strip().splitlines()[-1]) / 1024


def _best_of_two(command: list[str]) -> tuple[float, float]:
    """The faster of two runs (the machine may be shared) and the larger peak memory."""
    runs = [_measure(command) for _ in range(2)]
    return min(seconds for seconds, _ in runs), max(mb for _, mb in runs)


@pytest.mark.parametrize("count", SIZES)
def test_streamed_output_against_the_pandas_baseline(tmp_path, count):
    url = f"sqlite:///{tmp_path / 'big.sqlite'}"
    subprocess.run([sys.executable, "-c", FILL, url, str(count)], check=True)
    sharpzone = [sys.executable, "-m", "sharpzone", "--catalog", url]
    runs = {
        "baseline (read_sql + numpy + to_json)": [sys.executable, "-c", BASELINE, url],
        "frames --json": [*sharpzone, "frames", "--json"],
        "frames --jsonl": [*sharpzone, "frames", "--jsonl"],
        "frames --csv": [*sharpzone, "frames", "--csv"],
        "check --json": [*sharpzone, "check", "--json"],
        "check --csv": [*sharpzone, "check", "--csv"],
    }
    _measure(runs["frames --json"])  # warm the file cache
    figures = {name: _best_of_two(command) for name, command in runs.items()}
    base_s, base_mb = figures.pop("baseline (read_sql + numpy + to_json)")
    print(f"\n{count:,} frames; baseline {base_s:.2f} s, {base_mb:.0f} MB")
    worst_time = worst_memory = 0.0
    for name, (seconds, mb) in figures.items():
        print(f"  {name:<15} {seconds:6.2f} s {mb:6.0f} MB   time {seconds / base_s:.2f}×  memory {mb / base_mb:.2f}×")
        worst_time, worst_memory = max(worst_time, seconds / base_s), max(worst_memory, mb / base_mb)
    assert worst_time <= 2.0
    assert worst_memory <= 1.5
