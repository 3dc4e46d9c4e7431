"""Rendering of frames, check verdicts and stats: rich tables, CSV and the JSON interface."""

from __future__ import annotations

import io
import math
import os
from typing import TYPE_CHECKING, Any

from rich.console import Console
from rich.table import Table

from sharpzone.optics.dof import CLOSEUP_MAGNIFICATION
from sharpzone.report.console import stdout_console
from sharpzone.report.jsonout import metres
from sharpzone.report.verdicts import describe_flag
from sharpzone.units import format_distance, format_f_number, format_length_mm, format_zone

if TYPE_CHECKING:
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


def frame_json(row) -> dict[str, Any]:
    """One frame in the machine interface (metres for ``_m``, mm for ``_mm``)."""
    captured = row.get("captured_at")
    offset = _number(row.get("utc_offset_minutes"))
    return {
        "path": row["path"],
        "shoot": row.get("shoot"),
        "body": row.get("body"),
        "lens": row.get("lens"),
        "focal_mm": _number(row["focal_mm"]),
        "f_number": _number(row["f_number"]),
        "exposure_s": _number(row.get("exposure_s")),
        "iso": _number(row.get("iso")),
        "captured_at": None if captured is None or captured != captured else captured.isoformat(),
        "utc_offset_minutes": int(offset) if offset is not None else None,
        "focus_m": metres(_number(row["focus_mm"])),
        "focus_source": row.get("focus_source"),
        "format": row.get("format_name"),
        "coc_mm": _number(row["coc_mm"]),
        "coc_policy": row["coc_policy"],
        "coc_from": row["coc_from"],
        "near_m": metres(_number(row["near_mm"])),
        "far_m": metres(_number(row["far_mm"])),
        "hyperfocal_m": metres(_number(row["hyperfocal_mm"])),
        "total_m": metres(_number(row["total_mm"])),
        "magnification": _number(row["magnification"]),
        "effective_f_number": _number(row["effective_f_number"]),
        "airy_disk_mm": _number(row["airy_disk_mm"]),
        "flags": list(row["flags"]),
    }


def check_json(row) -> dict[str, Any]:
    """One checked frame: the frame's object plus the requirement and remedies."""
    data = frame_json(row)
    stack = _number(row["stack_frames"])
    data.update({
        "required_near_m": metres(_number(row["required_near_mm"])),
        "required_far_m": metres(_number(row["required_far_mm"])),
        "needed_f_number": _number(row["needed_f_number"]),
        "better_focus_m": metres(_number(row["better_focus_mm"])),
        "better_f_number": _number(row["better_f_number"]),
        "stack_frames": int(stack) if stack is not None and stack > 0 else None,
        "remedies": [{"flag": flag, "text": describe_flag(flag, row)} for flag in row["flags"]],
    })
    return data


def rows_json(frames: pd.DataFrame, item=frame_json) -> list[dict[str, Any]]:
    return [item(row) for row in frames.to_dict("records")]


CSV_COLUMNS = ("path", "shoot", "body", "lens", "focal_mm", "f_number", "focus_m", "focus_source", "coc_mm",
               "coc_policy", "near_m", "far_m", "hyperfocal_m", "total_m", "effective_f_number", "flags")


def frames_csv(frames: pd.DataFrame) -> str:
    """Frames as CSV text: distances in metres, ``inf`` for infinity, flags joined by ``;``."""
    import csv

    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(CSV_COLUMNS)
    for row in rows_json(frames):
        values = []
        for column in CSV_COLUMNS:
            value = row.get(column)
            if column == "flags":
                value = ";".join(value)
            values.append("" if value is None else value)
        writer.writerow(values)
    return buffer.getvalue()


def _short_path(path: str) -> str:
    return os.path.basename(path) or path


def _flags_text(flags: list[str], separator: str = " ") -> str:
    if not flags:
        return f"[{PASSED_STYLE}]passed[/]"
    return separator.join(f"[{FLAG_STYLES.get(flag, 'bold')}]{flag}[/]" for flag in flags)


def _micrometres(value_mm: float | None) -> str:
    """A small length such as the Airy disk in µm (one decimal)."""
    return "—" if value_mm is None else f"{value_mm * 1000:.1f} µm"


def render_frames(frames: pd.DataFrame, *, imperial: bool = False, console: Console | None = None) -> None:
    """A table of frames with their sharp zones."""
    console = console or stdout_console()
    if frames.empty:
        console.print("No frames match.")
        return
    table = Table(title=f"{len(frames)} frames", title_justify="left")
    records = frames.to_dict("records")
    closeup = any((_number(row["magnification"]) or 0) >= CLOSEUP_MAGNIFICATION for row in records)
    headers = [("File", "left"), ("Lens", "left"), ("Focal", "right"), ("Aperture", "right"), ("Focus", "right"),
               ("Near", "right"), ("Far", "right"), ("Depth", "right"), ("Hyperfocal", "right"), ("CoC", "right"),
               ("Airy disk", "right")]
    if closeup:
        headers.append(("Working f", "right"))
    for header, justify in (*headers, ("Verdict", "left")):
        table.add_column(header, justify=justify, no_wrap=header != "Lens", min_width=12 if header == "Lens" else None)
    for row in records:
        near, far = _number(row["near_mm"]), _number(row["far_mm"])
        cells = [
            _short_path(row["path"]), row.get("lens") or "—",
            format_length_mm(_number(row["focal_mm"])), format_f_number(_number(row["f_number"])),
            format_distance(_number(row["focus_mm"]), imperial=imperial),
            *_zone_text(near, far, imperial).split(" – "),
            format_distance(_number(row["total_mm"]), imperial=imperial),
            format_distance(_number(row["hyperfocal_mm"]), imperial=imperial),
            format_length_mm(_number(row["coc_mm"])), _micrometres(_number(row["airy_disk_mm"])),
        ]
        if closeup:
            magnification = _number(row["magnification"]) or 0
            cells.append(format_f_number(_number(row["effective_f_number"]))
                         if magnification >= CLOSEUP_MAGNIFICATION else "")
        table.add_row(*cells, _flags_text(row["flags"], "\n"))
    console.print(table)
    console.print(_policy_line(frames) + " Distances from the sensor plane.")


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
        if kind in ("range", "depth"):
            requirement = Requirement(kind, near_mm=near, far_mm=far, front_mm=front, back_mm=back)
            plans.append(f"{shoot}: {requirement.describe(imperial)}")
    return "; ".join(plans)


def render_check(result: CheckResult, *, imperial: bool = False, console: Console | None = None) -> None:
    """Summary per verdict and per lens, then each flagged frame with its remedies."""
    console = console or stdout_console()
    frames = result.frames
    if frames.empty:
        console.print("No frames match.")
        return
    summary = result.summary_by_verdict()
    against = (result.requirement.describe(imperial) if result.requirement
               else f"the plan ({_plans_line(frames, imperial)})")
    heading = (f"Checked {summary['frames']} frames against {against}: "
               f"[{PASSED_STYLE}]{summary['passed']} passed[/], {summary['frames'] - summary['passed']} flagged")
    console.print(heading)
    console.print(_policy_line(frames) + " Distances from the sensor plane.", style="dim")
    verdicts = Table(title="By verdict", title_justify="left")
    verdicts.add_column("Verdict")
    verdicts.add_column("Frames", justify="right")
    for flag, count in summary.items():
        if flag not in ("frames", "passed"):
            verdicts.add_row(f"[{FLAG_STYLES.get(flag, 'bold')}]{flag}[/]", str(count))
    if len(verdicts.rows):
        console.print(verdicts)
    lenses = Table(title="By lens", title_justify="left")
    for header in ("Lens", "Frames", "Flagged", "Share"):
        lenses.add_column(header, justify="left" if header == "Lens" else "right")
    for item in result.summary_by_lens():
        lenses.add_row(item["lens"], str(item["frames"]), str(item["flagged"]), f"{item['share_flagged']:.0%}")
    console.print(lenses)
    flagged = result.flagged
    if flagged.empty:
        return
    detail = Table(title="Flagged frames and what would have worked", title_justify="left", show_lines=True)
    detail.add_column("File")
    detail.add_column("Setting")
    detail.add_column("Sharp zone")
    detail.add_column("Verdict and remedy")
    for row in flagged.to_dict("records"):
        setting = (f"{format_length_mm(_number(row['focal_mm']))} {format_f_number(_number(row['f_number']))} @ "
                   f"{format_distance(_number(row['focus_mm']), imperial=imperial)}")
        zone = _zone_text(_number(row["near_mm"]), _number(row["far_mm"]), imperial)
        remedies = "\n".join(f"[{FLAG_STYLES.get(flag, 'bold')}]{flag}[/]: {describe_flag(flag, row, imperial=imperial)}"
                             for flag in row["flags"])
        detail.add_row(_short_path(row["path"]), setting, zone, remedies)
    console.print(detail)


def render_stats(result: StatsResult, *, imperial: bool = False, console: Console | None = None) -> None:
    """Per lens and body: frames, an f-number histogram, share flagged, typical focus."""
    console = console or stdout_console()
    if not result.lenses:
        console.print("No frames match.")
        return
    for title, groups in (("Lenses", result.lenses), ("Bodies", result.bodies)):
        table = Table(title=title, title_justify="left", show_lines=True)
        for header in ("Name", "Frames", "f-numbers used", "Flagged", "Typical focus"):
            table.add_column(header, justify="right" if header in ("Frames", "Flagged") else "left")
        for group in groups:
            most = max((count for _, count in group.f_number_counts), default=1)
            bars = "\n".join(f"{format_f_number(f_number):>6} {'█' * max(1, round(12 * count / most))} {count}"
                             for f_number, count in group.f_number_counts) or "—"
            flagged = "—" if group.share_flagged is None else f"{group.share_flagged:.0%}"
            if group.median_focus_mm is None:
                focus = "unknown"
            else:
                low, high = group.focus_quartiles_mm
                focus = (f"{format_distance(group.median_focus_mm, imperial=imperial)} (middle half "
                         f"{format_distance(low, imperial=imperial)}–{format_distance(high, imperial=imperial)})")
            if group.unknown_focus:
                focus += f"\n{group.unknown_focus} without a distance"
            table.add_row(group.name, str(group.frames), bars, flagged, focus)
        console.print(table)


def stats_json(result: StatsResult) -> dict[str, Any]:
    def group(item):
        return {
            "name": item.name, "frames": item.frames,
            "f_numbers": [{"f_number": f, "frames": n} for f, n in item.f_number_counts],
            "share_flagged": item.share_flagged,
            "median_focus_m": metres(item.median_focus_mm),
            "focus_quartiles_m": [metres(v) for v in item.focus_quartiles_mm] if item.focus_quartiles_mm else None,
            "unknown_focus": item.unknown_focus,
        }

    return {"lenses": [group(g) for g in result.lenses], "bodies": [group(g) for g in result.bodies]}
