"""Contained readers: a worker that segfaults, aborts, hangs or raises costs one file, the
others are all read, and the run goes on (issue 10 part 2); the same when the reading goes
stage by stage (``capture.STAGES``), a batch's files half-way through when one kills it."""

from __future__ import annotations

import os

import pytest

from sharpzone.catalog.engine import open_catalog, session_scope
from sharpzone.catalog.models import Frame, IngestProblem
from sharpzone.ingest.pipeline import ingest_paths
from sharpzone.ingest.workers import BackgroundReads, ForkedReads, ReaderPool, can_fork, timed_out, unpacked_answer
from tests.ingest import makernotes
from tests.ingest.images import exif_block, jpeg, raw_with_embedded_jpeg, tiff_with_ifd_loop
from tests.ingest.readers import MISBEHAVING_STAGES, SLOW_STAGES, misbehaving_reader, pid_noting_hang

CRASHED = "the metadata reader crashed on this file"


def _card(written, folder, good: int, bad: list[str]):
    for number in range(good):
        written(f"G{number:03d}.JPG", jpeg(exif_block(subject_distance=(1000 + number, 1000))), folder)
    for name in bad:
        written(name, jpeg(exif_block()), folder)


READERS = pytest.mark.parametrize("reader", [misbehaving_reader, MISBEHAVING_STAGES], ids=["file by file", "stages"])


@READERS
@pytest.mark.parametrize("jobs", [1, 2])
def test_crashing_and_hanging_readers_cost_one_file_each(tmp_path, written, catalog_url, jobs, reader):
    folder = tmp_path / "card"
    _card(written, folder, 90, ["A_segv.JPG", "M_abort.JPG", "T_hang.JPG", "Z_bug.JPG"])
    with open_catalog(catalog_url) as catalog:
        result = ingest_paths(catalog, [folder], jobs=jobs, reader=reader, time_limit_s=1.5, batch_size=20)
    reasons = {os.path.basename(path): reason for path, reason in result.failed}
    assert reasons == {"A_segv.JPG": CRASHED, "M_abort.JPG": CRASHED, "T_hang.JPG": timed_out(1.5),
                       "Z_bug.JPG": "the metadata reader failed on this file (RuntimeError)"}
    assert timed_out(1.5) == "the metadata reader timed out after 1.5 s on this file"
    assert result.added == 90
    with session_scope(catalog_url) as session:
        focus = sorted(frame.focus_mm for frame in session.query(Frame))
        assert focus == pytest.approx([1000 + n for n in range(90)])  # every good file, once
        assert session.query(IngestProblem).count() == 4


@READERS
def test_through_the_process_that_drives_the_readers_a_crash_or_a_hang_costs_one_file(tmp_path, written, reader):
    """A first ingest into a catalogue given by its place reads from a process of its own
    (``pipeline._EarlyReads``): the same containment holds there."""
    from sharpzone.ingest import pipeline

    folder = tmp_path / "card"
    _card(written, folder, 90, ["A_segv.JPG", "M_abort.JPG", "T_hang.JPG", "Z_bug.JPG"])
    early = []
    original = pipeline._EarlyReads.hand_over
    pipeline._EarlyReads.hand_over = lambda self, plan: (early.append(plan), original(self, plan))[1]
    try:
        result = ingest_paths(str(tmp_path / "first.sqlite"), [folder], jobs=2, reader=reader, time_limit_s=1.5,
                              batch_size=20)
    finally:
        pipeline._EarlyReads.hand_over = original
    assert len(early) == 1
    reasons = {os.path.basename(path): reason for path, reason in result.failed}
    assert reasons == {"A_segv.JPG": CRASHED, "M_abort.JPG": CRASHED, "T_hang.JPG": timed_out(1.5),
                       "Z_bug.JPG": "the metadata reader failed on this file (RuntimeError)"}
    assert result.added == 90


def _tasks_noting(paths, walk_first: bool = False):
    """Tasks that note each path before it is handed out; ``walk_first``: every path noted
    before the first is (as the ingest's walk does beyond its first files)."""
    def tasks_of(note):
        if walk_first:
            for path in paths:
                note(("found", path))
        for path in paths:
            if not walk_first:
                note(("found", path))
            yield (path, None)
    return tasks_of


def _two_readers(reader):
    return lambda head: ReaderPool(reader, 2, depth=4)  # one file each at first


needs_fork = pytest.mark.skipif(not can_fork(), reason="this platform does not fork processes")


@needs_fork
@pytest.mark.parametrize(("notes_at_once", "walk_first"), [(4096, False), (4096, True), (7, True)])
def test_forked_reads_give_every_answer_once_each_after_the_notes_taken_before_it(tmp_path, written, monkeypatch,
                                                                                   notes_at_once, walk_first):
    from sharpzone.ingest import workers

    monkeypatch.setattr(workers, "NOTES_AT_ONCE", notes_at_once)  # 7: many notes go in messages of their own
    folder = tmp_path / "noted"
    _card(written, folder, 150, ["Q_segv.JPG"])
    paths = [str(folder / name) for name in sorted(os.listdir(folder))]
    noted: list = []
    messages = []
    with ForkedReads(_tasks_noting(paths, walk_first), _two_readers(misbehaving_reader), 64,
                     unpacked=unpacked_answer) as reads:
        answers = []
        for answer in reads.results(lambda notes: (messages.append(len(notes)), noted.extend(notes))):
            assert ("found", answer.path) in noted  # its note came first
            answers.append(answer)
    assert sorted(answer.path for answer in answers) == paths
    assert [note[1] for note in noted] == paths  # in the order taken
    assert max(messages) <= notes_at_once
    crashed = [os.path.basename(a.path) for a in answers if getattr(a, "reason", None) == CRASHED]
    assert crashed == ["Q_segv.JPG"]
    assert next(a for a in answers if a.path.endswith("G007.JPG")).focus_mm == pytest.approx(1007)


class _Unpicklable(ValueError):
    def __reduce__(self):
        raise TypeError("this error does not cross between processes")


@needs_fork
@pytest.mark.parametrize(("error", "expected", "words"), [
    (ValueError("the walk broke"), ValueError, "the walk broke"),
    (_Unpicklable("the walk broke"), RuntimeError, r"drives the readers failed \(_Unpicklable: the walk broke\)"),
], ids=["as raised", "in words"])
def test_an_error_in_the_driving_process_reaches_the_caller(tmp_path, error, expected, words):
    def tasks_of(note):
        yield (str(tmp_path / "a.JPG"), None)
        raise error

    with pytest.raises(expected, match=words):
        with ForkedReads(tasks_of, _two_readers(misbehaving_reader), 64) as reads:
            list(reads.results(lambda notes: None))


@needs_fork
def test_leaving_at_once_stops_the_driving_process_and_its_hanging_workers(tmp_path, written):
    import time

    folder = tmp_path / "hung"
    _card(written, folder, 2, [])
    paths = [str(folder / name) for name in sorted(os.listdir(folder))]
    with pytest.raises(KeyboardInterrupt):
        with ForkedReads(_tasks_noting(paths), _two_readers(pid_noting_hang), 64):
            deadline = time.monotonic() + 30
            while time.monotonic() < deadline and not all(os.path.exists(f"{path}.pid") for path in paths):
                time.sleep(0.02)
            raise KeyboardInterrupt  # as Ctrl-C would, while both workers hang
    pids = [int(open(f"{path}.pid", encoding="ascii").read()) for path in paths]
    alive = []
    for pid in pids:
        try:
            os.kill(pid, 0)
            alive.append(pid)
        except ProcessLookupError:
            pass
    for pid in alive:  # (so that a failure leaves no hanging process holding the test run's output)
        os.kill(pid, 9)
    assert len(set(pids)) == 2 and alive == []


@READERS
def test_the_pool_replaces_dead_workers_and_answers_every_task(tmp_path, written, reader):
    folder = tmp_path / "pool"
    # "H_segv" comes after 30 good files in the same batch: their answers, read but not yet
    # sent, die with the worker and must be read again, once.
    bad = [f"C{n}_segv.JPG" for n in range(5)] + ["H_segv.JPG"]
    _card(written, folder, 30, bad)
    tasks = [(str(folder / name), None) for name in sorted(os.listdir(folder))]
    for depth in (4, 64, 128):
        with ReaderPool(reader, 2, depth=depth) as pool:
            with BackgroundReads(pool, tasks) as reads:
                results = list(reads)
            assert pool.replaced == 6
        assert sorted(result.path for result in results) == sorted(path for path, _ in tasks)
        crashed = [os.path.basename(r.path) for r in results if getattr(r, "reason", None) == CRASHED]
        assert sorted(crashed) == sorted(bad)


@pytest.mark.parametrize("stages", [False, True], ids=["file by file", "stages"])
def test_a_record_read_in_a_worker_arrives_as_it_was_read(tmp_path, written, stages):
    # Records cross the pipe as tuples of their values (workers._packed): what arrives must
    # equal what the reader made, field for field, with its warnings and a damaged file's
    # reason; read stage by stage (as the ingest reads), the same as file by file.
    from sharpzone.ingest.capture import read_capture
    from sharpzone.ingest.pipeline import READER
    from sharpzone.ingest.records import CaptureRecord, ReadProblem

    folder = tmp_path / "same"
    _card(written, folder, 6, [])
    written("broken.JPG", b"\xff\xd8\xff\xe1\x00\x10Exif\x00\x00II*\x00", folder)
    written("empty.JPG", b"", folder)
    written("notes.JPG", b"not a picture at all", folder)
    written("no-exif.JPG", b"\xff\xd8\xff\xd9", folder)
    # Shaped as cameras write them: maker-note brackets (libexiv2 writes the fields), a raw
    # container, a raw file carrying only an embedded JPEG, and a directory that loops.
    written("canon.JPG", makernotes.makernote_jpeg(makernotes.CANON, {
        "Exif.CanonFi.FocusDistanceUpper": "250", "Exif.CanonFi.FocusDistanceLower": "240"}), folder)
    written("nikon.JPG", makernotes.makernote_jpeg(makernotes.NIKON, makernotes.nikon_lens_data("0204", 80)), folder)
    written("raw.CR3", makernotes.cr3(220, 200), folder)
    written("embedded.NEF", raw_with_embedded_jpeg(jpeg(exif_block(subject_distance=(3000, 1000)))), folder)
    written("loop.TIF", tiff_with_ifd_loop(), folder)
    tasks = [(str(folder / name), 2500.0 if name == "G001.JPG" else None) for name in sorted(os.listdir(folder))]
    with ReaderPool(READER if stages else read_capture, 2) as pool:
        arrived = {result.path: result for result in pool.read(tasks)}
    expected = {path: read_capture(path, user_mm) for path, user_mm in tasks}
    assert arrived == expected
    records = {os.path.basename(path) for path, result in arrived.items() if isinstance(result, CaptureRecord)}
    assert records == {f"G{n:03d}.JPG" for n in range(6)} | {"no-exif.JPG", "canon.JPG", "nikon.JPG", "raw.CR3",
                                                             "embedded.NEF", "loop.TIF"}  # no-exif.JPG: a frame
    assert (arrived[str(folder / "canon.JPG")].focus_near_mm, arrived[str(folder / "canon.JPG")].focus_far_mm) == (
        2400, 2500)  # the maker's bracket, as libexiv2 prints it (2.40 m / 2.50 m)
    assert isinstance(arrived[str(folder / "broken.JPG")], ReadProblem)
    assert (arrived[str(folder / "empty.JPG")].reason, arrived[str(folder / "notes.JPG")].reason) == (
        "empty file", "not an image")
    assert arrived[str(folder / "G001.JPG")].focus_source == "user"


def test_a_first_ingest_through_its_own_reading_process_files_what_the_thread_files(tmp_path, written):
    """Files shaped as cameras write them (maker-note brackets written by libexiv2, a raw
    container, a raw file carrying only an embedded JPEG, a directory that loops, damaged and
    empty files, a contradictory distance): the frames and problems a first ingest files
    through the process that drives its readers (``pipeline._EarlyReads``, the catalogue
    given by its place) are, column for column, those it files with the catalogue open
    first, whose readers a thread drives."""
    from sharpzone.catalog.location import sqlite_url
    from sharpzone.ingest import pipeline

    folder = tmp_path / "camera"
    written("canon.JPG", makernotes.makernote_jpeg(makernotes.CANON, {
        "Exif.CanonFi.FocusDistanceUpper": "250", "Exif.CanonFi.FocusDistanceLower": "240"}), folder)
    written("nikon.JPG", makernotes.makernote_jpeg(makernotes.NIKON, makernotes.nikon_lens_data("0204", 80)), folder)
    written("contradicts.JPG", makernotes.makernote_jpeg(makernotes.CANON, {
        "Exif.CanonFi.FocusDistanceUpper": "900", "Exif.CanonFi.FocusDistanceLower": "880"},
        exif=exif_block(subject_distance=(1500, 1000))), folder)
    written("raw.CR3", makernotes.cr3(220, 200), folder)
    written("embedded.NEF", raw_with_embedded_jpeg(jpeg(exif_block(subject_distance=(3000, 1000)))), folder)
    written("loop.TIF", tiff_with_ifd_loop(), folder)
    written("broken.JPG", b"\xff\xd8\xff\xe1\x00\x10Exif\x00\x00II*\x00", folder)
    written("empty.JPG", b"", folder)
    _card(written, folder, 70, [])  # enough files for two readers

    early = []
    original = pipeline._EarlyReads.hand_over
    pipeline._EarlyReads.hand_over = lambda self, plan: (early.append(plan), original(self, plan))[1]
    try:
        forked = ingest_paths(str(tmp_path / "forked.sqlite"), [folder], shoot="Card", jobs=2)
    finally:
        pipeline._EarlyReads.hand_over = original
    with open_catalog(sqlite_url(tmp_path / "thread.sqlite")) as catalog:
        threaded = ingest_paths(catalog, [folder], shoot="Card", jobs=2)
    assert len(early) == 1
    assert (forked.added, sorted(forked.failed), forked.warnings, forked.registered) == (
        threaded.added, sorted(threaded.failed), threaded.warnings, threaded.registered)

    def filed(name):
        skip = {"id", "shoot_id", "body_id", "lens_id"}
        with session_scope(sqlite_url(tmp_path / name)) as session:
            frames = sorted(({key: value for key, value in vars(frame).items()
                              if not key.startswith("_") and key not in skip} for frame in session.query(Frame)),
                            key=lambda frame: frame["path"])
            problems = sorted((problem.path, problem.reason) for problem in session.query(IngestProblem))
        return frames, problems

    assert filed("forked.sqlite") == filed("thread.sqlite")
    assert forked.added == 76 and len(forked.failed) == 2


def test_the_ingest_reads_in_every_stage_of_read_capture():
    from sharpzone.ingest.capture import STAGES
    from sharpzone.ingest.pipeline import READER

    assert len(READER) == len(STAGES)


def test_the_time_limit_is_for_a_file_not_for_a_batch_going_through_a_stage(tmp_path, written):
    folder = tmp_path / "slow"
    _card(written, folder, 12, [])
    tasks = [(str(folder / name), None) for name in sorted(os.listdir(folder))]
    with ReaderPool(SLOW_STAGES, 1, time_limit_s=1.0) as pool:  # 12 files: 1.8 s through the first stage
        results = list(pool.read(tasks))
    assert [getattr(result, "reason", None) for result in results] == [None] * 12
    assert pool.replaced == 0
