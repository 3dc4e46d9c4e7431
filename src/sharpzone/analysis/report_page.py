"""The report page's content (``sharpzone report``): every matching frame checked, grouped by
its worst verdict, with a small picture of each and one distance scale for the whole page.

Thumbnails come from each frame's embedded preview or the image itself (``ingest.preview``),
made in worker processes and kept in memory as JPEG bytes: nothing is written beside the
user's files. A file that cannot be shown (gone, damaged, a decoder that crashes) gets a
reason instead of a picture; the page lists it all the same.
"""

from __future__ import annotations

import datetime as dt
import io
import math
import os
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import TYPE_CHECKING

from sharpzone.analysis.frames import CheckResult, FrameFilter, frames_with_zones
from sharpzone.errors import InvalidValue

if TYPE_CHECKING:
    import pandas as pd
    from sqlalchemy.orm import Session

    from sharpzone.analysis.checks import Requirement

# Worst first. A frame is listed once, under the first of its verdicts in this order; codes
# not named here (added later) come after the named misses and before "cannot judge".
VERDICT_ORDER = (
    "out-of-reach", "focus-missed", "soft-all-over", "too-wide-open", "focus-misplaced", "distance-uncertain",
    "past-diffraction", "outside-plan",
    "distance-unknown", "settings-unknown", "not-measurable", "no-requirement",
    "sharp-at-focus",
)
PASSED = "passed"
# Verdicts that say the frame could not be judged, and those that are good news.
UNJUDGED = frozenset({"distance-unknown", "settings-unknown", "not-measurable", "no-requirement"})
GOOD = frozenset({"sharp-at-focus"})

THUMBNAIL_LONG_SIDE_PX = 320
# Each thumbnail is re-encoded at lower quality until it fits: 12 kB (16 kB as base64 text)
# keeps a 2,000-frame page near 35 MB with its markup.
THUMBNAIL_MAX_BYTES = 12_000
# (scale, JPEG quality) tried in turn; a picture of pure detail ends up smaller rather than blurred.
_ENCODINGS = ((1.0, 72), (1.0, 62), (1.0, 52), (1.0, 42), (1.0, 32), (0.75, 42), (0.75, 32), (0.5, 42), (0.5, 25))
# A worker that finishes no file in this long is stuck (a sound file takes milliseconds).
STALL_SECONDS = 20.0
# Below this many files a worker pool costs more than it saves.
POOL_THRESHOLD = 16

ProgressCallback = Callable[[str, int, int | None], None]


def verdict_rank(flag: str) -> int:
    """Position of a verdict code in the page's order (worst first); ``passed`` last."""
    if flag == PASSED:
        return len(VERDICT_ORDER) + 1
    if flag in VERDICT_ORDER:
        return VERDICT_ORDER.index(flag)
    return VERDICT_ORDER.index("distance-unknown") - 0.5  # a new code: after the named misses


def verdict_kind(flag: str) -> str:
    """``miss``, ``unjudged``, ``good`` or ``passed``: how the page draws a verdict."""
    if flag == PASSED:
        return "passed"
    if flag in UNJUDGED:
        return "unjudged"
    if flag in GOOD:
        return "good"
    return "miss"


def primary_verdict(flags: Iterable[str]) -> str:
    """The verdict a frame is listed under: its worst, or ``passed`` when it has none."""
    flags = list(flags)
    return min(flags, key=verdict_rank) if flags else PASSED


@dataclass(frozen=True)
class Thumbnail:
    """A frame's picture as JPEG bytes (``None`` with a ``problem`` when it cannot be shown)."""

    jpeg: bytes | None
    width: int = 0
    height: int = 0
    problem: str | None = None


@dataclass(frozen=True)
class DistanceScale:
    """The page's shared distance axis: logarithmic from ``near_mm`` to ``far_mm`` over the
    first ``FINITE_SHARE`` of the width, a break, then infinity at the right end. Finite
    distances beyond ``far_mm`` stop at the break."""

    near_mm: float
    far_mm: float

    FINITE_SHARE = 0.88
    INFINITY_FROM = 0.93

    def position(self, value_mm: float | None) -> float | None:
        """Where a distance (mm) lies across the scale, 0..1; ``None`` when unknown."""
        if value_mm is None or value_mm != value_mm:
            return None
        if math.isinf(value_mm):
            return 1.0 if value_mm > 0 else 0.0
        if value_mm <= self.near_mm:
            return 0.0
        if value_mm >= self.far_mm:
            return self.FINITE_SHARE
        return self.FINITE_SHARE * math.log(value_mm / self.near_mm) / math.log(self.far_mm / self.near_mm)

    def ticks_mm(self, imperial: bool = False) -> list[float]:
        """Round distances within the scale, at least four where they fit: 1-2-5 steps (whole
        decades when those would crowd), finer steps for a narrow scale, else even steps."""
        unit = 25.4 if imperial else 1.0  # inches or millimetres
        low, high = self.near_mm / unit, self.far_mm / unit
        if imperial:
            feet = (1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000)
            fine_feet = (1, 1.5, 2, 3, 4, 5, 7, 10, 15, 20, 30, 50, 70, 100, 150, 200, 300, 500, 1000, 2000, 5000)
            ladders = [(1, 2, 6, *(12 * f for f in feet)), (1, 2, 3, 6, 9, *(12 * f for f in fine_feet))]
        else:
            ladders = [[m * 10.0 ** e for e in range(-1, 8) for m in mantissas]
                       for mantissas in ((1, 2, 5), (1, 1.5, 2, 3, 5, 7), tuple(range(1, 10)))]
        for ladder in ladders:
            inside = [v for v in ladder if low * (1 - 1e-9) <= v <= high * (1 + 1e-9)]
            if len(inside) > 10:
                decades = [v for v in inside if math.log10(v).is_integer() or (imperial and v in (12, 120, 1200))]
                inside = decades if len(decades) >= 3 else inside[::2]
            if len(inside) >= 4 or (len(inside) == 3 and ladder is ladders[-1]):
                return [v * unit for v in inside]
        step = _nice_above((high - low) / 4)
        first = math.ceil(low / step * (1 - 1e-9))
        return [k * step * unit for k in range(first, int(high / step * (1 + 1e-9)) + 1)]


def _nice_above(value: float, mantissas=(1, 2, 5, 10)) -> float:
    """The smallest 1-2-5 value (a decade's multiple) at or above ``value``."""
    exponent = math.floor(math.log10(value))
    return min(m * 10.0 ** exponent for m in mantissas if m * 10.0 ** exponent >= value * (1 - 1e-12))


OUTLIER_FACTOR = 8.0
SCALE_COLUMNS = ("near_mm", "focus_mm", "required_near_mm", "required_far_mm", "focus_near_mm", "focus_far_mm",
                 "better_focus_mm")


def scale_for(frames: pd.DataFrame) -> DistanceScale:
    """A scale that holds every frame's near limit, focus distance, bracket and requirement
    (far limits beyond them run to the break: past the last thing that had to be sharp,
    how far a zone reaches matters less than that it reaches), with a margin, but no wider
    than ``OUTLIER_FACTOR`` either side of the median focus distance."""
    import numpy as np

    values = []
    for column in SCALE_COLUMNS:
        if column in frames:
            column_values = frames[column].to_numpy(dtype=float)
            values.append(column_values[np.isfinite(column_values) & (column_values > 0)])
    finite = np.concatenate(values) if values else np.zeros(0)
    if finite.size == 0:
        return DistanceScale(500.0, 20_000.0)
    low, high = float(finite.min()), float(finite.max())
    # A margin in proportion to the range on the log scale (3 % at least), so that a
    # close-up whose distances differ by millimetres still fills the bars.
    margin = max((high / low) ** 0.12, 1.03)
    low, high = low / margin, high * margin
    focus = frames["focus_mm"].to_numpy(dtype=float) if "focus_mm" in frames else np.zeros(0)
    focus = focus[np.isfinite(focus) & (focus > 0)]
    if focus.size:
        # One frame focused far away must not squeeze everyone else's bars into a sliver:
        # the scale spans at most OUTLIER_FACTOR either side of the typical focus distance,
        # and what lies beyond sits at the scale's ends.
        typical = float(np.median(focus))
        low, high = max(low, typical / OUTLIER_FACTOR), min(high, typical * OUTLIER_FACTOR)
    return DistanceScale(_two_figures(low, math.floor), _two_figures(max(high, low * 1.05), math.ceil))


def _two_figures(value: float, rounding) -> float:
    """``value`` rounded (down or up, by ``rounding``) to two significant figures."""
    step = 10.0 ** (math.floor(math.log10(value)) - 1)
    return rounding(value / step * (1 + 1e-12 if rounding is math.floor else 1 - 1e-12)) * step


@dataclass(frozen=True)
class ReportData:
    """Everything the report page shows: the check (frames, requirement, CoC policy), the
    frames' paths grouped under their worst verdict (worst group first, frames in capture
    order), a thumbnail per path, the shared distance scale and a title."""

    check: CheckResult
    title: str
    groups: list[tuple[str, list[int]]]
    thumbnails: dict[str, Thumbnail]
    scale: DistanceScale
    made_at: dt.datetime

    @property
    def frames(self) -> pd.DataFrame:
        return self.check.frames

    def thumbnail_problems(self) -> list[tuple[str, str]]:
        """(path, reason) for each frame shown without a picture."""
        return [(path, thumb.problem) for path, thumb in self.thumbnails.items() if thumb.problem]


def build_report(session: Session, where: FrameFilter = FrameFilter(), *, requirement: Requirement | None = None,
                 coc_policy: str | None = None, title: str | None = None, jobs: int | None = None,
                 long_side_px: int = THUMBNAIL_LONG_SIDE_PX, progress: ProgressCallback | None = None) -> ReportData:
    """``sharpzone report``: the frames matching ``where`` judged against ``requirement`` (or
    each shoot's plan), with a thumbnail each (``long_side_px`` on the long side, made by
    ``jobs`` worker processes, default one per core; ``progress(stage, done, total)``).

    Unlike ``check_shoot`` it does not refuse a shoot without a plan: the page still shows
    each frame's zone, under "no requirement".
    """
    result = frames_with_zones(session, where, coc_policy=coc_policy, requirement=requirement)
    if result.frames.empty:
        raise InvalidValue("no frames match these filters, so there is nothing to put on a page")
    return report_from_check(result, title=title or _default_title(result.frames, where), jobs=jobs,
                             long_side_px=long_side_px, progress=progress)


def report_from_check(check: CheckResult, *, title: str, jobs: int | None = None,
                      long_side_px: int = THUMBNAIL_LONG_SIDE_PX,
                      progress: ProgressCallback | None = None) -> ReportData:
    """The page's content for frames already checked (as ``build_report`` makes it)."""
    frames = check.frames
    primaries = [primary_verdict(flags) for flags in frames["flags"]]
    by_verdict: dict[str, list[int]] = {}
    for position, verdict in enumerate(primaries):
        by_verdict.setdefault(verdict, []).append(position)
    groups = sorted(by_verdict.items(), key=lambda item: (verdict_rank(item[0]), item[0]))
    paths = list(dict.fromkeys(frames["path"]))
    thumbnails = make_thumbnails(paths, long_side_px=long_side_px, jobs=jobs, progress=progress)
    return ReportData(check, title, groups, thumbnails, scale_for(frames), dt.datetime.now().astimezone())


def _default_title(frames: pd.DataFrame, where: FrameFilter) -> str:
    shoots = sorted({str(s) for s in frames["shoot"].dropna()})
    if where.shoot or len(shoots) == 1:
        return shoots[0] if shoots else str(where.shoot)
    return f"{len(shoots)} shoots" if shoots else "Frames"


# ---- thumbnails --------------------------------------------------------------------------

def make_thumbnails(paths: list[str], *, long_side_px: int = THUMBNAIL_LONG_SIDE_PX,
                    max_bytes: int = THUMBNAIL_MAX_BYTES, jobs: int | None = None,
                    progress: ProgressCallback | None = None) -> dict[str, Thumbnail]:
    """A ``Thumbnail`` for each path (JPEG, ``long_side_px`` on the long side, at most
    ``max_bytes``), made in ``jobs`` worker processes. Files are only read. A worker that
    dies (a decoder crash) costs only the file it was on."""
    if jobs is not None and jobs < 1:
        raise InvalidValue(f"--jobs {jobs} is not valid: expected 1 or more")
    jobs = jobs or os.cpu_count() or 1
    notify = progress or (lambda stage, done, total: None)
    items = [(path, long_side_px, max_bytes) for path in paths]
    results: dict[str, Thumbnail] = {}
    total = len(items)
    notify("Making thumbnails", 0, total)
    if jobs == 1 or total < POOL_THRESHOLD:
        for item in items:
            path, thumbnail = _thumbnail(item)
            results[path] = thumbnail
            notify("Making thumbnails", len(results), total)
        return results
    from sharpzone.ingest.workers import PICTURE_DECODER, ContainedPool

    # Contained workers: a decoder that crashes or hangs on a file costs only that file.
    with ContainedPool(_thumbnail, min(jobs, total), problem=_no_thumbnail, doer=PICTURE_DECODER,
                       time_limit_s=STALL_SECONDS, depth=4, answer_batch=1) as pool:
        for path, thumbnail in pool.read((item,) for item in items):
            results[path] = thumbnail
            notify("Making thumbnails", len(results), total)
    return results


def _no_thumbnail(pool_task: tuple[tuple[str, int, int]], reason: str) -> tuple[str, Thumbnail]:
    return pool_task[0][0], Thumbnail(None, problem=reason)


def _thumbnail(item: tuple[str, int, int]) -> tuple[str, Thumbnail]:
    """Worker: one file's thumbnail, or the reason there is none (never raises)."""
    path, long_side_px, max_bytes = item
    from sharpzone.ingest.preview import load_preview
    from sharpzone.ingest.records import FileReadError

    try:
        image = _upright(load_preview(path, long_side_px).image, path)
        data, image = _jpeg_within(image, max_bytes)
    except FileReadError as error:
        return path, Thumbnail(None, problem=error.reason)
    except Exception as error:  # noqa: BLE001 - a hostile file must not stop the page
        return path, Thumbnail(None, problem=f"cannot make a picture ({type(error).__name__})")
    return path, Thumbnail(data, image.size[0], image.size[1])


# EXIF Orientation (CIPA DC-008 tag 0x0112) → the Pillow transpose that makes the picture upright.
_ORIENTATION_TAG = 0x0112


def _upright(image, path: str):
    """The picture turned as the file's EXIF Orientation says (previews are stored unturned)."""
    from PIL import Image

    transposes = {2: [Image.Transpose.FLIP_LEFT_RIGHT], 3: [Image.Transpose.ROTATE_180],
                  4: [Image.Transpose.FLIP_TOP_BOTTOM], 5: [Image.Transpose.TRANSPOSE],
                  6: [Image.Transpose.ROTATE_270], 7: [Image.Transpose.TRANSVERSE], 8: [Image.Transpose.ROTATE_90]}
    try:
        with Image.open(path) as opened:
            orientation = opened.getexif().get(_ORIENTATION_TAG)
    except Exception:  # noqa: BLE001 - a raw file Pillow cannot open: leave it as it is
        return image
    for transpose in transposes.get(orientation, []):
        image = image.transpose(transpose)
    return image


def _jpeg_within(image, max_bytes: int):
    """JPEG bytes of at most ``max_bytes`` (where the ladder allows) and the picture they hold."""
    from PIL import Image

    data, encoded = b"", image
    for scale, quality in _ENCODINGS:
        encoded = image if scale == 1.0 else image.resize(
            (max(1, round(image.size[0] * scale)), max(1, round(image.size[1] * scale))), Image.Resampling.LANCZOS)
        buffer = io.BytesIO()
        encoded.save(buffer, "JPEG", quality=quality, optimize=True)
        data = buffer.getvalue()
        if len(data) <= max_bytes:
            break
    return data, encoded
