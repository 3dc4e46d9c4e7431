"""Catalogue nouns for people (rich tables) and for scripts (JSON objects).

A list fits the terminal (``report.console.fit_table``): each field has a priority (0 is
always shown) and text fields may wrap; ``--wide`` shows every column.

Each noun has one list of ``Field``s: the label and text (with units) people see, and the
JSON keys and values scripts get (metres or millimetres as the key says, infinity as
"inf", unknown as null). A list shows the fields marked ``in_list``; ``show`` all of them.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import Any

from rich.console import Console
from rich.table import Table

from sharpzone.report.console import Column, fit_table, print_fitted, stdout_console
from sharpzone.report.jsonout import metres
from sharpzone.units import format_distance, format_f_number, format_length_mm


@dataclass(frozen=True)
class Field:
    """One piece of a catalogue row: ``text(row, imperial)`` for people, ``json(row)`` for
    scripts (a dict, since one field may give several keys)."""

    label: str
    text: Callable[[Any, bool], str]
    json: Callable[[Any], dict]
    in_list: bool = True
    priority: int = 0  # in a list too wide for the terminal, the highest numbers go first
    wrap: bool = False  # text that may wrap at spaces (numbers never do)


def _plain(attribute: str, label: str, *, in_list: bool = True, priority: int = 0, wrap: bool = True) -> Field:
    return Field(label, lambda row, _: _or_dash(getattr(row, attribute)), lambda row: {attribute: getattr(row, attribute)},
                 in_list, priority, wrap)


def _or_dash(value: Any) -> str:
    return "—" if value is None or value == "" else str(value)


def _yes_no(value: bool) -> str:
    return "yes" if value else "no (registered from EXIF)"


def _focal_range(low: float, high: float) -> str:
    return f"{low:g} mm" if low == high else f"{low:g}–{high:g} mm"


def _aperture_range(wide: float, tele: float) -> str:
    return format_f_number(wide) if wide == tele else f"{format_f_number(wide)}–{tele:g}"


FORMAT_FIELDS = [
    _plain("name", "Name"),
    Field("Size", lambda r, _: f"{r.width_mm:g} × {r.height_mm:g} mm",
          lambda r: {"width_mm": r.width_mm, "height_mm": r.height_mm}),
    Field("Diagonal", lambda r, _: format_length_mm(r.to_core().diagonal_mm),
          lambda r: {"diagonal_mm": r.to_core().diagonal_mm}, priority=3),
    Field("Crop factor", lambda r, _: f"{r.to_core().crop_factor:.2f}×", lambda r: {"crop_factor": r.to_core().crop_factor}),
    Field("Default CoC", lambda r, _: f"{format_length_mm(r.to_core().diagonal_mm / r.coc_divisor)} (d/{r.coc_divisor:g})",
          lambda r: {"coc_divisor": r.coc_divisor, "coc_mm": r.to_core().diagonal_mm / r.coc_divisor}),
    Field("Also called", lambda r, _: ", ".join(r.alias_list) or "—", lambda r: {"aliases": r.alias_list}, priority=2,
          wrap=True),
    _plain("description", "Description", in_list=False),
    _plain("source", "Source", in_list=False),
]

BODY_FIELDS = [
    _plain("name", "Name"),
    Field("EXIF make / model", lambda r, _: f"{r.exif_make} / {r.exif_model}",
          lambda r: {"exif_make": r.exif_make, "exif_model": r.exif_model}, wrap=True),
    Field("Serial", lambda r, _: r.serial or "any", lambda r: {"serial": r.serial}, priority=3),
    Field("Format", lambda r, _: r.sensor_format.name if r.sensor_format else "unknown (frames not judged)",
          lambda r: {"format": r.sensor_format.name if r.sensor_format else None}, wrap=True),
    Field("Pixels", lambda r, _: f"{r.pixel_width} × {r.pixel_height} px" if r.pixel_width and r.pixel_height else "—",
          lambda r: {"pixel_width": r.pixel_width, "pixel_height": r.pixel_height}, priority=2),
    Field("Pixel pitch", lambda r, _: format_length_mm(r.pixel_pitch_mm), lambda r: {"pixel_pitch_mm": r.pixel_pitch_mm},
          in_list=False),
    Field("Confirmed", lambda r, _: _yes_no(r.confirmed), lambda r: {"confirmed": r.confirmed}, priority=1, wrap=True),
]

def _magnification_text(value: float | None) -> str:
    from sharpzone.optics.magnification import format_magnification

    return "—" if value is None else format_magnification(value)


LENS_FIELDS = [
    _plain("name", "Name"),
    Field("Focal length", lambda r, _: _focal_range(r.focal_min_mm, r.focal_max_mm),
          lambda r: {"focal_min_mm": r.focal_min_mm, "focal_max_mm": r.focal_max_mm}),
    Field("Widest aperture", lambda r, _: _aperture_range(r.max_aperture_wide, r.max_aperture_tele),
          lambda r: {"max_aperture_wide": r.max_aperture_wide, "max_aperture_tele": r.max_aperture_tele}),
    Field("Smallest aperture", lambda r, _: format_f_number(r.min_aperture), lambda r: {"min_aperture": r.min_aperture},
          priority=3),
    Field("Close focus", lambda r, imperial: format_distance(r.close_focus_mm, imperial=imperial),
          lambda r: {"close_focus_m": metres(r.close_focus_mm)}, priority=2),
    Field("Max magnification", lambda r, _: _magnification_text(r.max_magnification),
          lambda r: {"max_magnification": r.max_magnification}, priority=4),
    Field("Pupil magnification", lambda r, _: f"{r.pupil_magnification:g}", lambda r: {"pupil_magnification": r.pupil_magnification},
          in_list=False),
    Field("EXIF names", lambda r, _: ", ".join(a.exif_name for a in r.aliases) or "—",
          lambda r: {"exif_names": [a.exif_name for a in r.aliases]}, priority=4, wrap=True),
    Field("Confirmed", lambda r, _: _yes_no(r.confirmed), lambda r: {"confirmed": r.confirmed}, priority=1, wrap=True),
]


def _plan_text(shoot, imperial: bool) -> str:
    def dist(value_mm):
        return format_distance(value_mm, imperial=imperial)

    if shoot.plan_kind == "range":
        return f"sharp from {dist(shoot.plan_near_mm)} to {dist(shoot.plan_far_mm)}"
    if shoot.plan_kind == "depth":
        return f"{dist(shoot.plan_front_mm)} in front of the focus point, {dist(shoot.plan_back_mm)} behind"
    return "—"


def _planned_text(shoot, imperial: bool) -> str:
    parts = []
    if shoot.planned_focal_mm:
        parts.append(f"{shoot.planned_focal_mm:g} mm")
    if shoot.planned_f_number:
        parts.append(format_f_number(shoot.planned_f_number))
    if shoot.planned_focus_mm:
        parts.append(f"focus at {format_distance(shoot.planned_focus_mm, imperial=imperial)}")
    return ", ".join(parts) or "—"


SHOOT_FIELDS = [
    _plain("name", "Name"),
    Field("Created (UTC)", lambda r, _: r.created_at.strftime("%Y-%m-%d %H:%M"), lambda r: {"created_at": r.created_at},
          priority=2),
    Field("Plan", _plan_text, wrap=True, json=lambda r: {
        "plan_kind": r.plan_kind,
        "plan_near_m": metres(r.plan_near_mm),
        "plan_far_m": metres(r.plan_far_mm),
        "plan_front_m": metres(r.plan_front_mm),
        "plan_back_m": metres(r.plan_back_mm),
    }),
    Field("Planned setting", _planned_text, priority=1, wrap=True, json=lambda r: {
        "planned_focal_mm": r.planned_focal_mm,
        "planned_f_number": r.planned_f_number,
        "planned_focus_m": metres(r.planned_focus_mm),
    }),
    Field("CoC policy", lambda r, _: r.coc_policy or "each format's own rule", lambda r: {"coc_policy": r.coc_policy},
          priority=3, wrap=True),
    _plain("root_folder", "Folder", in_list=False),
    _plain("notes", "Notes", in_list=False),
]


def row_json(row: Any, fields: Iterable[Field]) -> dict:
    """One row as the JSON object scripts get."""
    record: dict = {}
    for field in fields:
        record.update(field.json(row))
    return record


def render_rows(rows: list, fields: list[Field], *, title: str, empty: str, imperial: bool = False, wide: bool = False,
                console: Console | None = None) -> None:
    """A table with one row per catalogue row and the ``in_list`` fields as columns, fitted
    to the terminal (the fields' priorities say which go first; ``wide`` keeps all)."""
    console = console or stdout_console()
    if not rows:
        console.print(empty)
        return
    columns = [Column(field.label, (lambda field: lambda row: field.text(row, imperial))(field),
                      priority=field.priority, wrap=field.wrap)
               for field in fields if field.in_list]
    print_fitted(console, fit_table(columns, rows, console=console, wide=wide, title=title, title_justify="left"))


def render_record(row: Any, fields: list[Field], *, title: str, imperial: bool = False,
                  console: Console | None = None) -> None:
    """Every field of one row, label beside value."""
    console = console or stdout_console()
    table = Table(title=title, show_header=False, box=None, pad_edge=False, title_justify="left")
    table.add_column(style="bold")
    table.add_column()
    for field in fields:
        table.add_row(field.label, field.text(row, imperial))
    console.print(table)


def info_json(info) -> dict:
    """``catalog info --json``."""
    return {
        "location": info.location,
        "backend": info.backend,
        "path": info.path,
        "file_size_bytes": info.file_size_bytes,
        "revision": info.revision,
        "newest_revision": info.newest_revision,
        "row_counts": dict(info.row_counts),
    }


def render_info(info, *, console: Console | None = None) -> None:
    """Where the catalogue is, its schema revision and how many rows each table holds."""
    console = console or stdout_console()
    table = Table(title="Catalogue", show_header=False, box=None, pad_edge=False, title_justify="left")
    table.add_column(style="bold")
    table.add_column()
    table.add_row("Location", info.location)
    table.add_row("Database", info.backend)
    if info.file_size_bytes is not None:
        table.add_row("File size", f"{info.file_size_bytes / 1024:.0f} KiB")
    revision = info.revision or "—"
    if info.revision != info.newest_revision:
        revision += f" (this program's newest: {info.newest_revision})"
    table.add_row("Schema revision", revision)
    for name, count in info.row_counts.items():
        table.add_row(name.replace("_", " ").capitalize() + " rows", f"{count:,}")
    console.print(table)


def render_counts(title: str, columns: dict[str, dict[str, int]], *, console: Console | None = None) -> None:
    """A titled table of row counts: one line per catalogue table, one column per heading
    in ``columns`` (e.g. {"Rows": ...} for an export; Added/Replaced/Unchanged for an import)."""
    console = console or stdout_console()
    table = Table(title=title, title_justify="left")
    table.add_column("Table")
    for heading in columns:
        table.add_column(heading, justify="right")
    tables = list(next(iter(columns.values()), {}))
    for name in tables:
        table.add_row(name, *(str(counts.get(name, 0)) for counts in columns.values()))
    console.print(table)
