"""``sharpzone measure``: the blur of every ingested frame, from its embedded preview.

Each frame's preview is decoded small (``ingest.preview.load_preview``) in worker processes,
measured with ``measure.defocus`` and stored in ``frame_blur`` with the method's name and
version; a frame measured by an older version is measured again, ``again=True`` measures
every frame. Batches are committed as they come, so an interrupted run keeps what it
measured and a rerun finishes the job. Image files are only ever opened for reading: the
measurement is an estimate from a small preview and deletes or rejects nothing.
"""

from __future__ import annotations

import json
import os
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from sharpzone.errors import InvalidValue
from sharpzone.measure.defocus import METHOD, METHOD_VERSION, BlurMeasurement

if TYPE_CHECKING:
    from sharpzone.catalog.engine import Catalog

# The long side the preview is decoded to (pixels): 1,600 keeps a full-frame CoC of 1/1,500
# of the diagonal above one pixel while a frame takes a few tens of milliseconds.
ANALYSED_LONG_PX = 1600
DEFAULT_JOBS = 2
BATCH_SIZE = 50
# Below this many frames a worker pool costs more than it saves.
POOL_THRESHOLD = 16
# Seconds a frame may take before its decoder is stopped and the frame reported.
TIME_LIMIT_S = 60.0
CENTRE = (0.5, 0.5, 0.0, 0.0)

ProgressCallback = Callable[[str, int, int | None], None]


@dataclass
class MeasureSummary:
    """What a measuring run did: frames measured now, already current, failed (printable
    path and reason), and whether it was interrupted (what was measured is kept)."""

    measured: int = 0
    current: int = 0
    failed: list[tuple[str, str]] = field(default_factory=list)
    interrupted: bool = False
    seconds: float = 0.0
    method: str = METHOD
    method_version: int = METHOD_VERSION


@dataclass(frozen=True)
class _Task:
    frame_id: int
    path: str
    focus_point: tuple[float, float, float, float] | None
    long_side_px: int


def measure_file(path: str | os.PathLike, focus_point: tuple[float, float, float, float] | None = None,
                 long_side_px: int = ANALYSED_LONG_PX) -> BlurMeasurement:
    """The blur of one image file, from its embedded preview (or the JPEG itself) decoded
    with its long side at most ``long_side_px``. Raises ``FileReadError`` when it cannot."""
    import numpy as np

    from sharpzone.ingest.preview import load_preview
    from sharpzone.measure.defocus import grey_levels, measure_blur

    preview = load_preview(path, long_side_px)
    return measure_blur(grey_levels(np.asarray(preview.image)), focus_point)


def _measure_task(task: _Task) -> tuple[int, BlurMeasurement | str]:
    from sharpzone.ingest.records import FileReadError

    try:
        return task.frame_id, measure_file(task.path, task.focus_point, task.long_side_px)
    except FileReadError as error:
        return task.frame_id, error.reason
    except (ValueError, MemoryError) as error:
        return task.frame_id, f"cannot measure the picture ({type(error).__name__})"


def _tasks(catalog: Catalog, shoot: str | None, again: bool, long_side_px: int) -> tuple[list[_Task], int]:
    """Frames to measure (never measured, an older method, a focus point that changed since,
    or all with ``again``) and how many are current already."""
    from sqlalchemy import select

    from sharpzone.catalog.models import Frame, FrameBlur
    from sharpzone.catalog.service import get_shoot

    with catalog.session_scope() as session:
        statement = (
            select(Frame.id, Frame.path, Frame.focus_point_x, Frame.focus_point_y, Frame.focus_point_w,
                   Frame.focus_point_h, FrameBlur.method, FrameBlur.method_version, FrameBlur.focus_x,
                   FrameBlur.focus_y)
            .outerjoin(FrameBlur, FrameBlur.frame_id == Frame.id)
            .order_by(Frame.captured_at, Frame.path)
        )
        if shoot:
            statement = statement.where(Frame.shoot_id == get_shoot(session, shoot).id)
        rows = session.execute(statement).all()
    tasks, current = [], 0
    for frame_id, path, x, y, w, h, method, version, measured_x, measured_y in rows:
        # No recorded focus point: the centre stands in (the default AF point of most
        # cameras; common practice); the verdicts say so.
        point = (x, y, w or 0.0, h or 0.0) if x is not None and y is not None else CENTRE
        same_point = measured_x is not None and _close(measured_x, point[0]) and _close(measured_y, point[1])
        if not again and method == METHOD and version is not None and version >= METHOD_VERSION and same_point:
            current += 1
            continue
        tasks.append(_Task(frame_id, path, point, long_side_px))
    return tasks, current


def _close(a: float | None, b: float) -> bool:
    return a is not None and abs(a - min(max(b, 0.0), 1.0)) < 1e-6


def _results(tasks: list[_Task], jobs: int) -> Iterator[tuple[int, BlurMeasurement | str]]:
    if jobs <= 1 or len(tasks) < POOL_THRESHOLD:
        for task in tasks:
            yield _measure_task(task)
        return
    from sharpzone.ingest.workers import PICTURE_DECODER, ContainedPool
    from sharpzone.measure.defocus import REBLUR_SIGMA_PX, _disk_table

    _disk_table(REBLUR_SIGMA_PX)  # made once here; forked workers inherit it
    # Contained workers: a decoder that crashes or hangs on a file costs that file only (it
    # is reported and the run goes on); they leave Ctrl-C to this process, which saves what
    # was measured and stops them.
    with ContainedPool(_measure_task, jobs, problem=_not_measured, doer=PICTURE_DECODER,
                       time_limit_s=TIME_LIMIT_S, depth=2, answer_batch=1) as pool:
        yield from pool.read((task,) for task in tasks)


def _not_measured(pool_task: tuple[_Task], reason: str) -> tuple[int, str]:
    return pool_task[0].frame_id, reason


def blur_row(frame_id: int, measurement: BlurMeasurement) -> dict:
    """The ``frame_blur`` row of one measurement."""
    return {
        "frame_id": frame_id, "method": METHOD, "method_version": METHOD_VERSION,
        "analysed_long_px": measurement.analysed_long_px, "focus_blur_px": measurement.focus_blur_px,
        "focus_edges": measurement.focus_edges, "focus_x": measurement.focus_x, "focus_y": measurement.focus_y,
        "best_blur_px": measurement.best_blur_px, "best_x": measurement.best_x, "best_y": measurement.best_y,
        "median_blur_px": measurement.median_blur_px, "regions_measured": measurement.regions_measured,
        "regions_total": measurement.regions_total, "grid": json.dumps([list(line) for line in measurement.grid]),
    }


def _persist(catalog: Catalog, rows: list[dict]) -> None:
    import datetime as dt

    from sharpzone.catalog.models import FrameBlur
    from sharpzone.catalog.upsert import upsert_rows

    if not rows:
        return
    now = dt.datetime.now(dt.timezone.utc).replace(tzinfo=None)
    with catalog.session_scope(write=True) as session:
        upsert_rows(session, FrameBlur, [{**row, "measured_at": now} for row in sorted(rows, key=lambda r: r["frame_id"])],
                    ["frame_id"])


def measure_frames(catalog: Catalog, *, shoot: str | None = None, again: bool = False, jobs: int | None = None,
                   long_side_px: int = ANALYSED_LONG_PX, batch_size: int = BATCH_SIZE,
                   progress: ProgressCallback | None = None) -> MeasureSummary:
    """Measure the blur of the ingested frames of ``shoot`` (default: every shoot).

    Frames already measured by this method's version are skipped unless ``again``; ``jobs``
    worker processes decode and measure (default 2). ``progress("measure", done, total)`` is
    called as frames finish. On Ctrl-C the frames measured so far are saved and the summary
    says ``interrupted``. Nothing is written to an image file and nothing is deleted.
    """
    from sharpzone.ingest.records import printable_path

    started = time.perf_counter()
    if jobs is not None and jobs < 1:
        raise InvalidValue(f"--jobs {jobs} is not valid: expected 1 or more")
    if long_side_px < 64:
        raise InvalidValue(f"a preview of {long_side_px} px is too small to measure: expected 64 px or more")
    tasks, current = _tasks(catalog, shoot, again, long_side_px)
    summary = MeasureSummary(current=current)
    notify = progress or (lambda stage, done, total: None)
    paths = {task.frame_id: task.path for task in tasks}
    notify("measure", 0, len(tasks))
    batch: list[dict] = []
    done = 0
    try:
        for frame_id, outcome in _results(tasks, jobs or DEFAULT_JOBS):
            done += 1
            if isinstance(outcome, str):
                summary.failed.append((printable_path(paths[frame_id]), outcome))
            else:
                batch.append(blur_row(frame_id, outcome))
            if len(batch) >= batch_size:
                _persist(catalog, batch)
                summary.measured += len(batch)
                batch = []
            notify("measure", done, len(tasks))
    except KeyboardInterrupt:
        summary.interrupted = True
    _persist(catalog, batch)
    summary.measured += len(batch)
    summary.seconds = time.perf_counter() - started
    return summary
