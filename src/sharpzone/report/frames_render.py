"""Rendering of frames, check verdicts and stats: rich tables, CSV and the JSON interface."""

from __future__ import annotations

import math
import os
from typing import TYPE_CHECKING, Any

from rich.console import Console
from rich.text import Text

from sharpzone.report.console import Column, fit_table, line, print_fitted, stdout_console, styled, wrap_text
from sharpzone.report.inert import inert
from sharpzone.report.jsonout import metres, plain
from sharpzone.units import format_distance, format_f_number, format_focal_length, format_length_mm, format_zone

# The verdicts' words, the checks and numpy are imported by the functions that use them, so
# a command whose selection holds no frame does without them.
if TYPE_CHECKING:
    from collections.abc import Iterable, Iterator

    import pandas as pd

    from sharpzone.analysis.frames import CheckResult
    from sharpzone.analysis.stats import StatsResult

# Our own colours for the verdicts, chosen to read on dark and light terminals.
FLAG_STYLES = {
    "too-wide-open": "bold yellow",
    "focus-misplaced": "bold magenta",
    "out-of-reach": "bold red",
    "past-diffraction": "cyan",
    "outside-plan": "blue",
    "distance-unknown": "dim",
    "settings-unknown": "dim",
    "no-requirement": "dim",
    "distance-uncertain": "yellow",
    "focus-missed": "bold bright_red",
    "soft-all-over": "bold dark_orange",
    "sharp-at-focus": "green",
    "not-measurable": "dim italic",
}
PASSED_STYLE = "green"


def _number(value: Any) -> float | None:
    if value is None:
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        return None
    return None if math.isnan(number) else number


def _bracket_end(row, name: str) -> float | None:
    """One end of the focus bracket (mm); the nominal distance where none is stored (exact)."""
    value = _number(row.get(name))
    return _number(row["focus_mm"]) if value is None else value


def frame_json(row) -> dict[str, Any]:
    """One frame in the machine interface (metres for ``_m``, mm for ``_mm``); ``row`` a
    mapping of a frames row (see ``frames_records``, which this is one row of)."""
    import pandas as pd

    return frames_records(pd.DataFrame([dict(row)]))[0]


def _number_values(frames: pd.DataFrame, name: str, scale: float = 1.0):
    """A column as floats divided by ``scale`` (NaN for unknown and for what is no number)."""
    import pandas as pd

    values = pd.to_numeric(frames[name], errors="coerce").to_numpy(dtype=float)
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
    analysed = _number(row.get("blur_analysed_long_px"))
    if analysed is None:
        return None
    data: dict[str, Any] = {
        "method": row.get("blur_method"),
        "method_version": int(_number(row.get("blur_method_version")) or 0),
        "analysed_long_px": int(analysed),
    }
    data.update({key: _number(row.get(column)) for key, column in _BLUR_NUMBERS.items()})
    data.update({
        "focus_assumed_centre": bool(row.get("blur_focus_assumed")),
        "best_where": row.get("blur_where"),
        "regions_measured": int(_number(row.get("blur_regions_measured")) or 0),
        "regions_total": int(_number(row.get("blur_regions_total")) or 0),
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


def _short_path(path: str) -> str:
    return inert(os.path.basename(path) or path, newlines=False)


def _flag_style(flag: str) -> str:
    return FLAG_STYLES.get(flag, "bold")


def _flags_text(flags: list[str], separator: str = " ") -> Text:
    parts = [styled(flag, _flag_style(flag)) for flag in flags]
    from sharpzone.analysis.checks import count_problems

    if not count_problems(flags):  # no verdict, or only notes and good news
        parts.insert(0, styled("passed", PASSED_STYLE))
    return Text(separator).join(parts)


def _measured(rows) -> bool:
    return any(_number(row.get("blur_analysed_long_px")) is not None for row in rows)


def _blur_at_focus(row) -> str:
    from sharpzone.report.verdicts import measured_blur

    return measured_blur({key: _number(row.get(key)) for key in _BLUR_AT_FOCUS}, "focus", short=True)


_BLUR_AT_FOCUS = ("blur_focus_px", "blur_floor_mm", "blur_focus_mm", "blur_focus_coc")


_focal_text = format_focal_length  # as lenses are marked: 35 mm, 4.5 mm


def _closeup(row) -> bool:
    from sharpzone.optics.dof import CLOSEUP_MAGNIFICATION

    return (_number(row["magnification"]) or 0) >= CLOSEUP_MAGNIFICATION


def _working_f(row) -> str:
    return format_f_number(_number(row["effective_f_number"])) if _closeup(row) else ""


def frame_columns(imperial: bool) -> list[Column]:
    """The columns of ``sharpzone frames``, most important first. Priority 0 is always
    shown; at a narrow terminal the highest numbers are dropped first (``--wide`` keeps
    all). Adding a column is one line here."""
    def dist(key):
        return lambda row: format_distance(_number(row[key]), imperial=imperial)

    def zone(end):
        return lambda row: _zone_text(_number(row["near_mm"]), _number(row["far_mm"]), imperial).split(" – ")[end]

    return [
        Column("File", lambda row: _short_path(row["path"])),
        Column("Lens", lambda row: row.get("lens") or "—", wrap=True, priority=3),
        Column("Focal", lambda row: _focal_text(_number(row["focal_mm"])), "right"),
        Column("Aperture", lambda row: format_f_number(_number(row["f_number"])), "right"),
        Column("Focus", lambda row: _focus_with_bracket(row, imperial, "\n"), "right"),
        Column("Near", zone(0), "right"),
        Column("Far", zone(1), "right"),
        Column("Depth", dist("total_mm"), "right", priority=4),
        Column("Working f", _working_f, "right", priority=5, shown=lambda rows: any(map(_closeup, rows))),
        Column("Hyperfocal", dist("hyperfocal_mm"), "right", priority=6),
        Column("CoC", lambda row: format_length_mm(_number(row["coc_mm"])), "right", priority=7),
        Column("Airy disk", lambda row: format_length_mm(_number(row["airy_disk_mm"])), "right", priority=8),
        Column("Blur at focus", _blur_at_focus, "right", priority=2, shown=_measured),
        Column("Verdict", lambda row: _flags_text(row["flags"], "\n")),
    ]


def render_frames(frames: pd.DataFrame, *, imperial: bool = False, wide: bool = False,
                  console: Console | None = None) -> None:
    """A table of frames with their sharp zones, fitted to the terminal (see ``frame_columns``)."""
    console = console or stdout_console()
    if frames.empty:
        console.print("No frames match.")
        return
    records = frames.to_dict("records")
    fitted = fit_table(frame_columns(imperial), records, console=console, wide=wide,
                       title=f"{len(frames)} frames", title_justify="left")
    print_fitted(console, fitted)
    console.print(_policy_line(frames) + " Distances from the sensor plane.")
    if _measured(records):
        console.print(styled(BLUR_CAUTION, "dim"))


# Shown wherever measured blur is: what it is and what it is not.
BLUR_CAUTION = ("Blur is an estimate from a small preview (the edge methods of Zhuo & Sim, 2011, and Elder & "
                "Zucker, 1998); "
                "you decide what to reject — nothing is deleted or written to an image file.")


def _focus_with_bracket(row, imperial: bool, separator: str = " ") -> str:
    """The recorded focus distance, with the camera's bracket when it is one: "2.9 m (2.8–3.1)"
    (``separator`` "\n" puts the bracket on a line of its own, for a narrow table). A bracket
    narrower than the printed precision is not shown."""
    focus = _number(row["focus_mm"])
    text = format_distance(focus, imperial=imperial)
    nearest, farthest = _bracket_end(row, "focus_near_mm"), _bracket_end(row, "focus_far_mm")
    if focus is None or nearest is None or farthest is None or not farthest > nearest * (1 + 1e-9):
        return text
    low, high = format_distance(nearest, imperial=imperial), format_distance(farthest, imperial=imperial)
    if low == high:
        return text
    unit = text.rsplit(" ", 1)[-1] if " " in text else ""
    # "2.90 m (2.80–3.10)": a metric unit once; feet and inches stay whole.
    if unit in ("mm", "cm", "m", "km") and low.endswith(" " + unit) and high.endswith(" " + unit):
        low, high = low[: -len(unit) - 1], high[: -len(unit) - 1]
    return f"{text}{separator}({low}–{high})"


_zone_text = format_zone  # one rounding rule for near – far, in units

def _policy_line(frames: pd.DataFrame) -> str:
    """Which CoC policies the figures rest on, and where each came from."""
    pairs = frames[["coc_policy", "coc_from"]].drop_duplicates().itertuples(index=False)
    return "CoC policy: " + "; ".join(sorted(f"{policy} (from the {origin})" for policy, origin in pairs)) + "."


def _plans_line(frames: pd.DataFrame, imperial: bool) -> str:
    """The shoots' plans that the frames were judged against."""
    from sharpzone.analysis.checks import Requirement

    plans = []
    columns = ["shoot", "plan_kind", "plan_near_mm", "plan_far_mm", "plan_front_mm", "plan_back_mm"]
    for shoot, kind, near, far, front, back in frames[columns].drop_duplicates().itertuples(index=False):
        requirement = Requirement.from_plan(kind, near, far, front, back)
        if requirement is not None:
            plans.append(f"{shoot}: {requirement.describe(imperial)}")
    return "; ".join(plans)


# How many flagged frames ``check`` details unless ``--all`` is given: the worst first.
CHECK_DETAIL_ROWS = 20


def _severity(flags: list[str]) -> tuple[int, int]:
    """Sort key, worst first: the most serious verdict (the order of ``FLAG_STYLES``; codes
    it does not list come after), then more verdicts before fewer."""
    order = list(FLAG_STYLES)
    ranks = [order.index(flag) if flag in order else len(order) for flag in flags]
    return (min(ranks, default=len(order)), -len(flags))


def _setting_text(row, imperial: bool) -> str:
    return (f"{_focal_text(_number(row['focal_mm']))} {format_f_number(_number(row['f_number']))}\n"
            f"focus {_focus_with_bracket(row, imperial)}")


def _zone_lines(row, imperial: bool) -> str:
    near_mm, far_mm = _number(row["near_mm"]), _number(row["far_mm"])
    if near_mm is None and far_mm is None:
        return "—"
    near, far = _zone_text(near_mm, far_mm, imperial).split(" – ")
    return f"{near} –\n{far}"


def _remedies_text(row, imperial: bool) -> Text:
    from sharpzone.report.verdicts import describe_flag

    return Text("\n").join(line(styled(flag, _flag_style(flag)), ": ", describe_flag(flag, row, imperial=imperial))
                           for flag in row["flags"])


def check_columns(imperial: bool) -> list[Column]:
    """The columns of ``check``'s flagged frames (one line each to add a column)."""
    return [
        Column("File", lambda row: _short_path(row["path"])),
        Column("Setting", lambda row: _setting_text(row, imperial)),
        Column("Sharp zone", lambda row: _zone_lines(row, imperial), priority=2),
        Column("Verdict and remedy", lambda row: _remedies_text(row, imperial), wrap=True),
    ]


def render_check(result: CheckResult, *, imperial: bool = False, show_all: bool = False, wide: bool = False,
                 console: Console | None = None) -> None:
    """Summary per verdict and per lens, then the flagged frames, worst first, with their
    remedies (the ``CHECK_DETAIL_ROWS`` worst unless ``show_all``)."""
    console = console or stdout_console()
    frames = result.frames
    if frames.empty:
        console.print("No frames match.")
        return
    summary = result.summary_by_verdict()
    against = (result.requirement.describe(imperial) if result.requirement
               else f"the plan ({_plans_line(frames, imperial)})")
    counts = f", {summary['flagged']} flagged"
    if summary["uncertain"]:
        counts += f", {summary['uncertain']} uncertain (distance known only as a bracket)"
    if summary["unjudged"]:
        counts += f", {summary['unjudged']} not judged"
    console.print(wrap_text(line(f"Checked {summary['frames']} frames against ", against, ": ",
                                 styled(f"{summary['passed']} passed", PASSED_STYLE), counts),
                            console.width))
    console.print(styled(_policy_line(frames) + " Distances from the sensor plane.", "dim"))
    from sharpzone.analysis.checks import OUTCOMES

    verdict_rows = [(flag, count) for flag, count in summary.items() if flag != "frames" and flag not in OUTCOMES]
    if verdict_rows:
        console.print()
        print_fitted(console, fit_table([
            Column("Verdict", lambda item: styled(item[0], _flag_style(item[0]))),
            Column("Frames", lambda item: str(item[1]), "right"),
        ], verdict_rows, console=console, wide=wide, title="By verdict", title_justify="left"))
    console.print()
    print_fitted(console, fit_table([
        Column("Lens", lambda item: item["lens"], wrap=True),
        Column("Frames", lambda item: str(item["frames"]), "right"),
        Column("Flagged", lambda item: str(item["flagged"]), "right"),
        Column("Uncertain", lambda item: str(item["uncertain"]), "right", priority=2),
        Column("Not judged", lambda item: str(item["unjudged"]), "right", priority=1),
        Column("Share", lambda item: "—" if item["share_flagged"] is None else f"{item['share_flagged']:.0%}", "right"),
    ], result.summary_by_lens(), console=console, wide=wide, title="By lens", title_justify="left"))
    console.print(styled("Share flagged: of the frames that could be judged (passed, flagged or uncertain).", "dim"))
    # Every frame that did not simply pass: flagged, uncertain or not judged, worst first.
    flagged = frames[frames["outcome"].to_numpy(dtype=object) != "passed"]
    if flagged.empty:
        return
    records = sorted(flagged.to_dict("records"), key=lambda row: _severity(list(row["flags"])))
    shown = records if show_all else records[:CHECK_DETAIL_ROWS]
    console.print()
    title = ("Flagged frames and what would have worked" if len(shown) == len(records)
             else f"The {len(shown)} worst of {len(records)} flagged frames and what would have worked")
    print_fitted(console, fit_table(check_columns(imperial), shown, console=console, wide=wide, show_lines=True,
                                    title=title, title_justify="left"))
    if len(shown) < len(records):
        console.print(styled(f"{len(records) - len(shown)} more flagged frames not shown: --all lists every one "
                             "(--json gives them all to scripts).", "dim"))
    from sharpzone.analysis.blur_checks import BLUR_FLAGS

    if any(flag in BLUR_FLAGS for row in shown for flag in row["flags"]):
        console.print(styled(BLUR_CAUTION, "dim"))


def _focus_text(group, imperial: bool) -> str:
    if group.median_focus_mm is None:
        focus = "unknown"
    else:
        low, high = group.focus_quartiles_mm
        focus = (f"{format_distance(group.median_focus_mm, imperial=imperial)}\nmiddle half\n"
                 f"{format_distance(low, imperial=imperial)}–{format_distance(high, imperial=imperial)}")
    if group.unknown_focus:
        focus += f"\n{group.unknown_focus} without\na distance"
    return focus


def _f_number_bars(group) -> str:
    most = max((count for _, count in group.f_number_counts), default=1)
    return "\n".join(f"{format_f_number(f_number):>6} {'█' * max(1, round(12 * count / most))} {count}"
                     for f_number, count in group.f_number_counts) or "—"


def render_stats(result: StatsResult, *, imperial: bool = False, wide: bool = False,
                 console: Console | None = None) -> None:
    """Per lens and body: frames, an f-number histogram, share flagged, typical focus."""
    console = console or stdout_console()
    if not result.lenses:
        console.print("No frames match.")
        return
    columns = [
        Column("Name", lambda group: group.name, wrap=True),
        Column("Frames", lambda group: str(group.frames), "right"),
        Column("f-numbers used", _f_number_bars),
        Column("Flagged", lambda group: "—" if group.share_flagged is None else f"{group.share_flagged:.0%}", "right"),
        Column("Typical focus", lambda group: _focus_text(group, imperial)),
        Column("Blur measured", lambda group: f"{group.blur_measured} frames\n{group.focus_missed} focus missed\n"
                                              f"{group.soft_all_over} soft all over", priority=1,
               shown=lambda groups: any(group.blur_measured for group in groups)),
    ]
    for title, groups in (("Lenses", result.lenses), ("Bodies", result.bodies)):
        print_fitted(console, fit_table(columns, groups, console=console, wide=wide, show_lines=True,
                                        title=title, title_justify="left"))


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
