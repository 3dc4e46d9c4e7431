"""``measure_frames`` and ``sharpzone measure`` on a small catalogue whose frames are JPEGs
made from a scikit-image sample picture (half of it blurred by a known disk)."""

from __future__ import annotations

import datetime as dt
import hashlib
import json

import numpy as np
import pytest
from typer.testing import CliRunner

from sharpzone.cli.app import app
from sharpzone.measure.defocus import METHOD, METHOD_VERSION
from tests.measure.pictures import disk_blur, sample

pytest.importorskip("skimage")
runner = CliRunner()


def _write_jpeg(path, grey: np.ndarray) -> None:
    from PIL import Image

    Image.fromarray(np.clip(grey, 0, 255).astype(np.uint8)).convert("RGB").save(path, "JPEG", quality=92)


@pytest.fixture
def measured_catalog(catalog_url, tmp_path):
    """Frames: the left half sharp with the focus point on the right (missed), all sharp
    (focus point given), all blurred, a missing file."""
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_body, add_lens, add_shoot

    picture = sample("gravel")
    blurred = disk_blur(picture, 10)
    half = picture.copy()
    half[:, 256:] = blurred[:, 256:]
    files = {"missed.jpg": (half, (0.8, 0.5)), "sharp.jpg": (picture, (0.5, 0.5)),
             "soft.jpg": (blurred, None), "gone.jpg": (None, None)}
    with session_scope(catalog_url) as session:
        body = add_body(session, "Korvath K1", exif_make="Korvath", exif_model="K1", format_name="36x24",
                        pixel_width=6000, pixel_height=4000)
        lens = add_lens(session, "Korvath 50/1.8", focal_min_mm=50, max_aperture_wide=1.8, min_aperture=22)
        shoot = add_shoot(session, "Gravel pit", near_mm=2500, far_mm=4000)
        for number, (name, (grey, point)) in enumerate(files.items()):
            path = tmp_path / name
            if grey is not None:
                _write_jpeg(path, grey)
            session.add(Frame(path=str(path), file_size=1000, file_mtime_ns=number, shoot=shoot, body=body,
                              lens=lens, focal_mm=50.0, f_number=8.0, exposure_s=1 / 15, focus_mm=None,
                              focus_source="none", captured_at=dt.datetime(2026, 5, 1, 10, number),
                              focus_point_x=point[0] if point else None, focus_point_y=point[1] if point else None))
    return catalog_url, tmp_path


def _flags_by_file(url) -> dict[str, list[str]]:
    result = runner.invoke(app, ["--catalog", url, "check", "--json"])
    assert result.exit_code == 0, result.output
    return {item["path"].rsplit("/", 1)[-1]: item for item in json.loads(result.output)}


def test_measure_then_check_names_the_missed_and_the_soft_frames(measured_catalog):
    url, folder = measured_catalog
    before = {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in folder.glob("*.jpg")}
    result = runner.invoke(app, ["--catalog", url, "measure", "--json"])
    assert result.exit_code == 0, result.output
    summary = json.loads(result.output)
    assert summary["measured"] == 3 and summary["method"] == METHOD and summary["method_version"] == METHOD_VERSION
    assert [item["path"].rsplit("/", 1)[-1] for item in summary["failed"]] == ["gone.jpg"]
    # Image files are only read.
    assert before == {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in folder.glob("*.jpg")}

    frames = _flags_by_file(url)
    missed = frames["missed.jpg"]
    assert "focus-missed" in missed["flags"]
    assert "right" not in missed["blur"]["best_where"]
    assert missed["blur"]["focus_blur_coc"] > missed["blur"]["best_blur_coc"]
    assert missed["blur"]["analysed_long_px"] == 512
    assert "sharp-at-focus" in frames["sharp.jpg"]["flags"]
    soft = frames["soft.jpg"]
    assert "soft-all-over" in soft["flags"]
    assert soft["blur"]["focus_assumed_centre"] is True
    text = next(item["text"] for item in soft["remedies"] if item["flag"] == "soft-all-over")
    assert "1/15 s is slower than the hand-holding rule's 1/50 s" in text
    assert frames["gone.jpg"]["blur"] is None

    # The table shows the measurement and the caution.
    table = runner.invoke(app, ["--catalog", url, "check"])
    assert "focus-missed" in table.output and "estimate from a small preview" in table.output
    frames_table = runner.invoke(app, ["--catalog", url, "frames"], env={"COLUMNS": "220"})
    assert "Blur at focus" in frames_table.output and "× CoC" in frames_table.output
    stats = json.loads(runner.invoke(app, ["--catalog", url, "stats", "--json"]).output)["lenses"][0]
    assert (stats["blur_measured"], stats["focus_missed"], stats["soft_all_over"]) == (3, 1, 1)
    # --verdict filters by the blur verdicts too.
    only = runner.invoke(app, ["--catalog", url, "frames", "--verdict", "focus-missed", "--json"])
    assert [item["path"].rsplit("/", 1)[-1] for item in json.loads(only.output)] == ["missed.jpg"]


def test_current_measurements_are_kept_older_versions_and_again_measure_anew(measured_catalog):
    from sqlalchemy import update

    from sharpzone.catalog.engine import open_catalog
    from sharpzone.catalog.models import FrameBlur
    from sharpzone.measure.service import measure_frames

    url, _ = measured_catalog
    with open_catalog(url) as catalog:
        first = measure_frames(catalog, jobs=1)
        assert (first.measured, first.current) == (3, 0)
        again = measure_frames(catalog, jobs=1)
        assert (again.measured, again.current) == (0, 3)
        with catalog.session_scope() as session:
            session.execute(update(FrameBlur).where(FrameBlur.id == FrameBlur.id).values(method_version=0))
        older = measure_frames(catalog, jobs=1)
        assert older.measured == 3
        forced = measure_frames(catalog, jobs=1, again=True, shoot="Gravel pit")
        assert forced.measured == 3


def test_interrupted_run_keeps_what_it_measured(measured_catalog):
    from sqlalchemy import func, select

    from sharpzone.catalog.engine import open_catalog
    from sharpzone.catalog.models import FrameBlur
    from sharpzone.measure.service import measure_frames

    url, _ = measured_catalog
    calls = []

    def progress(stage, done, total):
        calls.append(done)
        if done == 2:
            raise KeyboardInterrupt

    with open_catalog(url) as catalog:
        summary = measure_frames(catalog, jobs=1, progress=progress)
        assert summary.interrupted
        with catalog.session_scope() as session:
            stored = session.execute(select(func.count()).select_from(FrameBlur)).scalar_one()
    assert stored == summary.measured >= 1


def test_bad_options_are_one_line_errors(measured_catalog):
    url, _ = measured_catalog
    result = runner.invoke(app, ["--catalog", url, "measure", "--jobs", "0"])
    assert result.exit_code == 2 and "--jobs 0 is not valid" in result.output
    result = runner.invoke(app, ["--catalog", url, "measure", "--shoot", "Nowhere"])
    assert result.exit_code != 0 and "Nowhere" in result.output


def _decoder_that_crashes_or_hangs(path, focus_point, long_side_px):
    """Stands in for ``measure_file`` in forked workers: a native decoder's abort on one file
    and a hang on another, a real measurement elsewhere."""
    import os
    import time

    from sharpzone.measure.service import measure_file_unpatched

    if path.endswith("sharp.jpg"):
        os.abort()
    if path.endswith("soft.jpg"):
        time.sleep(60)
    return measure_file_unpatched(path, focus_point, long_side_px)


@pytest.mark.skipif("fork" not in __import__("multiprocessing").get_all_start_methods(),
                    reason="the stand-in decoder reaches the workers by fork")
def test_a_decoder_that_crashes_or_hangs_costs_only_its_frame(measured_catalog, monkeypatch):
    # multiprocessing.Pool, which measure used before, loses the task of a dead worker and
    # waits for it for ever; the contained pool reports the file and goes on.
    import sharpzone.measure.service as service
    from sharpzone.catalog.engine import open_catalog

    url, _ = measured_catalog
    monkeypatch.setattr(service, "measure_file_unpatched", service.measure_file, raising=False)
    monkeypatch.setattr(service, "measure_file", _decoder_that_crashes_or_hangs)
    monkeypatch.setattr(service, "POOL_THRESHOLD", 1)
    monkeypatch.setattr(service, "TIME_LIMIT_S", 2.0)
    with open_catalog(url) as catalog:
        summary = service.measure_frames(catalog, jobs=2)
    reasons = {path.rsplit("/", 1)[-1]: reason for path, reason in summary.failed}
    assert reasons["sharp.jpg"] == "the picture decoder crashed on this file"
    assert reasons["soft.jpg"] == "the picture decoder timed out after 2 s on this file"
    assert "gone.jpg" in reasons and summary.measured == 1 and not summary.interrupted
