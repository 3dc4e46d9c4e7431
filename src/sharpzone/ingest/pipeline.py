"""Ingest a shoot: scan → read (worker processes) → match → persist (batched, one process).

Every stage is a small function over plain values; the run keeps going past any file that
cannot be read and records why. Each batch is one transaction, so a run killed at any point
leaves the catalogue consistent and a rerun finishes the job (unchanged files — same path,
size and modification time — are not reopened). Image files are only ever opened for reading.
"""

from __future__ import annotations

import itertools
import math
import multiprocessing
import os
import time
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from sharpzone.errors import Conflict, InvalidValue
from sharpzone.ingest.capture import read_capture
from sharpzone.ingest.distances import lookup_user_distance, read_user_distances
from sharpzone.ingest.records import CaptureRecord, ReadProblem, printable_path
from sharpzone.ingest.scan import CandidateFile, iter_scan

if TYPE_CHECKING:
    from sqlalchemy.orm import Session

    from sharpzone.catalog.engine import Catalog

BATCH_SIZE = 500
# Below this many files to read, a worker pool costs more than it saves.
POOL_THRESHOLD = 64

ProgressCallback = Callable[[str, int, int | None], None]


@dataclass
class IngestSummary:
    """What an ingest did. ``failed``/``vanished`` hold printable paths (and reasons)."""

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
    seconds: float = 0.0

    @property
    def read(self) -> int:
        return self.added + self.updated


@dataclass(frozen=True)
class _Stored:
    size: int
    mtime_ns: int
    focus_mm: float | None
    focus_source: str


def _stored_frames(session: Session, roots: Sequence[str]) -> dict[str, _Stored]:
    """Frames already catalogued under ``roots`` (folders or files), by path."""
    from sqlalchemy import or_, select

    from sharpzone.catalog.models import Frame

    conditions = []
    for root in roots:
        conditions.append(Frame.path == root)
        conditions.append(Frame.path.startswith(root.rstrip(os.sep) + os.sep, autoescape=True))
    rows = session.execute(
        select(Frame.path, Frame.file_size, Frame.file_mtime_ns, Frame.focus_mm, Frame.focus_source)
        .where(or_(*conditions)))
    return {path: _Stored(size, mtime, focus, source) for path, size, mtime, focus, source in rows}


def _ensure_shoot(catalog: Catalog, name: str, root: str) -> int:
    from sharpzone.catalog.models import Shoot
    from sharpzone.catalog.service import add_shoot
    from sharpzone.catalog.service.common import find_by_name

    for attempt in range(2):
        try:
            with catalog.session_scope(write=True) as session:
                shoot = find_by_name(session, Shoot, name)
                if shoot is None:
                    shoot = add_shoot(session, name, root_folder=root)
                return shoot.id
        except Conflict:
            if attempt:
                raise  # another run created it at the same moment: look again once
    raise AssertionError("unreachable")


def _read_all(paths: Iterable[tuple[str, float | None]], jobs: int) -> Iterator[CaptureRecord | ReadProblem]:
    """Read files, in worker processes when it pays; results in any order.

    ``paths`` may be a generator (the scan): the pool's feeder thread draws from it while
    results are consumed, so walking the folders overlaps with reading.
    """
    paths = iter(paths)
    head = list(itertools.islice(paths, POOL_THRESHOLD))
    if jobs <= 1 or len(head) < POOL_THRESHOLD:
        for path, user_mm in itertools.chain(head, paths):
            yield read_capture(path, user_mm)
        return
    methods = multiprocessing.get_all_start_methods()
    context = multiprocessing.get_context("fork" if "fork" in methods else "spawn")
    with context.Pool(processes=jobs) as pool:
        yield from pool.imap_unordered(_read_one, itertools.chain(head, paths), chunksize=64)


def _read_one(item: tuple[str, float | None]) -> CaptureRecord | ReadProblem:
    return read_capture(item[0], item[1])


def _frame_row(record: CaptureRecord, candidate: CandidateFile, shoot_id: int, body_id, lens_id,
               warnings: list[str]) -> dict:
    from sharpzone.catalog.rules import frame_within_rules  # what breaks a rule is dropped, with a warning

    return frame_within_rules({
        "path": printable_path(record.path), "shoot_id": shoot_id, "file_size": candidate.size,
        "file_mtime_ns": candidate.mtime_ns, "captured_at": record.captured_at,
        "utc_offset_minutes": record.utc_offset_minutes, "body_id": body_id, "lens_id": lens_id,
        "focal_mm": record.focal_mm, "f_number": record.f_number, "exposure_s": record.exposure_s,
        "iso": record.iso, "focus_mm": record.focus_mm, "focus_source": record.focus_source,
        "focal_35mm_mm": record.focal_35mm_mm, "width_px": record.width_px, "height_px": record.height_px,
        "exif_make": record.exif_make, "exif_model": record.exif_model, "exif_lens_model": record.lens_model,
        "warnings": None,
    }, warnings) | {"warnings": "; ".join(warnings) or None}


def _persist_batch(catalog: Catalog, batch: list[tuple[CaptureRecord | ReadProblem, CandidateFile]],
                   shoot_id: int, matcher_factory, summary: IngestSummary) -> None:
    """Write one batch of read results in one transaction (retried once if a concurrent run
    registered the same body or lens first)."""
    from sqlalchemy import delete

    from sharpzone.catalog.models import Frame, IngestProblem
    from sharpzone.catalog.upsert import upsert_rows

    for attempt in range(2):
        added = updated = warnings = 0
        failed: list[tuple[str, str]] = []
        registered: list[str] = []
        try:
            with catalog.session_scope(write=True) as session:
                matcher = matcher_factory(session)
                rows, problem_rows, read_ok = [], [], []
                for result, candidate in batch:
                    shown = printable_path(candidate.path)
                    if isinstance(result, ReadProblem):
                        failed.append((shown, result.reason))
                        problem_rows.append({"shoot_id": shoot_id, "path": shown, "reason": result.reason})
                        continue
                    outcome = matcher.match(result)
                    registered.extend(outcome.registered)
                    notes = list(result.warnings) + outcome.warnings
                    warnings += len(notes)
                    rows.append(_frame_row(result, candidate, shoot_id, outcome.body_id, outcome.lens_id, notes))
                    read_ok.append(shown)
                # The database says which rows were new: exact even while another run
                # ingests the same files into a shared catalogue.
                rows.sort(key=lambda row: row["path"])  # one lock order for concurrent runs
                written = upsert_rows(session, Frame, rows, ["path"])
                added, updated = written.inserted, written.updated
                touched = read_ok + [path for path, _ in failed]
                if touched:
                    session.execute(delete(IngestProblem).where(IngestProblem.path.in_(touched)))
                if problem_rows:
                    session.execute(IngestProblem.__table__.insert(), problem_rows)
            break
        except Conflict:
            if attempt:
                raise
    summary.added += added
    summary.updated += updated
    summary.warnings += warnings
    summary.failed.extend(failed)
    summary.registered.extend(registered)


def _update_user_distances(catalog: Catalog, changes: list[tuple[str, float]]) -> None:
    """Unchanged files whose user-given distance changed: update without reopening them."""
    from sqlalchemy import update

    from sharpzone.catalog.models import Frame

    with catalog.session_scope(write=True) as session:
        for path, distance in changes:
            session.execute(update(Frame).where(Frame.path == path).values(focus_mm=distance, focus_source="user"))


def default_shoot_name(paths: Sequence[str]) -> str:
    """A shoot named after the first folder given (or the folder of the first file)."""
    first = os.path.abspath(paths[0])
    folder = first if os.path.isdir(first) else os.path.dirname(first)
    return os.path.basename(folder.rstrip(os.sep)) or folder


def ingest_paths(
    catalog: Catalog,
    paths: Sequence[str | os.PathLike],
    *,
    shoot: str | None = None,
    jobs: int | None = None,
    distances_csv: str | os.PathLike | None = None,
    prune: bool = False,
    batch_size: int = BATCH_SIZE,
    progress: ProgressCallback | None = None,
    matcher_factory=None,
) -> IngestSummary:
    """Ingest the image files under ``paths`` into ``catalog`` as shoot ``shoot`` (default: the
    first folder's name). ``jobs`` worker processes read EXIF (default: one per core);
    ``distances_csv`` gives focus distances that win over EXIF; ``prune`` removes frames whose
    files vanished. ``progress(stage, done, total)`` is called as work proceeds.
    """
    from sharpzone.ingest.match import CatalogMatcher

    started = time.perf_counter()
    if not paths:
        raise InvalidValue("ingest needs at least one file or folder")
    if jobs is not None and jobs < 1:
        raise InvalidValue(f"--jobs {jobs} is not valid: expected 1 or more")
    jobs = jobs or os.cpu_count() or 1
    matcher_factory = matcher_factory or CatalogMatcher
    roots = [os.path.abspath(os.fsdecode(p)) for p in paths]
    existing = [root for root in roots if os.path.lexists(root)]
    if not existing:
        shown = ", ".join(printable_path(root) for root in roots)
        raise InvalidValue(f"nothing to ingest: {shown} does not exist" if len(roots) == 1
                           else f"nothing to ingest: none of {shown} exists")
    user_distances = read_user_distances(distances_csv) if distances_csv else {}
    shoot_name = shoot or default_shoot_name(existing)
    summary = IngestSummary(shoot=shoot_name)
    shoot_id = _ensure_shoot(catalog, shoot_name, roots[0])
    notify = progress or (lambda stage, done, total: None)

    with catalog.session_scope() as session:
        stored = _stored_frames(session, [printable_path(r) for r in roots])
    plan = _ReadPlan(roots, stored, user_distances, summary, notify)

    # scan → read → match → persist: the scan feeds the readers as it walks, and results are
    # written in batches as they come back.
    by_path: dict[str, CandidateFile] = plan.by_path
    batch: list[tuple[CaptureRecord | ReadProblem, CandidateFile]] = []
    done = 0
    for result in _read_all(plan.files_to_read(), jobs):
        batch.append((result, by_path[result.path]))
        done += 1
        if len(batch) >= batch_size:
            _persist_batch(catalog, batch, shoot_id, matcher_factory, summary)
            batch = []
        notify("read", done, plan.total_to_read)
    if batch:
        _persist_batch(catalog, batch, shoot_id, matcher_factory, summary)
    if plan.scan_problems:
        _persist_batch(catalog, [(problem, CandidateFile(problem.path, 0, 0, "")) for problem in plan.scan_problems],
                       shoot_id, matcher_factory, summary)
    if plan.distance_changes:
        _update_user_distances(catalog, plan.distance_changes)
        summary.unchanged -= len(plan.distance_changes)
        summary.updated += len(plan.distance_changes)

    # vanished files
    found = plan.found
    found.update(printable_path(problem.path) for problem in plan.scan_problems)
    summary.vanished = sorted(path for path in stored if path not in found)
    if prune and summary.vanished:
        summary.pruned = _prune(catalog, summary.vanished)
    summary.seconds = time.perf_counter() - started
    return summary


class _ReadPlan:
    """Walks the roots and decides, file by file, what must be read: new and changed files
    (same path, size and modification time = unchanged, not reopened)."""

    def __init__(self, roots, stored: dict[str, _Stored], user_distances: dict[str, float],
                 summary: IngestSummary, notify: ProgressCallback) -> None:
        self.roots = roots
        self.stored = stored
        self.user_distances = user_distances
        self.summary = summary
        self.notify = notify
        self.by_path: dict[str, CandidateFile] = {}
        self.found: set[str] = set()
        self.scan_problems: list[ReadProblem] = []
        self.distance_changes: list[tuple[str, float]] = []
        self.total_to_read: int | None = None

    def files_to_read(self) -> Iterator[tuple[str, float | None]]:
        count = 0
        for event in iter_scan(self.roots, sniff=False):
            if isinstance(event, ReadProblem):
                self.scan_problems.append(event)
                continue
            if not isinstance(event, CandidateFile):
                self.summary.ignored += 1
                continue
            shown = printable_path(event.path)
            self.found.add(shown)
            user_mm = lookup_user_distance(self.user_distances, event.path) if self.user_distances else None
            before = self.stored.get(shown)
            if before is not None and before.size == event.size and before.mtime_ns == event.mtime_ns:
                self.summary.unchanged += 1
                if user_mm is not None and not (before.focus_source == "user" and _same(before.focus_mm, user_mm)):
                    self.distance_changes.append((shown, user_mm))
                continue
            self.by_path[event.path] = event
            count += 1
            yield event.path, user_mm
        self.total_to_read = count
        self.notify("read", 0, count)


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
