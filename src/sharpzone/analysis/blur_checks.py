"""Blur verdicts: was the subject sharp in the pixels? Judged at query time from the stored
measurement (``frame_blur``, disk diameters in pixels of the analysed preview) against the
frame's circle of confusion, so a changed CoC policy needs no new measurement.

Blur on the sensor: ``blur_mm = blur_px / analysed_long_px × sensor long side mm``.

Verdict codes (words in ``report.verdicts.describe_flag``):

``focus-missed``    blur at the focus point above the limit by ``FOCUS_MARGIN`` while another
                    region is within it: the focus landed elsewhere (where: ``blur_where``)
``soft-all-over``   no region within the limit: shake, motion or a miss (exposure time
                    beside the hand-holding rule as a hint)
``sharp-at-focus``  the focus point is within the limit (a note, not a problem)
``not-measurable``  too few edges at the focus point (a clear sky, a plain wall)

The limit is the CoC in preview pixels, but never below ``PREVIEW_FLOOR_PX``: a small JPEG
preview of a sharp frame itself reads as a blur of about that much (docs/measured-blur.md), so a CoC
finer than the preview can show is judged at the preview's own limit. A frame without a
recorded focus point is judged at the centre of the picture (the default AF point of most
cameras; common practice), and the verdict says so. This is an estimate from a small
preview: the photographer decides what to reject.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from sharpzone.optics.formats import FULL_FRAME_DIAGONAL_MM  # for the 35 mm equivalent focal length

if TYPE_CHECKING:
    import pandas as pd

BLUR_FLAGS = ("focus-missed", "soft-all-over", "sharp-at-focus", "not-measurable")
# The focus point must be this many times the limit to call a miss (borderline frames get
# no blur verdict rather than a wrong one).
FOCUS_MARGIN = 1.5
# What the estimator reads on sharp pictures decoded small (disk diameter, px of the
# analysed picture): measured on the validation images with camera-like noise and JPEG
# compression (tests/measure/test_validation.py), rounded up.
PREVIEW_FLOOR_PX = 3.0

_STORED = {
    "method": "blur_method", "method_version": "blur_method_version", "analysed_long_px": "blur_analysed_long_px",
    "focus_blur_px": "blur_focus_px", "focus_edges": "blur_focus_edges", "focus_x": "blur_focus_x",
    "focus_y": "blur_focus_y", "best_blur_px": "blur_best_px", "best_x": "blur_best_x", "best_y": "blur_best_y",
    "median_blur_px": "blur_median_px", "regions_measured": "blur_regions_measured",
    "regions_total": "blur_regions_total",
}
_FRAME = {"focal_35mm_mm": "focal_35mm_mm", "focus_point_x": "focus_point_x"}



def blur_select() -> list:
    """The labelled columns of the blur measurement and of what its verdicts read from the
    frame, for a query that joins ``frame_blur`` (outer, so unmeasured frames stay)."""
    from sharpzone.catalog.models import Frame, FrameBlur

    stored = [getattr(FrameBlur, name).label(label) for name, label in _STORED.items()]
    return stored + [getattr(Frame, name).label(label) for name, label in _FRAME.items()]


def blur_types(frames: pd.DataFrame) -> pd.DataFrame:
    """The blur columns as the verdicts read them: numbers (NaN where never measured), the
    method as text."""
    import pandas as pd

    for column in (*_STORED.values(), *_FRAME.values()):
        values = frames[column]
        frames[column] = values.astype(object) if column == "blur_method" else pd.to_numeric(values, errors="coerce")
    return frames


def _column(frames: pd.DataFrame, name: str) -> np.ndarray:
    if name in frames:
        return frames[name].to_numpy(dtype=float)
    return np.full(len(frames), np.nan)


def where_in_frame(x: float | None, y: float | None) -> str:
    """"upper left", "centre", "lower right", … for a position in fractions of the picture."""
    if x is None or y is None or x != x or y != y:
        return "—"
    across = ("left", "centre", "right")[min(2, int(x * 3))]
    down = ("upper", "middle", "lower")[min(2, int(y * 3))]
    if down == "middle":
        return across
    return f"{down} {across}"


def blur_flags(frames: pd.DataFrame) -> dict[str, np.ndarray]:
    """The blur verdicts per row (boolean arrays by code), adding to ``frames`` the figures
    the words and the JSON show: ``blur_limit_px``, ``blur_floor_mm`` (the finest blur the
    preview resolves, on the sensor), ``blur_focus_mm``/``blur_best_mm`` (on the
    sensor), ``blur_focus_coc``/``blur_best_coc`` (multiples of the CoC), ``blur_where`` (the
    sharpest region), ``blur_focus_assumed`` (no focus point recorded: the centre was used),
    ``handhold_limit_s`` (1/(35 mm equivalent focal length) s, common practice) and
    ``blur_disagrees`` (a recorded focus distance says the focus point should be sharp, the
    pixels say it is not)."""
    count = len(frames)
    analysed = _column(frames, "blur_analysed_long_px")
    measured = ~np.isnan(analysed)
    width, height = _column(frames, "format_width_mm"), _column(frames, "format_height_mm")
    long_mm = np.fmax(width, height)
    coc = _column(frames, "coc_mm")
    focus_px, best_px = _column(frames, "blur_focus_px"), _column(frames, "blur_best_px")
    regions = np.nan_to_num(_column(frames, "blur_regions_measured"))
    with np.errstate(invalid="ignore", divide="ignore"):
        mm_per_px = long_mm / analysed
        coc_px = coc / mm_per_px
        limit = np.fmax(coc_px, PREVIEW_FLOOR_PX)
        judged = measured & ~np.isnan(coc_px)
        soft = judged & (regions > 0) & (best_px > limit)
        unmeasurable = judged & ~soft & np.isnan(focus_px)
        missed = judged & ~soft & ~unmeasurable & (focus_px > FOCUS_MARGIN * limit) & (best_px <= limit)
        sharp = judged & ~soft & ~unmeasurable & (focus_px <= limit)
        focal_35 = _column(frames, "focal_35mm_mm")
        diagonal = np.hypot(width, height)
        equivalent = np.where(focal_35 > 0, focal_35, _column(frames, "focal_mm") * FULL_FRAME_DIAGONAL_MM / diagonal)
        frames["blur_limit_px"] = np.where(judged, limit, np.nan)
        frames["blur_floor_mm"] = PREVIEW_FLOOR_PX * mm_per_px
        frames["blur_focus_mm"] = focus_px * mm_per_px
        frames["blur_best_mm"] = best_px * mm_per_px
        frames["blur_median_mm"] = _column(frames, "blur_median_px") * mm_per_px
        frames["blur_focus_coc"] = focus_px / coc_px
        frames["blur_best_coc"] = best_px / coc_px
        frames["handhold_limit_s"] = 1.0 / equivalent
        focus_known = np.isfinite(_column(frames, "focus_mm"))
        frames["blur_disagrees"] = (missed | soft) & focus_known
    best_x, best_y = _column(frames, "blur_best_x"), _column(frames, "blur_best_y")
    frames["blur_where"] = [where_in_frame(x, y) if ok else None for x, y, ok in zip(best_x, best_y, measured)]
    frames["blur_focus_assumed"] = measured & np.isnan(_column(frames, "focus_point_x"))
    if not count:
        return {flag: np.zeros(0, dtype=bool) for flag in BLUR_FLAGS}
    return {"focus-missed": missed, "soft-all-over": soft, "sharp-at-focus": sharp, "not-measurable": unmeasurable}
