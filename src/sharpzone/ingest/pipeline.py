"""Ingest a shoot: scan → read (worker processes) → match → persist (batched, one process).

Every stage is a small function over plain values; the run keeps going past any file that
cannot be read and records why. Each batch is one transaction, so a run killed at any point
leaves the catalogue consistent and a rerun finishes the job (unchanged files — same path,
size and modification time — are not reopened). Image files are only ever opened for reading.
"""

from __future__ import annotations

import contextlib
import functools
import itertools
import math
import os
import signal
import threading
import time
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from sharpzone.collector import existing_objects_frozen
from sharpzone.errors import Conflict, Interrupted, InvalidValue
from sharpzone.ingest.distances import lookup_user_distance, read_user_distances
from sharpzone.ingest.records import CaptureRecord, ReadProblem, printable_path
from sharpzone.ingest.scan import CandidateFile, iter_scan
from sharpzone.ingest.workers import (TIME_LIMIT_S, BackgroundReads, ForkedReads, Reader, ReaderPool, can_fork,
                                      unpacked_answer)

if TYPE_CHECKING:
    from sqlalchemy.orm import Session

    from sharpzone.catalog.engine import Catalog

BATCH_SIZE = 500
# Below this many files to read, one worker process does (more cost more than they save).
POOL_THRESHOLD = 64
# Files read between progress reports: a terminal's progress bar costs about as much CPU
# per update as writing a frame, and moves smoothly enough at this step.
PROGRESS_EVERY = 32
# Files handed to the readers as the folder walk finds them; the walk is then finished
# before the rest go out, so the progress bar knows its total after about this many files
# (a walk costs about 7 µs a file here, the readers' first fill keeps them busy meanwhile).
WALK_AHEAD_AFTER = 256
# How much the readers of a first ingest (``_EarlyReads``) yield the cores to the process
# that writes, which is what the ingest waits for (``os.nice``; 3 gives it about twice the
# share of each reader; on 2 cores, a first ingest of 5,000 files took 9 % less time).
READERS_NICENESS = 3
# The focus key stored for a distance the user gave in a distances CSV.
USER_DISTANCES_KEY = "user distances CSV"

ProgressCallback = Callable[[str, int, int | None], None]



@dataclass
class IngestSummary:
    """What an ingest did. ``failed``/``vanished`` hold printable paths (and reasons).

    ``elsewhere`` counts files found that belong to another shoot and were left there (by
    shoot name); ``moved`` counts frames moved into this shoot by an explicit ``--shoot`` (by
    the shoot they came from). ``needs_format`` names the bodies of these frames whose sensor
    format is still unknown (their frames are judged once it is set).
    """

    shoot: str
    added: int = 0
    updated: int = 0
    unchanged: int = 0
    ignored: int = 0
    failed: list[tuple[str, str]] = field(default_factory=list)
    vanished: list[str] = field(default_factory=list)
    pruned: int = 0
    warnings: int = 0
    registered: list[str] = field(default_factory=list)
    elsewhere: dict[str, int] = field(default_factory=dict)
    moved: dict[str, int] = field(default_factory=dict)
    needs_format: list[str] = field(default_factory=list)
    shoot_created: bool = False
    seconds: float = 0.0

    @property
    def read(self) -> int:
        return self.added + self.updated

    @property
    def saved(self) -> int:
        """Frames written to the catalogue by this run (added or updated)."""
        return self.added + self.updated


@dataclass(frozen=True)
class _Stored:
    size: int
    mtime_ns: int
    focus_mm: float | None
    focus_source: str
    shoot_id: int | None
    device: int | None
    inode: int | None


def _stored_frames(session: Session, roots: Sequence[str]) -> dict[str, _Stored]:
    """Frames already catalogued under ``roots`` (folders or files), by path."""
    from sqlalchemy import or_

    from sharpzone.catalog.models import Frame

    conditions = []
    for root in roots:
        conditions.append(Frame.path == root)
        conditions.append(Frame.path.startswith(root.rstrip(os.sep) + os.sep, autoescape=True))
    return _stored_where(session, or_(*conditions))


def _stored_where(session: Session, condition) -> dict[str, _Stored]:
    from sqlalchemy import select

    from sharpzone.catalog.models import Frame

    rows = session.execute(
        select(Frame.path, Frame.file_size, Frame.file_mtime_ns, Frame.focus_mm, Frame.focus_source, Frame.shoot_id,
               Frame.device, Frame.inode).where(condition))
    return {path: _Stored(*values) for path, *values in rows}


def _shoot_names(session: Session) -> dict[int, str]:
    from sqlalchemy import select

    from sharpzone.catalog.models import Shoot

    return dict(session.execute(select(Shoot.id, Shoot.name)).all())


class _Target:
    """The shoot frames are filed under, created only when the first frame is written (an
    empty folder or a folder of non-images creates no shoot)."""

    def __init__(self, name: str, root: str, shoot_id: int | None, explicit: bool) -> None:
        self.name, self.root, self.id, self.explicit = name, root, shoot_id, explicit
        self.created = False

    def ensure(self, session: Session) -> int:
        from sharpzone.catalog.models import Shoot
        from sharpzone.catalog.service import add_shoot
        from sharpzone.catalog.service.common import find_by_name

        if self.id is None:
            shoot = find_by_name(session, Shoot, self.name)
            if shoot is None:
                shoot = add_shoot(session, self.name, root_folder=self.root)
                self.created = True
            self.id = shoot.id
        return self.id


class _CaptureStage:
    """Stage ``number`` of ``ingest.capture.STAGES``, imported in the worker that first runs
    it: the process that writes never reads a file, so it need not load the readers (about
    20 ms before the workers could start)."""

    def __init__(self, number: int) -> None:
        self.number = number
        self._stage = None  # found at the first call (an import statement per file cost ~1 µs)

    def __call__(self, *args):
        stage = self._stage
        if stage is None:
            from sharpzone.ingest.capture import STAGES

            stage = self._stage = STAGES[self.number]
        return stage(*args)


# The ingest's reader: ``ingest.capture.read_capture`` in its three stages, which the
# workers take many files through stage by stage (a test holds the count to ``STAGES``).
READER = tuple(_CaptureStage(number) for number in range(3))


def _pool_for(head: list, jobs: int, reader: Reader, time_limit_s: float) -> ReaderPool:
    """The readers for a run whose first tasks are ``head``: ``jobs`` of them, or one for a
    run shorter than ``POOL_THRESHOLD``."""
    return ReaderPool(reader, jobs if len(head) >= POOL_THRESHOLD else 1, time_limit_s=time_limit_s)


class _Reads:
    """Files being read in contained worker processes (see ``ingest.workers``), started at
    once: the reading goes on in the background while the caller does other work. Iterate
    for the results (in any order); as a context manager, leaving stops the readers (at
    once after an error or an interrupt).

    ``tasks`` may be a generator (the scan): it is drawn from as workers have room, so
    walking the folders overlaps with reading.
    """

    def __init__(self, tasks: Iterable[tuple[str, float | None]], jobs: int, reader: Reader,
                 time_limit_s: float) -> None:
        tasks = iter(tasks)
        head = list(itertools.islice(tasks, POOL_THRESHOLD))
        self._stack = contextlib.ExitStack()
        self._results: Iterable[CaptureRecord | ReadProblem] = ()
        if not head:
            return
        try:
            pool = self._stack.enter_context(_pool_for(head, jobs, reader, time_limit_s))
            self._results = self._stack.enter_context(BackgroundReads(pool, itertools.chain(head, tasks)))
        except BaseException:
            self._stack.close()
            raise

    def __iter__(self) -> Iterator[CaptureRecord | ReadProblem]:
        return iter(self._results)

    def __enter__(self) -> _Reads:
        return self

    def __exit__(self, *exc_info) -> None:
        self._stack.__exit__(*exc_info)


# The frame columns an ingest writes, in the order ``_frame_values`` gives them (the
# table's own, so the values go to the database as they are).
FRAME_COLUMNS = (
    "shoot_id", "path", "file_size", "file_mtime_ns", "captured_at", "utc_offset_minutes", "body_id", "lens_id",
    "focal_mm", "f_number", "exposure_s", "iso", "focus_mm", "focus_source", "focus_near_mm", "focus_far_mm",
    "focus_key", "subject_distance_range", "focus_point_x", "focus_point_y", "focus_point_w", "focus_point_h",
    "focus_point_key", "device", "inode", "focal_35mm_mm", "width_px", "height_px", "exif_make", "exif_model",
    "exif_lens_model", "warnings",
)
_PATH, _DEVICE, _INODE, _WARNINGS = (FRAME_COLUMNS.index(name) for name in ("path", "device", "inode", "warnings"))
_NO_POINT = (None, None, None, None)


def _frame_values(record: CaptureRecord, candidate: CandidateFile, shown: str, shoot_id: int | None, body_id,
                  lens_id, warnings: list[str], checked: Callable[[list, list[str]], list]) -> list:
    """The frame row of ``record`` (at ``shown``, the printable form of its path) as values
    of ``FRAME_COLUMNS``, each value that breaks a catalogue rule dropped with a warning by
    ``checked`` (``catalog.rules.frame_values_checker(FRAME_COLUMNS)``)."""
    near, far, key = record.focus_near_mm, record.focus_far_mm, record.focus_key
    if record.focus_source == "user":
        near = far = record.focus_mm
        key = USER_DISTANCES_KEY
    elif record.focus_mm is not None and near is None and far is None:
        near = far = record.focus_mm  # a reader that gives no bracket gives an exact distance
    point = record.focus_point or _NO_POINT
    values = checked([
        shoot_id, shown, candidate.size, candidate.mtime_ns, record.captured_at,
        record.utc_offset_minutes, body_id, lens_id, record.focal_mm, record.f_number, record.exposure_s,
        record.iso, record.focus_mm, record.focus_source, near, far, key, record.subject_distance_range,
        point[0], point[1], point[2], point[3], record.focus_point_key if record.focus_point else None,
        candidate.device, candidate.inode, record.focal_35mm_mm, record.width_px, record.height_px,
        record.exif_make, record.exif_model, record.lens_model, None,
    ], warnings)
    values[_WARNINGS] = "; ".join(warnings) or None
    return values


def _same_file(path: str, file_id: tuple[int, int]) -> bool:
    """Whether ``path`` (printable form) still names the file ``(device, inode)``."""
    try:
        info = os.stat(path)  # an undecodable name shows escaped and is taken for gone
    except (OSError, UnicodeError, ValueError):
        return False
    return (info.st_dev, info.st_ino) == file_id


def _known_by_inode(session: Session, rows: list[list]) -> dict[tuple[int, int], tuple[int, str]]:
    """Catalogued frames sharing a (device, inode) with ``rows`` under another path: one
    query per device (a card is one), on the (device, inode) index."""
    from sqlalchemy import select

    from sharpzone.catalog.models import Frame

    ids = {(row[_DEVICE], row[_INODE]): row[_PATH] for row in rows if row[_DEVICE] is not None}
    by_device: dict[int, list[int]] = {}
    for device, inode in ids:
        by_device.setdefault(device, []).append(inode)
    known = {}
    connection = session.connection()
    for device, inodes in by_device.items():
        if connection.dialect.name == "sqlite":  # written for sqlite3 itself: SQLAlchemy's
            # expansion of a 500-value IN list costs more than the look-up
            found = connection.exec_driver_sql(
                f"SELECT id, path, inode FROM frame WHERE device = ? AND inode IN ({', '.join('?' * len(inodes))})",
                (device, *inodes))
        else:
            found = session.execute(select(Frame.id, Frame.path, Frame.inode)
                                    .where(Frame.device == device, Frame.inode.in_(inodes)))
        known.update({(device, inode): (frame_id, path) for frame_id, path, inode in found
                      if ids.get((device, inode)) != path})
    return known


@contextlib.contextmanager
def _signals_held():
    """Ctrl-C and SIGTERM wait until the block is over (then act as usual), so a batch that
    the database committed is always counted in what the interrupted run says it saved."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    pending: list[int] = []
    previous = {number: signal.signal(number, lambda received, frame: pending.append(received))
                for number in (signal.SIGINT, signal.SIGTERM)}
    try:
        yield
    finally:
        for number, handler in previous.items():
            signal.signal(number, handler)
        if signal.SIGINT in pending:
            raise KeyboardInterrupt
        if signal.SIGTERM in pending:
            raise _Stop()


def _persist_batch(catalog: Catalog, batch: list[tuple[CaptureRecord | ReadProblem, CandidateFile, str]],
                   target: _Target, stored: dict[str, _Stored], matcher_factory, summary: IngestSummary,
                   found: set[str] | None = None) -> None:
    """Write one batch of read results (each with its scan entry and printable path) in one
    transaction (retried once if a concurrent run registered the same body, lens or shoot
    first); an interrupt waits for it (see ``_signals_held``)."""
    with _signals_held():
        _write_batch(catalog, batch, target, stored, matcher_factory, summary, found)


def _write_batch(catalog: Catalog, batch: list[tuple[CaptureRecord | ReadProblem, CandidateFile, str]],
                 target: _Target, stored: dict[str, _Stored], matcher_factory, summary: IngestSummary,
                 found: set[str] | None) -> None:
    from sqlalchemy import delete, select, update

    from sharpzone.catalog.models import Frame, IngestProblem
    from sharpzone.catalog.rules import frame_values_checker
    from sharpzone.catalog.upsert import upsert_values

    checked = frame_values_checker(FRAME_COLUMNS)
    for attempt in range(2):
        added = updated = warnings = duplicates = 0
        failed: list[tuple[str, str]] = []
        registered: list[str] = []
        needs_format: list[str] = []
        created_id = target.id
        memory = None
        try:
            with catalog.session_scope(write=True) as session:
                matcher = matcher_factory(session)
                memory = getattr(matcher, "memory", None)  # what the run's matcher keeps between batches
                rows, problem_rows, read_ok = [], [], []
                shoot_id = None  # the target shoot, made when the first frame needs it
                for result, candidate, shown in batch:
                    if isinstance(result, ReadProblem):
                        failed.append((shown, result.reason))
                        problem_rows.append({"shoot_id": target.id, "path": shown, "reason": result.reason})
                        continue
                    outcome = matcher.match(result)
                    if outcome.registered:
                        registered.extend(outcome.registered)
                    if outcome.needs_format:
                        needs_format.extend(outcome.needs_format)
                    notes = [*result.warnings, *outcome.warnings]
                    warnings += len(notes)
                    before = stored.get(shown)
                    keep = before.shoot_id if before is not None and not target.explicit else None
                    if keep is None and shoot_id is None:
                        shoot_id = target.ensure(session)
                    rows.append(_frame_values(result, candidate, shown, shoot_id if keep is None else keep,
                                              outcome.body_id, outcome.lens_id, notes, checked))
                    read_ok.append(shown)
                if memory is not None:
                    matcher.finish()
                # One file reached by a new path (a hard link, or renamed): the frame that
                # still has the file keeps it; a frame whose path is gone follows the file.
                known = _known_by_inode(session, rows)
                if known:
                    kept = []
                    for row in rows:
                        match = known.get((row[_DEVICE], row[_INODE]))
                        if match is None:
                            kept.append(row)
                            continue
                        if found is not None:
                            found.add(match[1])  # its old path is accounted for, not vanished
                        if _same_file(match[1], (row[_DEVICE], row[_INODE])):
                            duplicates += 1
                        else:
                            session.execute(update(Frame).where(Frame.id == match[0]).values(path=row[_PATH]))
                            kept.append(row)
                    rows = kept
                # The database says which rows were new: exact even while another run
                # ingests the same files into a shared catalogue.
                rows.sort(key=lambda row: row[_PATH])  # one lock order for concurrent runs
                written = upsert_values(session, Frame, FRAME_COLUMNS, rows, ["path"])
                added, updated = written.inserted, written.updated
                touched = read_ok + [path for path, _ in failed]
                # (An empty problem table, as after most runs, needs no delete by 500 paths.)
                if touched and session.execute(select(IngestProblem.id).limit(1)).first() is not None:
                    session.execute(delete(IngestProblem).where(IngestProblem.path.in_(touched)))
                if problem_rows:
                    session.execute(IngestProblem.__table__.insert(), problem_rows)
            if memory is not None:
                memory.commit()
            break
        except Conflict:
            target.id = created_id
            if memory is not None:
                memory.clear()
            if attempt:
                raise
        except BaseException:
            target.id, target.created = created_id, target.created and created_id is not None
            if memory is not None:
                memory.discard()
            raise
    summary.added += added
    summary.updated += updated
    summary.unchanged += duplicates
    summary.warnings += warnings
    summary.failed.extend(failed)
    summary.registered.extend(registered)
    summary.needs_format.extend(name for name in needs_format if name not in summary.needs_format)


def _update_user_distances(catalog: Catalog, changes: list[tuple[str, float]]) -> None:
    """Unchanged files whose user-given distance changed: update without reopening them."""
    from sqlalchemy import update

    from sharpzone.catalog.models import Frame

    with catalog.session_scope(write=True) as session:
        for path, distance in changes:
            session.execute(update(Frame).where(Frame.path == path).values(
                focus_mm=distance, focus_source="user", focus_near_mm=distance, focus_far_mm=distance,
                focus_key=USER_DISTANCES_KEY))


def _still_without_format(catalog: Catalog, names: list[str], shoot_id: int | None) -> list[str]:
    """The bodies that still have no sensor format: those of ``names`` (met in this run; a
    later frame may have told it) in the order given, then any other body of the shoot's
    frames, so a rerun over unchanged files still says what keeps its frames unjudged."""
    from sqlalchemy import or_, select

    from sharpzone.catalog.models import Body, Frame

    in_shoot = Body.id.in_(select(Frame.body_id).where(Frame.shoot_id == shoot_id)) if shoot_id is not None else None
    wanted = Body.name.in_(names) if in_shoot is None else or_(Body.name.in_(names), in_shoot)
    with catalog.session_scope() as session:
        missing = sorted(session.scalars(select(Body.name).where(wanted, Body.format_id.is_(None))))
    return [name for name in names if name in missing] + [name for name in missing if name not in names]


def _move_frames(catalog: Catalog, paths: list[str], target: _Target) -> None:
    """File unchanged frames under the shoot named with an explicit ``--shoot``."""
    from sqlalchemy import update

    from sharpzone.catalog.models import Frame

    with catalog.session_scope(write=True) as session:
        shoot_id = target.ensure(session)
        for start in range(0, len(paths), 500):
            session.execute(update(Frame).where(Frame.path.in_(paths[start:start + 500])).values(shoot_id=shoot_id))


def default_shoot_name(paths: Sequence[str]) -> str:
    """A shoot named after the first folder given (or the folder of the first file)."""
    first = os.path.abspath(paths[0])
    folder = first if os.path.isdir(first) else os.path.dirname(first)
    return os.path.basename(folder.rstrip(os.sep)) or folder


class _Stop(BaseException):
    """SIGTERM during an ingest, raised in the main thread to stop it in order."""


def _on_sigterm(signal_number, frame) -> None:
    raise _Stop()


def ingest_paths(
    catalog: Catalog | str | os.PathLike | None,
    paths: Sequence[str | os.PathLike],
    *,
    shoot: str | None = None,
    jobs: int | None = None,
    distances_csv: str | os.PathLike | None = None,
    prune: bool = False,
    batch_size: int | None = None,
    progress: ProgressCallback | None = None,
    matcher_factory=None,
    reader: Reader | None = None,
    time_limit_s: float | None = None,
) -> IngestSummary:
    """Ingest the image files under ``paths`` into ``catalog`` as shoot ``shoot``.

    ``catalog`` is an open ``Catalog``, or where one is (a file path or URL; ``None``:
    ``SHARPZONE_CATALOG`` or the default file), which is then opened as ``open_catalog``
    opens it: created at the newest schema if new, upgraded if older (what ``sharpzone
    ingest`` does). Opened here, a catalogue that cannot hold any of these files yet (a
    SQLite catalogue that is new, or holds no frame under ``paths``:
    ``catalog.peek.may_hold_frames_under``) has the readers start on the files while it
    opens, which takes a few tenths of a second; elsewhere (a rescan, a server database) it
    is opened first, so no unchanged file is read.

    Without ``shoot``, new frames join the shoot that the frames already catalogued under
    ``paths`` belong to, else a shoot named after the first folder; frames of other shoots
    stay where they are (``IngestSummary.elsewhere`` says which). With ``shoot``, every
    frame found is filed under it (``moved``). A shoot is created only when a frame is
    written. ``jobs`` worker processes read the files (default: one per core), each file
    within ``time_limit_s`` seconds (default 30; in stages, each stage of it); ``reader``
    (a function of the path and the user's distance) replaces ``ingest.capture.read_capture``,
    which is otherwise run in its stages (tests inject readers that crash or hang).
    ``distances_csv`` gives focus distances that win over EXIF; ``prune`` removes frames
    whose files vanished. ``progress(stage, done, total)`` is called as work proceeds
    (every ``PROGRESS_EVERY`` files read, and at the end).

    Ctrl-C or SIGTERM stops the run in order: workers are shut down, finished batches are
    kept, and ``Interrupted`` says how many frames were saved (exit code 130 / 143).
    """
    from sharpzone.catalog.engine import Catalog, open_catalog

    if isinstance(catalog, Catalog):
        opening, read_early = contextlib.nullcontext(catalog), None
    else:
        from sharpzone.catalog.location import resolve_catalog_url
        from sharpzone.catalog.migrate import head_revision
        from sharpzone.catalog.peek import may_hold_frames_under

        url = resolve_catalog_url(catalog)
        opening = open_catalog(catalog)

        def read_early(roots: list[str]) -> bool:
            return not may_hold_frames_under(url, roots, head_revision())

    return _ingest(opening, read_early, paths, shoot=shoot, jobs=jobs, distances_csv=distances_csv, prune=prune,
                   batch_size=batch_size, progress=progress, matcher_factory=matcher_factory, reader=reader,
                   time_limit_s=time_limit_s)


def _ingest(opening: contextlib.AbstractContextManager[Catalog], read_early: Callable[[list[str]], bool] | None,
            paths: Sequence[str | os.PathLike], *, shoot: str | None, jobs: int | None,
            distances_csv: str | os.PathLike | None, prune: bool, batch_size: int | None,
            progress: ProgressCallback | None, matcher_factory, reader: Reader | None,
            time_limit_s: float | None) -> IngestSummary:
    """The ingest, with the catalogue opened by ``opening``; ``read_early(roots)`` says
    whether the readers may start before it is open (nothing under ``roots`` is catalogued)."""
    from sharpzone.ingest.match import CatalogMatcher, MatchMemory

    started = time.perf_counter()
    if not paths:
        raise InvalidValue("ingest needs at least one file or folder")
    if jobs is not None and jobs < 1:
        raise InvalidValue(f"--jobs {jobs} is not valid: expected 1 or more")
    jobs = jobs or os.cpu_count() or 1
    batch_size = batch_size or BATCH_SIZE
    matcher_factory = matcher_factory or functools.partial(CatalogMatcher, memory=MatchMemory())
    reader = reader or READER
    time_limit_s = time_limit_s or TIME_LIMIT_S
    given = [os.path.abspath(os.fsdecode(p)) for p in paths]
    existing = [path for path in given if os.path.lexists(path)]
    if not existing:
        shown = ", ".join(printable_path(path) for path in given)
        raise InvalidValue(f"nothing to ingest: {shown} does not exist" if len(given) == 1
                           else f"nothing to ingest: none of {shown} exists")
    roots = [os.path.realpath(path) for path in given]
    shown_roots = [printable_path(r) for r in roots]
    user_distances = read_user_distances(distances_csv) if distances_csv else {}
    notify = progress or (lambda stage, done, total: None)

    summary = None
    restore = None
    if threading.current_thread() is threading.main_thread():
        restore = signal.signal(signal.SIGTERM, _on_sigterm)
    try:
        with contextlib.ExitStack() as stack:
            ahead = None
            if read_early is not None and can_fork() and read_early(shown_roots):
                ahead = stack.enter_context(_EarlyReads(roots, user_distances, jobs, reader, time_limit_s))
            catalog = stack.enter_context(opening)
            with catalog.session_scope() as session:
                stored = _stored_frames(session, shown_roots)
                shoot_names = _shoot_names(session)
            target = _choose_target(shoot, existing, roots[0], stored, shoot_names)
            summary = IngestSummary(shoot=target.name)
            plan = _ReadPlan(catalog, roots, stored, user_distances, summary)
            if ahead is not None:
                reads = ahead.hand_over(plan)
            else:
                reads = stack.enter_context(_Reads(plan.files_to_read(iter_scan(roots, sniff=False)), jobs, reader,
                                                   time_limit_s))
            # What is alive now (the frames known too) stays out of the collections the run's
            # many short-lived objects set off.
            with existing_objects_frozen():
                _run(catalog, plan, reads, target, stored, summary, batch_size, matcher_factory, notify, prune,
                     shoot_names)
    except KeyboardInterrupt:
        raise _interrupted(summary, signal.SIGINT) from None
    except _Stop:
        raise _interrupted(summary, signal.SIGTERM) from None
    finally:
        if restore is not None:
            signal.signal(signal.SIGTERM, restore)
    summary.shoot_created = target.created
    summary.seconds = time.perf_counter() - started
    return summary


def _interrupted(summary: IngestSummary | None, signal_number: int) -> Interrupted:
    saved = summary.saved if summary is not None else 0
    frames = "1 frame" if saved == 1 else f"{saved:,} frames"
    return Interrupted(f"interrupted: {frames} saved; rerun the same command to finish",
                       signal_number=signal_number)


def _choose_target(shoot: str | None, existing: list[str], root: str, stored: dict[str, _Stored],
                   shoot_names: dict[int, str]) -> _Target:
    if shoot is not None:
        # Shoot names are matched ignoring case, as the catalogue does.
        known = [key for key, name in shoot_names.items() if name.casefold() == shoot.strip().casefold()]
        return _Target(shoot_names[known[0]] if known else shoot, root, known[0] if known else None, explicit=True)
    counts: dict[int, int] = {}
    for before in stored.values():
        if before.shoot_id is not None:
            counts[before.shoot_id] = counts.get(before.shoot_id, 0) + 1
    if counts:
        shoot_id = max(counts, key=lambda key: (counts[key], -key))
        return _Target(shoot_names[shoot_id], root, shoot_id, explicit=False)
    return _Target(default_shoot_name(existing), root, None, explicit=False)


def _run(catalog, plan, reads, target, stored, summary, batch_size, matcher_factory, notify, prune,
         shoot_names) -> None:
    """read → match → persist: the scan feeds the readers as it walks (``reads``), and
    results are written in batches as they come back."""
    by_path: dict[str, tuple[CandidateFile, str]] = plan.by_path
    batch: list[tuple[CaptureRecord | ReadProblem, CandidateFile, str]] = []
    done = 0
    for result in reads:
        entry = by_path.get(result.path)
        if entry is None:
            continue  # read before the catalogue was open, and found unchanged there
        batch.append((result, *entry))
        done += 1
        if len(batch) >= batch_size:
            _persist_batch(catalog, batch, target, stored, matcher_factory, summary, plan.found)
            batch = []
        if not done % PROGRESS_EVERY:
            notify("read", done, plan.total_to_read)
    if done % PROGRESS_EVERY:
        notify("read", done, plan.total_to_read)
    if batch:
        _persist_batch(catalog, batch, target, stored, matcher_factory, summary, plan.found)
    if plan.scan_problems:
        _persist_batch(catalog, [(problem, CandidateFile(problem.path, 0, 0, ""), problem.printable_path)
                                 for problem in plan.scan_problems],
                       target, stored, matcher_factory, summary)
    if plan.distance_changes:
        _update_user_distances(catalog, plan.distance_changes)
        summary.unchanged -= len(plan.distance_changes)
        summary.updated += len(plan.distance_changes)
    _file_elsewhere(catalog, plan, target, summary, shoot_names)
    if summary.needs_format or target.id is not None:
        summary.needs_format = _still_without_format(catalog, summary.needs_format, target.id)

    found = plan.found
    found.update(printable_path(problem.path) for problem in plan.scan_problems)
    summary.vanished = sorted(path for path in stored if path not in found)
    if prune and summary.vanished:
        summary.pruned = _prune(catalog, summary.vanished)


def _file_elsewhere(catalog: Catalog, plan: _ReadPlan, target: _Target, summary: IngestSummary,
                    shoot_names: dict[int, str]) -> None:
    """Frames found that belong to other shoots: moved with an explicit ``--shoot`` (the
    re-read ones already were, by their batch), else left there and named."""
    others: dict[int, list[str]] = {}
    for path in plan.known_paths:
        shoot_id = plan.stored[path].shoot_id
        if shoot_id is not None and shoot_id != target.id:
            others.setdefault(shoot_id, []).append(path)
    if not others:
        return
    if target.explicit:
        _move_frames(catalog, [path for paths in others.values() for path in paths], target)
        summary.moved = {shoot_names.get(key, "?"): len(paths) for key, paths in others.items() if key != target.id}
    else:
        summary.elsewhere = {shoot_names.get(key, "?"): len(paths) for key, paths in others.items()}


class _ReadPlan:
    """Walks the roots and decides, file by file, what must be read: new and changed files
    (same path, size and modification time = unchanged, not reopened). A file catalogued
    under another path that still names it (a hard link, a second route) counts once."""

    def __init__(self, catalog: Catalog, roots, stored: dict[str, _Stored], user_distances: dict[str, float],
                 summary: IngestSummary) -> None:
        self.catalog = catalog
        self.roots = roots
        self.stored = stored
        self.by_inode = {(s.device, s.inode): path for path, s in stored.items() if s.device is not None}
        self.user_distances = user_distances
        self.summary = summary
        # Each file to read: its scan entry and its path in printable form.
        self.by_path: dict[str, tuple[CandidateFile, str]] = {}
        self.found: set[str] = set()
        self.known_paths: list[str] = []
        self.scan_problems: list[ReadProblem] = []
        self.distance_changes: list[tuple[str, float]] = []
        self.total_to_read: int | None = None
        self.to_read = 0  # files found that must be read
        self._prefixes = tuple(printable_path(root).rstrip(os.sep) + os.sep for root in roots)

    def _lookup(self, shown: str, candidate: CandidateFile) -> tuple[str, _Stored | None]:
        """The catalogued frame of this file: by its path, else by (device, inode) under
        another path that still names it; else, for a file outside the folders (reached by
        a file link), by its path in the catalogue."""
        before = self.stored.get(shown)
        if before is not None:
            return shown, before
        other = self.by_inode.get(candidate.file_id) if candidate.file_id else None
        if other is not None and _same_file(other, candidate.file_id):
            return other, self.stored[other]
        if not (shown + os.sep).startswith(self._prefixes) and shown not in self._prefixes:
            from sharpzone.catalog.models import Frame

            with self.catalog.session_scope() as session:
                self.stored.update(_stored_where(session, Frame.path == shown))
            return shown, self.stored.get(shown)
        return shown, None

    def consider(self, event) -> tuple[str, float | None] | None:
        """Note one event of the walk; the task (path, user distance) if the file must be read."""
        if isinstance(event, ReadProblem):
            self.scan_problems.append(event)
            return None
        if not isinstance(event, CandidateFile):
            self.summary.ignored += 1
            return None
        printed = printable_path(event.path)
        shown, before = self._lookup(printed, event)
        self.found.add(shown)
        if before is not None:
            self.known_paths.append(shown)
        user_mm = _user_distance(self.user_distances, event.path)
        if before is not None and before.size == event.size and before.mtime_ns == event.mtime_ns:
            self.summary.unchanged += 1
            if user_mm is not None and not (before.focus_source == "user" and _same(before.focus_mm, user_mm)):
                self.distance_changes.append((shown, user_mm))
            return None
        self.by_path[event.path] = (event, printed)
        self.to_read += 1
        return event.path, user_mm

    def files_to_read(self, events: Iterable) -> Iterator[tuple[str, float | None]]:
        """The files to read among the walk's ``events``, as (path, user distance), handed
        out as ``_walked_ahead`` hands them."""
        return _walked_ahead(events, self.consider, self.walk_over)

    def walk_over(self) -> None:
        """The walk has found every file: the total to read is known."""
        self.total_to_read = self.to_read

    def note_walked(self, events: list) -> None:
        """Events of a walk made elsewhere (``_EarlyReads``), in order; ``None`` is its end."""
        for event in events:
            if event is None:
                self.walk_over()
            else:
                self.consider(event)


def _walked_ahead(events: Iterable, task_of: Callable[[object], tuple | None], walked: Callable[[], None]
                  ) -> Iterator[tuple]:
    """The task ``task_of`` gives for each of the walk's ``events`` (``None``: nothing to
    read): up to ``WALK_AHEAD_AFTER`` as the walk finds them, then the walk is finished
    (and ``walked()`` called) before the rest are handed out, so the progress bar has its
    total (and a time left) early on."""
    later: list[tuple] = []
    found = 0
    for event in events:
        task = task_of(event)
        if task is None:
            continue
        found += 1
        if found <= WALK_AHEAD_AFTER:
            yield task
        else:
            later.append(task)
    walked()
    yield from later


class _EarlyReads:
    """The reading started before the catalogue is open, when nothing under the folders is
    catalogued yet (so every file found is read): the folder walk and the readers are
    driven from a process of their own (``workers.ForkedReads``), leaving this one, which
    writes, to open the catalogue and write. The first ``WALK_AHEAD_AFTER`` files go to the
    readers as the walk finds them; the walk is then finished before the rest go out, so
    the progress bar has its total early on. The walk's events come back ahead of the
    answers for their files, and ``hand_over`` names the plan that notes them; files it
    finds unchanged (a file link to a frame catalogued elsewhere) are dropped as they come."""

    def __init__(self, roots: list[str], user_distances: dict[str, float], jobs: int, reader: Reader,
                 time_limit_s: float) -> None:
        self._reads = ForkedReads(functools.partial(_walked_tasks, roots, user_distances),
                                  functools.partial(_pool_for, jobs=jobs, reader=reader, time_limit_s=time_limit_s),
                                  POOL_THRESHOLD, unpacked=unpacked_answer, niceness=READERS_NICENESS)

    def hand_over(self, plan: _ReadPlan) -> Iterator[CaptureRecord | ReadProblem]:
        """The results, in any order, with ``plan`` noting the walk's events as they come."""
        return self._reads.results(plan.note_walked)

    def __enter__(self) -> _EarlyReads:
        return self

    def __exit__(self, *exc_info) -> None:
        self._reads.__exit__(*exc_info)


def _walked_tasks(roots: list[str], user_distances: dict[str, float], note: Callable[[object], None]
                  ) -> Iterator[tuple[str, float | None]]:
    """In ``_EarlyReads``' process: every event of the walk noted (then ``None``, its end),
    and a task (path, user distance) for each file found, handed out as ``_walked_ahead``
    hands them."""
    def task_of(event) -> tuple[str, float | None] | None:
        note(event)
        return (event.path, _user_distance(user_distances, event.path)) if isinstance(event, CandidateFile) else None

    return _walked_ahead(iter_scan(roots, sniff=False), task_of, lambda: note(None))


def _user_distance(user_distances: dict[str, float], path: str) -> float | None:
    """The focus distance the user's CSV gives this file (mm), if any."""
    return lookup_user_distance(user_distances, path) if user_distances else None


def _same(a: float | None, b: float | None) -> bool:
    if a is None or b is None:
        return a is b
    return math.isclose(a, b, rel_tol=1e-12) or (math.isinf(a) and math.isinf(b))


def _prune(catalog: Catalog, paths: Iterable[str]) -> int:
    from sqlalchemy import delete

    from sharpzone.catalog.models import Frame

    paths = list(paths)
    with catalog.session_scope(write=True) as session:
        for start in range(0, len(paths), 500):
            session.execute(delete(Frame).where(Frame.path.in_(paths[start:start + 500])))
    return len(paths)
