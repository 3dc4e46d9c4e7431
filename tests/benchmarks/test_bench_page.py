"""``sharpzone report`` for a 2,000-frame shoot: the page's size, the command's time (as a
ratio to ``check --json`` on the same catalogue, both whole commands in one run) and how
long headless Chromium takes to open the page.

Run: ``python -m pytest tests/benchmarks/test_bench_page.py -m benchmark -s``.
Goal (issue 14): under 40 MB, open in under 3 s here.
"""

from __future__ import annotations

import io
import json
import os
import subprocess
import sys
import textwrap
import time

import pytest

pytestmark = pytest.mark.benchmark

FRAMES = 2000
DISTINCT = 40  # distinct pictures, repeated over the files (each file is still decoded)

FILL = textwrap.dedent("""
    import json, math, random, sys
    from sqlalchemy import insert
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_body, add_lens, add_shoot
    url, paths = sys.argv[1], json.loads(open(sys.argv[2]).read())
    random.seed(14)
    with session_scope(url) as session:
        bodies = [add_body(session, f"Korvath K{n}", exif_make="Korvath", exif_model=f"K{n}", format_name="36x24")
                  for n in (1, 2)]
        lenses = [add_lens(session, f"Altamira {f}mm", focal_min_mm=f, max_aperture_wide=2.8) for f in (24, 50, 85, 200)]
        shoot = add_shoot(session, "Big day", near_mm=2000, far_mm=6000)
        rows = []
        for i, path in enumerate(paths):
            lens = lenses[i % 4]
            focus = random.choice([None, math.inf] + [random.uniform(1000, 20000)] * 8)
            rows.append(dict(path=path, file_size=1, file_mtime_ns=i, shoot_id=shoot.id, body_id=bodies[i % 2].id,
                             lens_id=lens.id, focal_mm=lens.focal_min_mm,
                             f_number=random.choice([2.8, 4, 5.6, 8, 11, 16]), focus_mm=focus,
                             focus_source="exif" if focus else "none"))
        session.execute(insert(Frame), rows)
""")


def _camera_like_jpegs(count: int) -> list[bytes]:
    """Pictures with detail at several scales (soft shapes, texture, grain), 1200 × 800."""
    import numpy as np
    from PIL import Image

    rng = np.random.default_rng(14)
    pictures = []
    for _ in range(count):
        layers = np.zeros((800, 1200, 3))
        for cells, weight in ((4, 90), (16, 50), (64, 25), (256, 12)):
            coarse = rng.uniform(0, 255, (cells * 2 // 3 + 1, cells, 3)).astype(np.uint8)
            layers += weight / 177 * np.asarray(Image.fromarray(coarse).resize((1200, 800), Image.Resampling.BICUBIC))
        layers += rng.normal(0, 4, layers.shape)
        buffer = io.BytesIO()
        Image.fromarray(np.clip(layers, 0, 255).astype(np.uint8)).save(buffer, "JPEG", quality=90)
        pictures.append(buffer.getvalue())
    return pictures


def _command(*args) -> float:
    start = time.perf_counter()
    subprocess.run([sys.executable, "-m", "sharpzone", *args], check=True, stdout=subprocess.DEVNULL)
    return time.perf_counter() - start


def test_report_page_of_two_thousand_frames(tmp_path):
    from tests.browser.conftest import CHROMEDRIVER, CHROMIUM, FLAGS

    card = tmp_path / "card"
    card.mkdir()
    pictures = _camera_like_jpegs(DISTINCT)
    paths = []
    for number in range(FRAMES):
        path = card / f"BIG_{number:04d}.JPG"
        path.write_bytes(pictures[number % DISTINCT])
        paths.append(str(path))
    url = f"sqlite:///{tmp_path / 'big.sqlite'}"
    listing = tmp_path / "paths.json"
    listing.write_text(json.dumps(paths))
    subprocess.run([sys.executable, "-c", FILL, url, str(listing)], check=True)
    out = tmp_path / "big.html"
    check_s = _command("--catalog", url, "check", "--shoot", "Big day", "--json")
    report_s = _command("--catalog", url, "report", "--shoot", "Big day", "--out", str(out))
    size_mb = out.stat().st_size / 1e6

    open_s = fcp_s = None
    if os.access(CHROMIUM, os.X_OK) and os.access(CHROMEDRIVER, os.X_OK):
        from selenium import webdriver
        from selenium.webdriver.chrome.service import Service

        options = webdriver.ChromeOptions()
        options.binary_location = CHROMIUM
        for flag in (*FLAGS, f"--user-data-dir={tmp_path / 'profile'}"):
            options.add_argument(flag)
        driver = webdriver.Chrome(service=Service(CHROMEDRIVER), options=options)
        try:
            driver.get(out.as_uri())
            timing = driver.execute_script(
                "var n=performance.getEntriesByType('navigation')[0];"
                "var p=performance.getEntriesByName('first-contentful-paint')[0];"
                "return [n.loadEventEnd, p ? p.startTime : null, document.querySelectorAll('article.frame').length];")
        finally:
            driver.quit()
        open_s, fcp_s = timing[0] / 1000, (timing[1] or 0) / 1000
        assert timing[2] == FRAMES
    print(f"\nreport page of {FRAMES:,} frames: {size_mb:.1f} MB; command {report_s:.1f} s = "
          f"{report_s / check_s:.1f} × check --json ({check_s:.1f} s) on {os.cpu_count()} cores"
          + (f"; Chromium: first paint {fcp_s:.2f} s, load event {open_s:.2f} s" if open_s is not None else ""))
    assert size_mb < 40
    if open_s is not None:
        assert open_s < 3.0
