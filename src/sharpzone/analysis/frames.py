"""The frames table: one query joins every frame to its shoot, body, format and lens, and the
zones and checks run over the resulting DataFrame in one vectorised pass."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import TYPE_CHECKING

from sharpzone.errors import InvalidValue

# The checks, the zones and numpy are imported where the frames are judged, so a command
# whose selection holds no frame does without them.
if TYPE_CHECKING:
    from collections.abc import Iterator

    import numpy as np
    import pandas as pd
    from sqlalchemy.orm import Session

    from sharpzone.analysis.requirement import Requirement


@dataclass(frozen=True)
class FrameFilter:
    """Which frames to look at; every field optional. Ranges are inclusive; dates are the
    cameras' local capture dates."""

    shoot: str | None = None
    body: str | None = None
    lens: str | None = None
    date_from: dt.date | None = None
    date_to: dt.date | None = None
    f_number_min: float | None = None
    f_number_max: float | None = None
    focal_min_mm: float | None = None
    focal_max_mm: float | None = None
    verdict: str | None = None

    def __post_init__(self) -> None:
        if self.verdict is not None:
            from sharpzone.analysis.checks import FLAGS

            if self.verdict not in (*FLAGS, "passed", "flagged"):
                expected = ", ".join(("passed", "flagged", *FLAGS))
                raise InvalidValue(f"verdict {self.verdict!r} is not valid: expected one of {expected}")
        for low, high, what in ((self.f_number_min, self.f_number_max, "f-number"),
                                (self.focal_min_mm, self.focal_max_mm, "focal length"),
                                (self.date_from, self.date_to, "date")):
            if low is not None and high is not None and low > high:
                raise InvalidValue(f"{what} range {low}–{high} is empty: the first must not exceed the second")


# Frames fetched and computed at a time by the streaming readers: memory follows this, not
# the size of the catalogue. Measured on check --json over 100,000 frames: 50,000 rows a
# chunk 6.1 s and 830 MB, 20,000 5.6 s and 464 MB, 10,000 5.3 s and 300 MB.
CHUNK_ROWS = 10_000

_NUMERIC = ("focal_mm", "f_number", "exposure_s", "focus_mm", "focus_near_mm", "focus_far_mm", "format_width_mm",
            "format_height_mm", "format_coc_divisor", "pixel_width", "pixel_height", "pupil_magnification",
            "lens_min_aperture", "lens_close_focus_mm", "lens_max_magnification", "plan_near_mm", "plan_far_mm",
            "plan_front_mm", "plan_back_mm", "planned_focal_mm", "planned_f_number", "planned_focus_mm")


_COUNTS = ("iso", "utc_offset_minutes", "frame_id")


def iter_frames(session: Session, where: FrameFilter = FrameFilter(), *,
                chunk_rows: int | None = CHUNK_ROWS) -> Iterator[pd.DataFrame]:
    """The frames matching ``where`` (all but the verdict) in capture order, as DataFrames of
    at most ``chunk_rows`` rows (``None``: one DataFrame of all), with the columns
    ``analysis.zones`` and ``analysis.checks`` read; lengths in mm.

    One query with the filters in SQL (``catalog.frame_query``); its rows are read from the
    driver's cursor a chunk at a time (a server-side cursor on PostgreSQL), so memory
    follows the chunk, not the catalogue. With ``chunk_rows=None`` yields one (perhaps
    empty) DataFrame; in chunks, none when no frame matches (and pandas is not loaded)."""
    from sharpzone.catalog.frame_query import has_frames, iter_frame_rows, small_tables

    if chunk_rows is not None and not has_frames(session, where):
        return  # one LIMIT 1 query; the blur columns' module and numpy are not loaded
    from sharpzone.analysis.blur_checks import blur_select

    small = None
    blur_columns = blur_select()
    expected = [column.name for column in blur_columns]
    for names, rows in iter_frame_rows(session, where, blur_columns, chunk_rows=chunk_rows):
        if not rows and chunk_rows is not None:
            return
        if small is None:
            small = _small_tables(small_tables(session))
        yield _frames_table(names, rows, small, expected)


def joined(parts: list[pd.DataFrame], *, keep_index: bool = False) -> pd.DataFrame:
    """Chunks of frames (at least one) as one DataFrame: the chunk itself when there is one;
    numbered afresh unless ``keep_index``."""
    if len(parts) == 1:
        return parts[0]
    import pandas as pd

    return pd.concat(parts, ignore_index=not keep_index)


def _floats(values) -> np.ndarray:
    """Values as the driver gave them as floats, NaN for unknown (and for what is no number)."""
    import numpy as np

    try:
        return np.array(values, dtype=float)  # None → NaN
    except (TypeError, ValueError):
        import pandas as pd

        return pd.to_numeric(pd.Series(values, dtype=object), errors="coerce").to_numpy(dtype=float)


def _frames_table(names: list[str], rows: list[tuple], small, expected: list[str] = ()) -> pd.DataFrame:
    """The frames DataFrame of one chunk of query rows: numbers as floats (NaN unknown), the
    counts as integers where all are known, times as timestamps, the shoot, body/format and
    lens columns joined by id; the ``expected`` columns the query left out (no blur measured
    yet) all unknown (NaN, which ``blur_types`` then reads without parsing each value)."""
    import numpy as np
    import pandas as pd

    from sharpzone.analysis.blur_checks import blur_types

    columns = list(zip(*rows)) if rows else [() for _ in names]
    data = {}
    for name, values in zip(names, columns):
        if name in _NUMERIC:
            data[name] = _floats(values)
        elif name in _COUNTS:
            data[name] = pd.to_numeric(pd.Series(values, dtype=object), errors="coerce").to_numpy()
        elif name == "captured_at":
            data[name] = pd.to_datetime(pd.Series(values, dtype=object), errors="coerce")
        else:
            data[name] = np.array(values, dtype=object) if values else np.empty(0, dtype=object)
    for name in expected:
        if name not in data:
            data[name] = np.full(len(rows), np.nan)
    for key, index, table in small:
        # Each frame's row of the small table (its last row, all unknown, where none matches).
        positions = index.get_indexer(_floats(data[key]))
        for column, values in table.items():
            data[column] = values[positions]
    return blur_types(pd.DataFrame(data))


def _small_tables(tables):
    """The shoots, bodies and lenses (``frame_query.small_tables``) as ``(id column, index of
    the ids, {column: values with one unknown row after the last})``: a frame's columns are
    then taken by position."""
    import numpy as np
    import pandas as pd

    prepared = []
    for key, names, rows in tables:
        columns = list(zip(*rows)) if rows else [() for _ in names]
        index = pd.Index(_floats(columns[0]))
        table = {}
        for name, values in zip(names[1:], columns[1:]):
            if name in _NUMERIC:
                table[name] = np.append(_floats(values), np.nan)
            else:
                column = np.empty(len(values) + 1, dtype=object)
                column[:-1] = values
                column[-1] = np.nan
                table[name] = column
        prepared.append((key, index, table))
    return prepared


def _keep_verdict(checked: pd.DataFrame, verdict: str | None) -> pd.DataFrame:
    if verdict is None:
        return checked
    if verdict in ("passed", "flagged"):
        keep = checked["outcome"].to_numpy(dtype=object) == verdict
    else:
        keep = checked["flags"].map(lambda row: verdict in row).to_numpy(dtype=bool)
    return checked[keep]


@dataclass(frozen=True)
class CheckResult:
    """Checked frames (one row each, ``flags`` empty when passed, ``outcome`` passed, flagged,
    uncertain or unjudged) and what was required."""

    frames: pd.DataFrame
    requirement: Requirement | None
    coc_policy: str | None

    def summary_by_verdict(self) -> dict[str, int]:
        """How many frames carry each verdict, plus ``frames`` and the count of each outcome
        (``passed``, ``flagged``, ``uncertain``, ``unjudged``)."""
        from sharpzone.analysis.checks import FLAGS

        counts = {flag: 0 for flag in FLAGS}
        for flags in self.frames["flags"]:
            for flag in flags:
                counts[flag] += 1
        from sharpzone.analysis.checks import OUTCOMES

        outcomes = self.frames["outcome"].value_counts()
        summary = {"frames": len(self.frames)}
        summary.update({name: int(outcomes.get(name, 0)) for name in OUTCOMES})
        return {**summary, **{k: v for k, v in counts.items() if v}}

    def summary_by_lens(self) -> list[dict]:
        """Per lens: frames, flagged, uncertain, not judged, and the share flagged of the
        judged frames (``checks.flagged_share``; ``None`` when none was judged)."""
        from sharpzone.analysis.checks import flagged_share

        frames = self.frames.assign(lens=self.frames["lens"].fillna("(unknown lens)"))
        summary = []
        for lens, rows in frames.groupby("lens", sort=True):
            outcomes = rows["outcome"].to_numpy(dtype=object)
            summary.append({"lens": lens, "frames": len(rows), "flagged": int((outcomes == "flagged").sum()),
                            "uncertain": int((outcomes == "uncertain").sum()),
                            "unjudged": int((outcomes == "unjudged").sum()),
                            "share_flagged": flagged_share(outcomes)})
        return summary


def frames_with_zones(session: Session, where: FrameFilter = FrameFilter(), *, coc_policy: str | None = None,
                      requirement: Requirement | None = None) -> CheckResult:
    """The frames matching ``where`` with their zones and verdicts (``sharpzone frames``).

    ``coc_policy`` (text form) overrides each shoot's policy; ``requirement`` overrides each
    shoot's plan. Everything is computed now from the stored inputs.
    """
    frames = next(iter_checked(session, where, coc_policy=coc_policy, requirement=requirement, chunk_rows=None))
    return CheckResult(frames, requirement, coc_policy)


def iter_checked(session: Session, where: FrameFilter = FrameFilter(), *, coc_policy: str | None = None,
                 requirement: Requirement | None = None, chunk_rows: int | None = CHUNK_ROWS) -> Iterator[pd.DataFrame]:
    """``frames_with_zones`` a chunk at a time (see ``iter_frames``): the frames of
    ``CheckResult.frames`` in the same order, as DataFrames of at most ``chunk_rows`` rows,
    for output that is written as it is computed; none when no frame matches (``iter_frames``).
    It reads from an open cursor: finish it, or close it (``contextlib.closing``) if you stop
    early, before ``session`` ends, as ``sharpzone frames --json`` does."""
    from sharpzone.optics.coc import parse_coc_policy

    policy = parse_coc_policy(coc_policy) if coc_policy else None
    for frames in iter_frames(session, where, chunk_rows=chunk_rows):
        from sharpzone.analysis.checks import check_frames  # with the first frames
        from sharpzone.analysis.zones import add_zones

        yield _keep_verdict(check_frames(add_zones(frames, policy), requirement), where.verdict)


def require_plan(session: Session, where: FrameFilter, requirement: Requirement | None) -> None:
    """Refuse with a clear message when neither ``requirement`` nor any matching frame's
    shoot plan says what had to be sharp (asked of the database, before any frame is read)."""
    from sharpzone.catalog.frame_query import plan_status

    if requirement is not None:
        return
    any_frame, planned = plan_status(session, where)
    if any_frame and not planned:
        shoot = f"shoot {where.shoot!r} has" if where.shoot else "these shoots have"
        raise InvalidValue(
            f"{shoot} no plan, so nothing says what had to be sharp",
            hint="give --near/--far or --front/--back, or set a plan with 'sharpzone shoot edit'",
        )


def iter_check_shoot(session: Session, where: FrameFilter = FrameFilter(), *, requirement: Requirement | None = None,
                     coc_policy: str | None = None, chunk_rows: int | None = CHUNK_ROWS) -> Iterator[pd.DataFrame]:
    """``check_shoot`` a chunk at a time (for ``check --json/--jsonl``): refuses a shoot
    without a plan before the first frame is read, then yields as ``iter_checked``."""
    require_plan(session, where, requirement)
    return iter_checked(session, where, coc_policy=coc_policy, requirement=requirement, chunk_rows=chunk_rows)


def check_shoot(session: Session, where: FrameFilter = FrameFilter(), *, requirement: Requirement | None = None,
                coc_policy: str | None = None) -> CheckResult:
    """``sharpzone check``: every frame judged against ``requirement`` or its shoot's plan.

    Refuses with a clear message when neither the command nor any matching shoot's plan says
    what had to be sharp.
    """
    require_plan(session, where, requirement)
    return frames_with_zones(session, where, coc_policy=coc_policy, requirement=requirement)
