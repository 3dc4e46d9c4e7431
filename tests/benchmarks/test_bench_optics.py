"""Speed of the optics core and start-up time of ``sharpzone dof``.

Run: ``python -m pytest tests/benchmarks/test_bench_optics.py -m benchmark -s``.
Goals (issue 2): the core over 1,000,000 rows under 0.2 s; ``sharpzone dof --json`` start-up
within 3× of ``python -c "import numpy"``.
"""

from __future__ import annotations

import subprocess
import sys
import time

import numpy as np
import pytest

from sharpzone.optics import sharp_zone

pytestmark = pytest.mark.benchmark


def _best_of(runs, func):
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        func()
        times.append(time.perf_counter() - start)
    return min(times)


def test_core_over_a_million_rows():
    rng = np.random.default_rng(1)
    rows = 1_000_000
    focal = rng.uniform(14, 400, rows)
    f_number = rng.uniform(1.4, 22, rows)
    focus = focal * 4 * rng.uniform(1.5, 500, rows)
    coc = np.full(rows, 0.03)
    seconds = _best_of(5, lambda: sharp_zone(focal, f_number, coc, focus, reference="sensor"))
    print(f"\nsharp_zone over {rows:,} rows (sensor reference): {seconds:.3f} s")
    assert seconds < 0.2


def test_dof_start_up_ratio():
    dof = [sys.executable, "-m", "sharpzone", "dof", "-f", "50", "-a", "8", "-d", "3m", "--json"]
    numpy_only = [sys.executable, "-c", "import numpy"]
    subprocess.run(dof, check=True, capture_output=True)  # warm the file cache
    dof_seconds = _best_of(7, lambda: subprocess.run(dof, check=True, capture_output=True))
    numpy_seconds = _best_of(7, lambda: subprocess.run(numpy_only, check=True, capture_output=True))
    ratio = dof_seconds / numpy_seconds
    print(f"\nsharpzone dof --json: {dof_seconds:.3f} s; import numpy: {numpy_seconds:.3f} s; ratio {ratio:.2f}")
    assert ratio < 3
