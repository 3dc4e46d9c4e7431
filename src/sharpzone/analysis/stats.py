"""Per-lens and per-body statistics of a set of frames: what f-numbers were used, how often
frames were flagged, and typical focus distances."""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from typing import TYPE_CHECKING

from sharpzone.analysis.frames import CHUNK_ROWS, FrameFilter, iter_checked, joined

if TYPE_CHECKING:
    from sqlalchemy.orm import Session

    from sharpzone.analysis.checks import Requirement


@dataclass(frozen=True)
class GroupStats:
    """Statistics of one lens or body. Distances in mm; ``share_flagged`` is flagged frames
    over judged frames, as ``check`` counts it (``checks.flagged_share``), ``None`` when no
    frame could be judged."""

    kind: str
    name: str
    frames: int
    f_number_counts: tuple[tuple[float, int], ...]
    share_flagged: float | None
    median_focus_mm: float | None
    focus_quartiles_mm: tuple[float, float] | None
    unknown_focus: int
    # Frames whose blur was measured, and how many of them missed focus or were soft all over.
    blur_measured: int = 0
    focus_missed: int = 0
    soft_all_over: int = 0


@dataclass(frozen=True)
class StatsResult:
    lenses: tuple[GroupStats, ...]
    bodies: tuple[GroupStats, ...]
    judged: bool


def _group_stats(kind: str, name: str, rows) -> GroupStats:
    import numpy as np

    from sharpzone.analysis.checks import flagged_share
    from sharpzone.optics.stops import round_up_to_stops

    f_numbers = rows["f_number"].to_numpy(dtype=float)
    known = f_numbers[~np.isnan(f_numbers)]
    # Each recorded f-number counts at the nearest marked third stop at or above it, so
    # 5.6 and 5.657 (the exact value) land in one bar.
    labels, _ = round_up_to_stops(known * (1 - 0.02))
    counts = Counter(float(label) for label in labels if not np.isnan(label))
    focus = rows["focus_mm"].to_numpy(dtype=float)
    finite = focus[np.isfinite(focus)]
    share = flagged_share(rows["outcome"].to_numpy(dtype=object))
    return GroupStats(
        kind=kind, name=name, frames=len(rows), f_number_counts=tuple(sorted(counts.items())),
        share_flagged=share,
        median_focus_mm=float(np.median(finite)) if len(finite) else None,
        focus_quartiles_mm=(float(np.percentile(finite, 25)), float(np.percentile(finite, 75))) if len(finite) else None,
        unknown_focus=int(np.isnan(focus).sum()),
        blur_measured=int(rows["blur_analysed_long_px"].notna().sum()) if "blur_analysed_long_px" in rows else 0,
        focus_missed=int(rows["flags"].map(lambda flags: "focus-missed" in flags).sum()),
        soft_all_over=int(rows["flags"].map(lambda flags: "soft-all-over" in flags).sum()),
    )


# What the statistics read of each frame: the rest of a chunk is let go as it is read.
_STATS_COLUMNS = ("lens", "body", "f_number", "focus_mm", "outcome", "flags", "blur_analysed_long_px")


def shoot_stats(session: Session, where: FrameFilter = FrameFilter(), *, coc_policy: str | None = None,
                requirement: Requirement | None = None, chunk_rows: int = CHUNK_ROWS) -> StatsResult:
    """``sharpzone stats``: per lens and per body, frames, f-numbers used, share flagged
    (against ``requirement`` or each shoot's plan) and typical focus distances. The frames
    are checked ``chunk_rows`` at a time (``iter_checked``), and of each only the columns
    the statistics read are kept."""
    import contextlib

    chunks = iter_checked(session, where, coc_policy=coc_policy, requirement=requirement, chunk_rows=chunk_rows)
    with contextlib.closing(chunks):
        kept = [frames[[name for name in _STATS_COLUMNS if name in frames]] for frames in chunks]
    if not kept:  # nothing to count: asked of the database, no frames table
        return StatsResult((), (), False)
    frames = joined(kept)
    groups = {}
    for kind, column in (("lens", "lens"), ("body", "body")):
        named = frames.assign(_name=frames[column].fillna(f"(unknown {kind})"))
        groups[kind] = tuple(_group_stats(kind, name, rows) for name, rows in named.groupby("_name", sort=True))
    judged = bool(len(frames)) and not frames["flags"].map(lambda flags: "no-requirement" in flags).all()
    return StatsResult(groups["lens"], groups["body"], judged)
