"""The machine interface of frames, check verdicts and stats: the JSON objects, JSON and JSON
Lines streams and CSV that ``--json``, ``--jsonl`` and ``--csv`` write (README, "Machine
interface"). No rich here: a script's command loads no table renderer."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

from sharpzone.report.jsonout import metres, plain

# The checks, pandas and numpy are imported by the functions that use them, so a command
# whose selection holds no frame does without them.
if TYPE_CHECKING:
    from collections.abc import Iterable, Iterator

    import pandas as pd

    from sharpzone.analysis.stats import StatsResult


def known_number(value: Any) -> float | None:
    """``value`` as a float, ``None`` where it is missing, not a number, or NaN."""
    if value is None:
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        return None
    return None if math.isnan(number) else number


def bracket_end(row, name: str) -> float | None:
    """One end of the focus bracket (mm); the nominal distance where none is stored (exact)."""
    value = known_number(row.get(name))
    return known_number(row["focus_mm"]) if value is None else value


def frame_json(row) -> dict[str, Any]:
    """One frame in the machine interface (metres for ``_m``, mm for ``_mm``); ``row`` a
    mapping of a frames row (see ``frames_records``, which this is one row of)."""
    import pandas as pd

    return frames_records(pd.DataFrame([dict(row)]))[0]


def _number_values(frames: pd.DataFrame, name: str, scale: float = 1.0):
    """A column as floats divided by ``scale`` (NaN for unknown and for what is no number)."""
    from sharpzone.report.cells import float_values

    values = float_values(frames[name])
    return values / scale if scale != 1.0 else values


def _numbers(frames: pd.DataFrame, name: str, scale: float = 1.0, inf: str | None = None):
    """A column as JSON values (a ``NumberColumn``, or a list where the column is missing):
    floats, ``None`` for unknown, ``"inf"``/``"-inf"`` for infinity (``inf`` overrides
    both, as distances are ``"inf"`` either way)."""
    if name not in frames:
        return [None] * len(frames)
    return _with_infinity(_number_values(frames, name, scale), inf)


def _with_infinity(values, inf: str | None = None):
    import numpy as np

    from sharpzone.report.cells import NumberColumn

    return NumberColumn(values, ((np.isposinf(values), inf or "inf"), (np.isneginf(values), inf or "-inf")))


def _metres(frames: pd.DataFrame, name: str):
    return _numbers(frames, name, 1000.0, inf="inf")


def _whole(frames: pd.DataFrame, name: str, positive: bool = False):
    """A column as whole numbers, ``None`` for unknown (and for ≤ 0 when ``positive``)."""
    import numpy as np

    from sharpzone.report.cells import NumberColumn

    values = _number_values(frames, name)
    known = np.isfinite(values) & (values > 0 if positive else True)
    return NumberColumn(np.trunc(np.where(known, values, 0)).astype(np.int64), ((~known, None),))


def _texts(frames: pd.DataFrame, name: str, strings_only: bool = False) -> list:
    """A column as JSON values: unknown (NaN, None) → ``None``; with ``strings_only``
    anything but text → ``None``."""
    import pandas as pd

    if name not in frames:
        return [None] * len(frames)
    if strings_only:
        return [value if isinstance(value, str) else None for value in frames[name].tolist()]
    values = frames[name].to_numpy(dtype=object)
    unknown = pd.isna(values)
    if unknown.any():
        values = values.copy()
        values[unknown] = None
    return values.tolist()


def _records(frames: pd.DataFrame, names=None) -> list[dict[str, Any]]:
    """Rows as plain dicts, a column at a time (``DataFrame.to_dict`` boxes every value)."""
    names = list(frames.columns) if names is None else names
    return _objects(tuple(names), [frames[name].tolist() for name in names])


def _timestamps(frames: pd.DataFrame, name: str) -> list:
    """ISO 8601 local times (``datetime.isoformat``: seconds, microseconds only when set)."""
    import numpy as np

    stamps = frames[name].to_numpy(dtype="datetime64[us]")
    known = ~np.isnat(stamps)
    whole = (stamps.astype(np.int64) % 1_000_000) == 0
    text = np.where(whole, np.datetime_as_string(stamps, unit="s"), np.datetime_as_string(stamps, unit="us"))
    out = text.astype(object)
    out[~known] = None
    return out.tolist()


def _objects(keys: tuple[str, ...], columns: list) -> list[dict[str, Any]]:
    from sharpzone.report.cells import as_list

    return [dict(zip(keys, values)) for values in zip(*map(as_list, columns))]


_FRAME_KEYS = ("path", "shoot", "body", "lens", "focal_mm", "f_number", "exposure_s", "iso", "captured_at",
               "utc_offset_minutes", "focus_m", "focus_near_m", "focus_far_m", "focus_key", "focus_source",
               "format", "coc_mm", "coc_policy", "coc_from", "near_m", "far_m", "hyperfocal_m", "total_m",
               "magnification", "effective_f_number", "airy_disk_mm", "blur", "flags")


def _bracket(frames: pd.DataFrame, name: str):
    """One end of the focus bracket (m); the nominal distance where none is stored (exact)."""
    import numpy as np

    nominal = _number_values(frames, "focus_mm", 1000.0)
    if name not in frames:
        return _with_infinity(nominal, "inf")
    ends = _number_values(frames, name, 1000.0)
    return _with_infinity(np.where(np.isnan(ends), nominal, ends), "inf")


def frames_records(frames: pd.DataFrame) -> list[dict[str, Any]]:
    """The frames in the machine interface, one object each, built a column at a time
    (metres for ``_m``, mm for ``_mm``, ``"inf"`` for infinity, ``None`` for unknown)."""
    return _objects(*_frame_object_columns(frames))


def _blur_column(frames: pd.DataFrame) -> list:
    count = len(frames)
    measured = frames.index[frames["blur_analysed_long_px"].notna()] if "blur_analysed_long_px" in frames else []
    blur: list = [None] * count
    if len(measured):
        positions = frames.index.get_indexer(measured)
        for position, row in zip(positions, _records(frames.iloc[positions])):
            blur[position] = plain(blur_json(row))
    return blur


def _flag_lists(frames: pd.DataFrame, name: str) -> list:
    # The lists as they are (rows with the same flags share one; nothing changes them).
    return [flags if type(flags) is list else list(flags) for flags in frames[name].tolist()]


def _strings(frames: pd.DataFrame, name: str) -> list:
    return _texts(frames, name, strings_only=True)


# Each key of a frame's object: the function that makes its column and the frames column it reads.
_FRAME_COLUMNS = {
    "path": (_texts, "path"), "shoot": (_texts, "shoot"), "body": (_texts, "body"), "lens": (_texts, "lens"),
    "focal_mm": (_numbers, "focal_mm"), "f_number": (_numbers, "f_number"), "exposure_s": (_numbers, "exposure_s"),
    "iso": (_whole, "iso"), "captured_at": (_timestamps, "captured_at"),
    "utc_offset_minutes": (_whole, "utc_offset_minutes"), "focus_m": (_metres, "focus_mm"),
    "focus_near_m": (_bracket, "focus_near_mm"), "focus_far_m": (_bracket, "focus_far_mm"),
    "focus_key": (_strings, "focus_key"), "focus_source": (_texts, "focus_source"),
    "format": (_texts, "format_name"), "coc_mm": (_numbers, "coc_mm"), "coc_policy": (_texts, "coc_policy"),
    "coc_from": (_texts, "coc_from"), "near_m": (_metres, "near_mm"), "far_m": (_metres, "far_mm"),
    "hyperfocal_m": (_metres, "hyperfocal_mm"), "total_m": (_metres, "total_mm"),
    "magnification": (_numbers, "magnification"), "effective_f_number": (_numbers, "effective_f_number"),
    "airy_disk_mm": (_numbers, "airy_disk_mm"), "blur": (_blur_column, None), "flags": (_flag_lists, "flags"),
}


def _frame_columns(frames: pd.DataFrame, keys: tuple[str, ...] = _FRAME_KEYS) -> list[list]:
    """The columns of the frames' objects for ``keys`` (all of them unless told)."""
    columns = []
    for key in keys:
        make, name = _FRAME_COLUMNS[key]
        columns.append(make(frames) if name is None else make(frames, name))
    return columns


def blur_json(row) -> dict[str, Any] | None:
    """The measured blur of a frame (``None`` if never measured): disk diameters in pixels
    of the analysed preview, in mm on the sensor and as multiples of the CoC."""
    analysed = known_number(row.get("blur_analysed_long_px"))
    if analysed is None:
        return None
    data: dict[str, Any] = {
        "method": row.get("blur_method"),
        "method_version": int(known_number(row.get("blur_method_version")) or 0),
        "analysed_long_px": int(analysed),
    }
    data.update({key: known_number(row.get(column)) for key, column in _BLUR_NUMBERS.items()})
    data.update({
        "focus_assumed_centre": bool(row.get("blur_focus_assumed")),
        "best_where": row.get("blur_where"),
        "regions_measured": int(known_number(row.get("blur_regions_measured")) or 0),
        "regions_total": int(known_number(row.get("blur_regions_total")) or 0),
        "note": "an estimate from a small preview; you decide what to reject",
    })
    return data


# JSON key → frames column of the blur figures (px of the analysed preview, mm on the
# sensor, multiples of the CoC, positions as fractions of the picture).
_BLUR_NUMBERS = {
    "focus_blur_px": "blur_focus_px", "focus_blur_mm": "blur_focus_mm", "focus_blur_coc": "blur_focus_coc",
    "focus_x": "blur_focus_x", "focus_y": "blur_focus_y", "focus_edges": "blur_focus_edges",
    "best_blur_px": "blur_best_px", "best_blur_mm": "blur_best_mm", "best_blur_coc": "blur_best_coc",
    "best_x": "blur_best_x", "best_y": "blur_best_y", "median_blur_px": "blur_median_px",
    "median_blur_mm": "blur_median_mm", "limit_px": "blur_limit_px",
}


def check_json(row) -> dict[str, Any]:
    """One checked frame: the frame's object plus the requirement and remedies (one row of
    ``check_records``)."""
    import pandas as pd

    return check_records(pd.DataFrame([dict(row)]))[0]


_CHECK_KEYS = ("required_near_m", "required_far_m", "needed_f_number", "better_focus_m", "better_f_number",
               "stack_frames", "stack_f_number", "single_frame_f_number", "remedy", "holds_share", "outcome",
               "remedies")


def check_records(frames: pd.DataFrame) -> list[dict[str, Any]]:
    """Checked frames in the machine interface: each frame's object (``frames_records``)
    plus the requirement and remedies, built a column at a time; the remedies' words only
    for frames with a verdict."""
    return _objects(*_check_object_columns(frames))


def _frame_object_columns(frames: pd.DataFrame) -> tuple[tuple[str, ...], list[list]]:
    return _FRAME_KEYS, _frame_columns(frames)


def _check_object_columns(frames: pd.DataFrame) -> tuple[tuple[str, ...], list[list]]:
    """The keys and columns of ``check_records``."""
    from sharpzone.report.verdicts import describe_flags

    remedies = describe_flags(frames)
    remedy = [value or None for value in _texts(frames, "remedy")]
    columns = [
        _metres(frames, "required_near_mm"), _metres(frames, "required_far_mm"), _numbers(frames, "needed_f_number"),
        _metres(frames, "better_focus_mm"), _numbers(frames, "better_f_number"),
        _whole(frames, "stack_frames", positive=True), _numbers(frames, "stack_f_number"),
        _numbers(frames, "single_frame_f_number"), remedy, _numbers(frames, "holds_share"),
        _texts(frames, "outcome"), remedies,
    ]
    return _FRAME_KEYS + _CHECK_KEYS, _frame_columns(frames) + columns


def rows_json(frames: pd.DataFrame, item=frame_json) -> list[dict[str, Any]]:
    """Every row in the machine interface: ``item`` is ``frame_json`` or ``check_json``."""
    return (check_records if item is check_json else frames_records)(frames)


CSV_COLUMNS = ("path", "shoot", "body", "lens", "focal_mm", "f_number", "focus_m", "focus_source", "coc_mm",
               "coc_policy", "near_m", "far_m", "hyperfocal_m", "total_m", "effective_f_number", "flags")


def stream_csv(chunks: Iterable[pd.DataFrame]) -> Iterator[str]:
    """Frames as CSV text (distances in metres, ``inf`` for infinity, flags joined by ``;``,
    text a spreadsheet would run marked), a piece per chunk of frames (the header first),
    as ``csv.writer`` writes it (``report.cells``)."""
    from sharpzone.report.cells import csv_lines

    yield csv_lines([[name] for name in CSV_COLUMNS])
    for frames in chunks:
        yield csv_lines(_frame_columns(frames, CSV_COLUMNS))


def _encoded(frames: pd.DataFrame, checked: bool, separator: bytes) -> bytes:
    """The frames' objects (``check_records`` when ``checked``, else ``frames_records``) as
    compact UTF-8 JSON joined by ``separator``, as orjson writes each object (every value
    already plain but the blur's: no NaN, infinity as ``"inf"``)."""
    from sharpzone.report.cells import json_objects

    keys, columns = (_check_object_columns if checked else _frame_object_columns)(frames)
    return separator.join(json_objects(keys, columns, default=plain))


def stream_json(chunks: Iterable[pd.DataFrame], checked: bool = False) -> Iterator[bytes]:
    """The ``--json`` document as UTF-8, written as each chunk of frames is: a list of objects
    (``check_records`` when ``checked``, else ``frames_records``), one compact object a
    line, each line indented by two spaces; ``[]`` when no frame matches."""
    started = False
    for frames in chunks:
        if frames.empty:
            continue
        yield b",\n  " if started else b"[\n  "
        yield _encoded(frames, checked, b",\n  ")  # not added to the above: a chunk's text is copied once
        started = True
    yield b"\n]\n" if started else b"[]\n"


def stream_jsonl(chunks: Iterable[pd.DataFrame], checked: bool = False) -> Iterator[bytes]:
    """``--jsonl``: the objects of ``stream_json``, one a line, nothing around them (UTF-8)."""
    for frames in chunks:
        if not frames.empty:
            yield _encoded(frames, checked, b"\n")
            yield b"\n"


def stats_json(result: StatsResult) -> dict[str, Any]:
    def group(item):
        return {
            "name": item.name, "frames": item.frames,
            "f_numbers": [{"f_number": f, "frames": n} for f, n in item.f_number_counts],
            "share_flagged": item.share_flagged,
            "median_focus_m": metres(item.median_focus_mm),
            "focus_quartiles_m": [metres(v) for v in item.focus_quartiles_mm] if item.focus_quartiles_mm else None,
            "unknown_focus": item.unknown_focus,
            "blur_measured": item.blur_measured,
            "focus_missed": item.focus_missed,
            "soft_all_over": item.soft_all_over,
        }

    return {"lenses": [group(g) for g in result.lenses], "bodies": [group(g) for g in result.bodies]}
