"""The whole ingest: a folder tree mixing good frames and every bad case, exact counts, a
rerun that changes nothing, kill-safety, concurrent runs, and the CLI's JSON summary."""

from __future__ import annotations

import contextlib

import json
import math
import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
import time

import pytest
from typer.testing import CliRunner

from sharpzone.catalog.engine import open_catalog, session_scope
from sharpzone.catalog.location import sqlite_path
from sharpzone.catalog.models import Body, Frame, IngestProblem, Lens
from sharpzone.cli.app import app
from sharpzone.ingest.pipeline import ingest_paths
from tests.ingest.images import INFINITY_NUMERATOR, exif_block, jpeg, pillow_image

GOOD = 6


@pytest.fixture
def shoot_tree(tmp_path, written):
    """A card: six good frames (two in a sub-folder), and the bad cases of issue 4."""
    card = tmp_path / "card"
    for number in range(GOOD):
        folder = card / ("DCIM/101" if number >= 4 else "DCIM/100")
        written(f"IMG_{number:04d}.JPG", jpeg(exif_block(subject_distance=(3000 + 100 * number, 1000))), folder)
    written("empty.jpg", b"", card)                                       # empty file
    written("random.jpg", os.urandom(4096), card)                          # random bytes, image extension
    written("truncated.jpg", jpeg(exif_block())[:40], card)                # truncated JPEG
    written("broken.dng", b"II*\x00\xff\xff\xff\x7f" + b"\0" * 32, card)  # broken raw header
    written("README.txt", b"not an image", card)                           # ignored
    os.symlink(card / "DCIM", card / "DCIM" / "100" / "loop")              # folder-link loop
    return card


def _counts(url):
    with session_scope(url) as session:
        frames = session.query(Frame).count()
        problems = session.query(IngestProblem).count()
    return frames, problems


def test_mixed_tree_counts_exactly_and_a_rerun_changes_nothing(shoot_tree, catalog_url):
    with open_catalog(catalog_url) as catalog:
        first = ingest_paths(catalog, [shoot_tree], shoot="Harbour", jobs=1)
        second = ingest_paths(catalog, [shoot_tree], shoot="Harbour", jobs=1)
    assert (first.added, first.updated, first.unchanged) == (GOOD, 0, 0)
    assert first.ignored == 1
    reasons = {os.path.basename(path): reason for path, reason in first.failed}
    assert set(reasons) == {"empty.jpg", "random.jpg", "truncated.jpg", "broken.dng", "loop"}
    assert (second.added, second.updated, second.unchanged) == (0, 0, GOOD)
    assert _counts(catalog_url)[0] == GOOD


def test_frames_carry_what_exif_said(shoot_tree, catalog_url):
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [shoot_tree], shoot="Harbour", jobs=1)
    with session_scope(catalog_url) as session:
        frame = session.query(Frame).filter(Frame.path.endswith("IMG_0002.JPG")).one()
        # SubjectDistance 3200/1000 m (EXIF 0x9206, metres) → 3200 mm from the sensor.
        assert frame.focus_mm == pytest.approx(3200) and frame.focus_source == "exif"
        assert frame.f_number == 2.8 and frame.focal_mm == 50
        assert frame.utc_offset_minutes == 330  # OffsetTimeOriginal "+05:30"
        body = session.get(Body, frame.body_id)
        lens = session.get(Lens, frame.lens_id)
        assert body.sensor_format.name == "36x24" and not body.confirmed  # from 50/50 mm equivalent
        assert (lens.focal_min_mm, lens.focal_max_mm, lens.max_aperture_wide) == (24, 70, 2.8)  # LensSpecification
        assert not lens.confirmed


def test_changed_file_is_reread_and_vanished_file_is_kept_unless_pruned(shoot_tree, catalog_url, written):
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [shoot_tree], shoot="Harbour", jobs=1)
        written("IMG_0000.JPG", jpeg(exif_block(f_number=(110, 10))), shoot_tree / "DCIM/100")
        (shoot_tree / "DCIM/100/IMG_0001.JPG").unlink()
        again = ingest_paths(catalog, [shoot_tree], shoot="Harbour", jobs=1)
        assert (again.added, again.updated, again.unchanged) == (0, 1, GOOD - 2)
        assert [os.path.basename(p) for p in again.vanished] == ["IMG_0001.JPG"]
        assert _counts(catalog_url)[0] == GOOD
        pruned = ingest_paths(catalog, [shoot_tree], shoot="Harbour", jobs=1, prune=True)
        assert pruned.pruned == 1
    assert _counts(catalog_url)[0] == GOOD - 1


def test_user_distances_win_and_update_without_rereading(shoot_tree, catalog_url, tmp_path):
    distances = tmp_path / "distances.csv"
    distances.write_text("file,distance\nIMG_0003.JPG,12ft\n")
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [shoot_tree], shoot="Harbour", jobs=1)
        result = ingest_paths(catalog, [shoot_tree], shoot="Harbour", jobs=1, distances_csv=distances)
    assert (result.updated, result.unchanged) == (1, GOOD - 1)
    with session_scope(catalog_url) as session:
        frame = session.query(Frame).filter(Frame.path.endswith("IMG_0003.JPG")).one()
        assert frame.focus_mm == pytest.approx(12 * 304.8) and frame.focus_source == "user"


def test_infinity_and_unknown_subject_distance(tmp_path, written, catalog_url):
    # EXIF 0x9206: numerator 0xFFFFFFFF = infinity, numerator 0 = distance unknown.
    written("inf.jpg", jpeg(exif_block(subject_distance=(INFINITY_NUMERATOR, 1))), tmp_path / "s")
    written("zero.jpg", jpeg(exif_block(subject_distance=(0, 1))), tmp_path / "s")
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [tmp_path / "s"], jobs=1)
    with session_scope(catalog_url) as session:
        focus = {os.path.basename(f.path): (f.focus_mm, f.focus_source) for f in session.query(Frame)}
    assert math.isinf(focus["inf.jpg"][0]) and focus["inf.jpg"][1] == "exif"
    assert focus["zero.jpg"] == (None, "none")


def test_worker_pool_gives_the_same_result(tmp_path, written, catalog_url):
    for number in range(80):
        written(f"F{number:03d}.JPG", jpeg(exif_block(subject_distance=(1000 + number, 1000))), tmp_path / "many")
    with open_catalog(catalog_url) as catalog:
        result = ingest_paths(catalog, [tmp_path / "many"], jobs=2, batch_size=16)
    assert result.added == 80 and not result.failed
    with session_scope(catalog_url) as session:
        assert sorted(f.focus_mm for f in session.query(Frame)) == pytest.approx([1000 + n for n in range(80)])


def test_a_png_and_a_tiff_written_by_pillow_ingest(tmp_path, written, catalog_url):
    written("a.png", pillow_image("PNG", exif_block()), tmp_path / "mixed")
    written("b.tif", pillow_image("TIFF", exif_block()), tmp_path / "mixed")
    with open_catalog(catalog_url) as catalog:
        result = ingest_paths(catalog, [tmp_path / "mixed"], jobs=1)
    assert result.added == 2 and not result.failed


KILLABLE = textwrap.dedent("""
    import sys, time
    from sharpzone.catalog.engine import open_catalog
    from sharpzone.ingest.capture import read_capture
    from sharpzone.ingest.pipeline import ingest_paths
    url, folder = sys.argv[1], sys.argv[2]
    def slow(path, user_mm):
        time.sleep(0.02)
        return read_capture(path, user_mm)
    with open_catalog(url) as catalog:
        ingest_paths(catalog, [folder], shoot="Killed", jobs=1, batch_size=10, reader=slow)
""")


def _frame_count(url) -> int:
    """Frames committed so far, seen through a connection of our own (the run is elsewhere)."""
    from sqlalchemy import func, select

    from sharpzone.catalog.engine import create_catalog_engine

    engine = create_catalog_engine(url)
    try:
        with engine.connect() as connection:
            return connection.execute(select(func.count()).select_from(Frame)).scalar()
    finally:
        engine.dispose()


def test_sigkill_mid_ingest_leaves_a_consistent_catalogue_and_a_rerun_finishes(tmp_path, written, catalog_url):
    for number in range(120):
        written(f"K{number:03d}.JPG", jpeg(exif_block()), tmp_path / "kill")
    url = catalog_url
    with open_catalog(url):
        pass
    process = subprocess.Popen([sys.executable, "-c", KILLABLE, url, str(tmp_path / "kill")])
    deadline = time.monotonic() + 60
    committed = 0
    while time.monotonic() < deadline and committed < 20:
        time.sleep(0.05)
        committed = _frame_count(url)
    process.send_signal(signal.SIGKILL)
    process.wait()
    assert 20 <= committed < 120, "the run must be killed part-way"
    path = sqlite_path(url)
    if path is not None:
        with sqlite3.connect(path) as connection:
            assert connection.execute("pragma integrity_check").fetchone()[0] == "ok"
    stored = _frame_count(url)
    assert stored % 10 == 0  # whole batches only
    with open_catalog(url) as catalog:
        rerun = ingest_paths(catalog, [tmp_path / "kill"], shoot="Killed", jobs=1)
    assert (rerun.added, rerun.unchanged) == (120 - stored, stored)
    assert _frame_count(url) == 120


CONCURRENT = textwrap.dedent("""
    import json, sys
    from sharpzone.catalog.engine import open_catalog
    from sharpzone.ingest.pipeline import ingest_paths
    url, folder, shoot = sys.argv[1:4]
    with open_catalog(url) as catalog:
        result = ingest_paths(catalog, [folder], shoot=shoot, jobs=1, batch_size=5)
    print(json.dumps({"added": result.added, "updated": result.updated, "unchanged": result.unchanged,
                      "failed": len(result.failed)}))
""")


def _run_at_once(url, jobs: list[tuple[str, str]]) -> list[dict]:
    """Start one ingest process per (folder, shoot) against a catalogue nobody created yet,
    all at once; their JSON summaries."""
    runs = [subprocess.Popen([sys.executable, "-c", CONCURRENT, url, folder, shoot], stdout=subprocess.PIPE, text=True)
            for folder, shoot in jobs]
    outputs = [run.communicate(timeout=180)[0] for run in runs]
    assert [run.returncode for run in runs] == [0] * len(runs)
    return [json.loads(output) for output in outputs]


def test_two_ingests_at_once_into_one_catalogue_both_complete(tmp_path, written, catalog_url):
    for side in ("left", "right"):
        for number in range(40):
            written(f"{side}{number:02d}.JPG", jpeg(exif_block()), tmp_path / side)
    outputs = _run_at_once(catalog_url, [(str(tmp_path / side), side) for side in ("left", "right")])
    assert outputs == [{"added": 40, "updated": 0, "unchanged": 0, "failed": 0}] * 2
    with session_scope(catalog_url) as session:
        assert session.query(Frame).count() == 80
        assert session.query(Body).count() == 1  # registered once, whoever came first


def test_two_ingests_of_the_same_card_at_once_count_each_frame_once(tmp_path, written, catalog_url):
    for number in range(40):
        written(f"S{number:02d}.JPG", jpeg(exif_block()), tmp_path / "same")
    outputs = _run_at_once(catalog_url, [(str(tmp_path / "same"), "Same")] * 2)
    # Whichever run wrote a frame first added it; the other found it there, written
    # (updated) or, when it looked after the first run had committed, unchanged.
    assert sum(output["added"] for output in outputs) == 40
    assert [output["added"] + output["updated"] + output["unchanged"] for output in outputs] == [40, 40]
    assert [output["failed"] for output in outputs] == [0, 0]
    with session_scope(catalog_url) as session:
        assert session.query(Frame).count() == 40


def test_cli_json_summary_and_strict(shoot_tree, tmp_path):
    url = str(tmp_path / "cli.sqlite")
    result = CliRunner().invoke(app, ["--catalog", url, "ingest", str(shoot_tree), "--shoot", "Harbour", "--json"])
    assert result.exit_code == 0, result.output
    summary = json.loads(result.stdout)
    assert (summary["added"], summary["updated"], summary["unchanged"], summary["ignored"]) == (GOOD, 0, 0, 1)
    assert {os.path.basename(item["path"]) for item in summary["failed"]} >= {"empty.jpg", "random.jpg"}
    assert all(item["reason"] for item in summary["failed"]) and all(item["path"].startswith("/") for item in summary["failed"])
    strict = CliRunner().invoke(app, ["--catalog", url, "ingest", str(shoot_tree), "--strict"])
    assert strict.exit_code == 1
    table = CliRunner().invoke(app, ["--catalog", url, "ingest", str(shoot_tree), "--shoot", "Harbour"])
    assert "Unchanged" in table.stdout and "truncated" in table.stdout


def test_non_utf8_file_name_is_ingested(tmp_path, written, catalog_url):
    written(b"caf\xe9.jpg", jpeg(exif_block()), tmp_path / "names")
    with open_catalog(catalog_url) as catalog:
        result = ingest_paths(catalog, [tmp_path / "names"], jobs=1)
        again = ingest_paths(catalog, [tmp_path / "names"], jobs=1)
    assert result.added == 1 and again.unchanged == 1
    with session_scope(catalog_url) as session:
        assert session.query(Frame).one().path.endswith("caf\\xe9.jpg")


def test_nothing_to_ingest_is_refused_before_anything_is_written(tmp_path):
    url = str(tmp_path / "c.sqlite")
    result = CliRunner().invoke(app, ["--catalog", url, "ingest", str(tmp_path / "no-such-card")])
    assert result.exit_code == 2 and "does not exist" in result.stderr
    with session_scope(url) as session:
        assert session.query(Frame).count() == 0
        from sharpzone.catalog.models import Shoot

        assert session.query(Shoot).count() == 0


def test_progress_comes_every_so_many_files_and_at_the_end(tmp_path, written):
    from sharpzone.catalog.location import sqlite_url
    from sharpzone.ingest.pipeline import PROGRESS_EVERY

    count = 2 * PROGRESS_EVERY + 6
    for number in range(count):
        written(f"P{number:03d}.JPG", jpeg(exif_block()), tmp_path / "progress")
    calls = []
    with open_catalog(sqlite_url(tmp_path / "progress.sqlite")) as catalog:
        ingest_paths(catalog, [tmp_path / "progress"], jobs=1, progress=lambda *call: calls.append(call))
    read = [(done, total) for stage, done, total in calls if stage == "read" and done]
    assert [done for done, _ in read] == [PROGRESS_EVERY, 2 * PROGRESS_EVERY, count]
    assert read[-1] == (count, count)


@pytest.mark.parametrize("early", [False, True], ids=["catalogue open first", "read before it opens"])
def test_the_progress_bar_knows_its_total_early_on_a_large_card(tmp_path, written, monkeypatch, early):
    """More files than the readers hold at once: after the first few the folder walk is
    finished, so every report but the earliest carries the total (a bar with a time left),
    whether the walk goes on in this process or in the one that drives the early readers."""
    from sharpzone.catalog.location import sqlite_url
    from sharpzone.ingest import pipeline

    monkeypatch.setattr(pipeline, "WALK_AHEAD_AFTER", 8)
    count = 300
    picture = jpeg(exif_block())
    for number in range(count):
        written(f"L{number:03d}.JPG", picture, tmp_path / "large")
    calls = []
    handed = _forced_early(monkeypatch) if early else []
    with contextlib.ExitStack() as stack:
        where = str(tmp_path / "large.sqlite") if early else stack.enter_context(
            open_catalog(sqlite_url(tmp_path / "large.sqlite")))
        ingest_paths(where, [tmp_path / "large"], jobs=1, progress=lambda *call: calls.append(call))
    assert len(handed) == int(early)
    totals = [total for stage, done, total in calls if stage == "read" and done]
    assert len(totals) >= count // pipeline.PROGRESS_EVERY
    assert totals == [count] * len(totals)


def _forced_early(monkeypatch):
    """Make ``ingest_paths`` given a location read before the catalogue opens whatever the
    catalogue holds, and keep each plan handed over (so a test knows the early path ran)."""
    from sharpzone.catalog import peek
    from sharpzone.ingest import pipeline

    monkeypatch.setattr(peek, "may_hold_frames_under", lambda url, roots, head: False)
    handed = []
    original = pipeline._EarlyReads.hand_over
    monkeypatch.setattr(pipeline._EarlyReads, "hand_over",
                        lambda self, plan: (handed.append(plan), original(self, plan))[1])
    return handed


def test_files_read_before_the_catalogue_opens_are_filed_once_and_unchanged_ones_dropped(
        shoot_tree, tmp_path, monkeypatch):
    
    url = str(tmp_path / "early.sqlite")
    handed = _forced_early(monkeypatch)
    first = ingest_paths(url, [shoot_tree], shoot="Harbour", jobs=2)
    # Read again before the catalogue said they were known: every result is dropped.
    second = ingest_paths(url, [shoot_tree], shoot="Harbour", jobs=2)
    assert len(handed) == 2
    assert (first.added, first.updated, first.unchanged, first.ignored) == (GOOD, 0, 0, 1)
    assert {os.path.basename(path) for path, _ in first.failed} == {
        "empty.jpg", "random.jpg", "truncated.jpg", "broken.dng", "loop"}
    assert (second.added, second.updated, second.unchanged) == (0, 0, GOOD)
    assert _counts(f"sqlite:///{url}") == (GOOD, 5)


def test_the_early_readers_wait_while_their_results_wait_and_each_file_is_filed_once(tmp_path, written, monkeypatch):
    """A card larger than what is read ahead: the process that drives the readers stops
    while its results wait for the catalogue to open, goes on as they are taken, and every
    file is filed once, with the progress bar's total right."""
    from sharpzone.ingest import workers

    monkeypatch.setattr(workers, "READ_AHEAD", workers.RESULT_BATCH)  # one list waits at most
    handed = _forced_early(monkeypatch)
    count = 700  # beyond two workers' queues and the one waiting list
    picture = jpeg(exif_block())
    for number in range(count):
        written(f"W{number:03d}.JPG", picture, tmp_path / "big")
    calls = []
    url = str(tmp_path / "big.sqlite")
    summary = ingest_paths(url, [tmp_path / "big"], jobs=2, progress=lambda *call: calls.append(call))
    (plan,) = handed
    assert len(plan.by_path) == count
    assert (summary.added, summary.unchanged) == (count, 0)
    assert _counts(f"sqlite:///{url}") == (count, 0)
    assert [(done, total) for stage, done, total in calls if stage == "read"][-1] == (count, count)
    again = ingest_paths(url, [tmp_path / "big"], jobs=2)
    assert (again.added, again.updated, again.unchanged) == (0, 0, count)


def test_a_catalogue_that_fails_to_open_stops_the_early_readers(shoot_tree, tmp_path, monkeypatch):
    import multiprocessing

    from sharpzone.errors import CatalogError
    
    _forced_early(monkeypatch)
    junk = tmp_path / "junk.sqlite"
    junk.write_bytes(b"not a database at all" * 200)
    with pytest.raises(CatalogError):
        ingest_paths(str(junk), [shoot_tree], jobs=2)
    assert multiprocessing.active_children() == []


def test_a_rescan_through_ingest_into_opens_no_file(shoot_tree, tmp_path, monkeypatch):
    """The catalogue holds the card: it is opened first, and no unchanged file is read."""
    from sharpzone.ingest import pipeline
    
    url = str(tmp_path / "rescan.sqlite")
    ingest_paths(url, [shoot_tree], shoot="Harbour", jobs=1)
    monkeypatch.setattr(pipeline, "_EarlyReads", None)  # any early read would fail loudly
    again = ingest_paths(url, [shoot_tree], shoot="Harbour", jobs=1)
    assert (again.added, again.updated, again.unchanged) == (0, 0, GOOD)


def test_a_distance_the_user_gave_reaches_the_files_read_before_the_catalogue_opens(shoot_tree, tmp_path,
                                                                                     monkeypatch):
    distances = tmp_path / "distances.csv"
    distances.write_text("file,distance\nIMG_0003.JPG,12ft\n")  # 12 ft = 3,657.6 mm (1 ft = 304.8 mm exactly)
    handed = _forced_early(monkeypatch)
    url = str(tmp_path / "early-user.sqlite")
    summary = ingest_paths(url, [shoot_tree], shoot="Harbour", jobs=2, distances_csv=distances)
    assert len(handed) == 1 and summary.added == GOOD
    with session_scope(url) as session:
        frame = session.query(Frame).filter(Frame.path.endswith("IMG_0003.JPG")).one()
        others = session.query(Frame).filter(Frame.focus_source == "user").count()
    assert frame.focus_mm == pytest.approx(3657.6) and frame.focus_source == "user" and others == 1
