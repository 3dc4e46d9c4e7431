"""``check`` over 100,000 frames: one query, one vectorised pass.

Run: ``python -m pytest tests/benchmarks/test_bench_check.py -m benchmark -s``.
Goal (issue 5): under 2 s and under 500 MB here.
"""

from __future__ import annotations

import json
import subprocess
import sys
import textwrap

import pytest

pytestmark = pytest.mark.benchmark

FRAMES = 100_000

FILL = textwrap.dedent("""
    import math, random, sys
    from sqlalchemy import insert
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_body, add_lens, add_shoot
    url, count = sys.argv[1], int(sys.argv[2])
    random.seed(5)
    with session_scope(url) as session:
        body = add_body(session, "Korvath K1", exif_make="Korvath", exif_model="K1", format_name="36x24")
        lenses = [add_lens(session, f"Altamira {f}mm", focal_min_mm=f, max_aperture_wide=2.8) for f in (24, 50, 85, 200)]
        shoot = add_shoot(session, "Big day", near_mm=2000, far_mm=6000)
        rows = []
        for i in range(count):
            lens = lenses[i % 4]
            focus = random.choice([None, math.inf] + [random.uniform(1000, 20000)] * 8)
            rows.append(dict(path=f"/cards/big/{i:06d}.jpg", file_size=1, file_mtime_ns=i, shoot_id=shoot.id,
                             body_id=body.id, lens_id=lens.id, focal_mm=lens.focal_min_mm,
                             f_number=random.choice([2.8, 4, 5.6, 8, 11, 16]), focus_mm=focus,
                             focus_source="exif" if focus else "none"))
        session.execute(insert(Frame), rows)
""")

MEASURE = textwrap.dedent("""
    import json, resource, sys, time
    from sharpzone.analysis.frames import FrameFilter, check_shoot
    from sharpzone.catalog.engine import session_scope
    url = sys.argv[1]
    start = time.perf_counter()
    with session_scope(url) as session:
        result = check_shoot(session, FrameFilter(shoot="Big day"))
    seconds = time.perf_counter() - start
    flagged = len(result.flagged)
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(json.dumps({"seconds": seconds, "peak_mb": peak_mb, "frames": len(result.frames), "flagged": flagged}))
""")


def test_check_over_a_hundred_thousand_frames(tmp_path):
    url = f"sqlite:///{tmp_path / 'big.sqlite'}"
    subprocess.run([sys.executable, "-c", FILL, url, str(FRAMES)], check=True)
    figures = json.loads(subprocess.run([sys.executable, "-c", MEASURE, url], check=True,
                                        capture_output=True, text=True).stdout)
    print(f"\ncheck over {figures['frames']:,} frames: {figures['seconds']:.2f} s, peak RSS "
          f"{figures['peak_mb']:.0f} MB, {figures['flagged']:,} flagged")
    assert figures["frames"] == FRAMES
    assert figures["seconds"] < 2.0
    assert figures["peak_mb"] < 500
