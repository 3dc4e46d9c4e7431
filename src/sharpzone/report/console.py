"""Terminal rendering with rich: one-off answers (dof, stack) and shared table helpers.

Two rules hold for everything printed here and in the other renderers:

- **Data is never markup.** The consoles parse no rich markup, and every string they print
  (cells, titles, messages) goes through ``inert`` first, so a lens called
  ``Korvath 50mm [/] Art`` or a file ``wedding [final].jpg`` shows as written and an ANSI
  escape in EXIF text shows as ``\\x1b``. Our own colours are ``styled`` Text objects.
- **Tables fit the terminal without cutting a number or a name.** ``fit_table`` takes
  ``Column``s with a priority: when the natural widths do not fit, the columns with the
  highest priority number go first (0 is never dropped), text columns marked ``wrap`` wrap at
  spaces, and the caller says which columns were left out (``--wide`` keeps all).
"""

from __future__ import annotations

import math
import re
import sys
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from rich import box
from rich.cells import cell_len
from rich.console import Console
from rich.table import Table
from rich.text import Text

from sharpzone.report.inert import inert
from sharpzone.units import format_distance, format_f_number, format_length_mm

if TYPE_CHECKING:
    from sharpzone.analysis.setting import SettingReport, StackReport


class SafeConsole(Console):
    """A console that shows every string as written: no markup, control characters inert."""

    def render_str(self, text: str, **options) -> Text:  # noqa: D102
        options["markup"] = False
        return super().render_str(inert(text), **options)


def stdout_console() -> Console:
    """A console for results; plain text (no colour codes) when piped."""
    return SafeConsole(file=sys.stdout, highlight=False, soft_wrap=False, markup=False)


def stderr_console() -> Console:
    """A console for progress and warnings, which must never mix into piped results."""
    return SafeConsole(file=sys.stderr, highlight=False, markup=False)


def styled(text: object, style: str | None = None) -> Text:
    """``text`` (ours or data) in ``style``, inert."""
    return Text(inert(text), style=style or "")


def line(*parts: object) -> Text:
    """One message from pieces: plain strings (data or ours) and ``styled`` Texts."""
    return Text.assemble(*(part if isinstance(part, Text) else inert(part) for part in parts))


# A space between a number and its unit never breaks a line ("41.7 cm", "14 frames").
_GLUED_SPACE = re.compile(r"(?<=\d) (?=(?:mm|cm|m|km|in|ft|mi|µm|px|s|frames?|×)(?:\W|$))")


def _break_points(plain: str) -> list[int]:
    """Where ``plain`` may break: its spaces, except between a number and its unit."""
    glued = {match.start() for match in _GLUED_SPACE.finditer(plain)}
    return [index for index, char in enumerate(plain) if char == " " and index not in glued]


def wrap_text(text: str | Text, width: int) -> Text:
    """``text`` wrapped at spaces into lines of at most ``width`` cells where it can be,
    never between a number and its unit and never inside a word."""
    text = text if isinstance(text, Text) else Text(inert(text))
    pieces: list[Text] = []
    offset = 0
    for source_line in text.plain.split("\n"):
        end_of_line = offset + len(source_line)
        start = offset
        last_space = None
        for space in _break_points(source_line):
            position = offset + space
            if cell_len(text.plain[start:position]) > width and last_space is not None:
                pieces.append(text[start:last_space])
                start = last_space + 1
            last_space = position
        if cell_len(text.plain[start:end_of_line]) > width and last_space is not None and last_space >= start:
            pieces.append(text[start:last_space])
            start = last_space + 1
        pieces.append(text[start:end_of_line])
        offset = end_of_line + 1
    return Text("\n").join(pieces)


def _words(plain: str) -> list[str]:
    """``plain``'s unbreakable pieces (see ``_break_points``)."""
    cuts = [-1, *_break_points(plain), len(plain)]
    return [plain[a + 1:b] for a, b in zip(cuts, cuts[1:]) if b > a + 1]


@dataclass(frozen=True)
class Column:
    """One table column: ``cell(row)`` gives its text (a str or a ``styled`` Text; lines
    joined by newlines stay lines). ``priority`` 0 is never dropped; when the table does not
    fit, the highest number goes first. ``wrap`` lets text wrap at spaces (numbers and file
    names never wrap). ``shown(rows)`` can leave the column out for these rows altogether.
    ``narrow(row)`` is the cell set on more lines, used when the table would not fit even
    with every column that may go gone (rather than have the terminal cut it); the columns'
    narrow forms are taken one at a time, in column order, until the table fits."""

    header: str
    cell: Callable[[Any], str | Text]
    justify: str = "left"
    priority: int = 0
    wrap: bool = False
    shown: Callable[[list], bool] | None = None
    narrow: Callable[[Any], str | Text] | None = None


# Every fitted table: a rule under the header, columns one space apart, no outer padding,
# so 80 columns hold a frame's essentials.
_TABLE_STYLE = {"box": box.SIMPLE_HEAD, "show_edge": False, "pad_edge": False, "padding": (0, 1), "collapse_padding": True}
_WRAP_AT_LEAST = 12  # a wrapping column keeps this many cells (or its longest word) before wrapping


def _widths(cells: Sequence[str | Text]) -> tuple[int, int]:
    """(natural width, longest word) of a column's cells."""
    natural, longest_word, _ = _measures(cells)
    return natural, longest_word


def _measures(cells: Sequence[str | Text]) -> tuple[int, int, set[int]]:
    """A column's (natural width, longest word as we wrap, rows deciding how rich measures
    it), in one pass over its cells. Rich takes a cell's longest line for its widest and its
    longest word (split at white space) for its narrowest, and the column's as the largest
    of each over its cells, so the rows holding those two decide."""
    natural = longest_word = 0
    widest = (-1, 0)  # (cells, row) of the longest line, and of the longest white-space word
    widest_word = (-1, 0)
    for row, cell in enumerate(cells):
        text = cell.plain if isinstance(cell, Text) else inert(cell)
        line_cells = 0
        for part in text.split("\n"):
            line_cells = max(line_cells, cell_len(part))
            longest_word = max(longest_word, max((cell_len(word) for word in _words(part)), default=0))
        natural = max(natural, line_cells)
        word_cells = max(map(cell_len, text.split()), default=0)
        widest = max(widest, (line_cells, -row))
        widest_word = max(widest_word, (word_cells, -row))
    rows = {-widest[1], -widest_word[1]} if cells else set()
    return natural, longest_word, rows


def _header_lines(header: str, width: int) -> str:
    """``header`` broken at spaces into lines of at most ``width`` cells (a column of short
    numbers under a long header stays narrow)."""
    lines: list[str] = []
    for word in header.split():
        if lines and cell_len(lines[-1]) + 1 + cell_len(word) <= width:
            lines[-1] += " " + word
        else:
            lines.append(word)
    return "\n".join(lines) or header


@dataclass
class FittedTable:
    """A table that fits, and the headers of the columns left out to make it fit."""

    table: Table
    dropped: list[str]
    width: int

    def note(self) -> str | None:
        """The line to print under the table when columns were left out."""
        if not self.dropped:
            return None
        return f"Not shown at this width: {', '.join(self.dropped)} (--wide shows every column)."


def _renderable(cell):
    """A cell as rich can draw it: text stays text; a missing value (None, NaN) is "—"; any
    other value (a number a column forgot to format) is its plain, inert string."""
    if isinstance(cell, (str, Text)):
        return cell
    if cell is None or (isinstance(cell, float) and cell != cell):
        return "—"
    return inert(str(cell))


def fit_table(columns: Sequence[Column], rows: list, *, console: Console, wide: bool = False,
              **table_options) -> FittedTable:
    """A rich table of ``rows`` that fits ``console``'s width (see ``Column``); with ``wide``
    every column, as wide as the table needs."""
    from rich.measure import Measurement

    columns = [column for column in columns if column.shown is None or column.shown(rows)]
    cells = {id(column): [_renderable(column.cell(row)) for row in rows] for column in columns}
    widths: dict[int, tuple[int, int]] = {}  # per column: (natural width, longest word), as its cells are now
    deciding: dict[int, set[int]] = {}  # per column: the rows whose cells decide how rich measures it
    header_at: dict[int, int] = {}  # per wrapping column: the width its header is broken at, once its cells are

    def column_widths(column) -> tuple[int, int]:
        if id(column) not in widths:
            natural, longest_word, rows = _measures(cells[id(column)])
            widths[id(column)], deciding[id(column)] = (natural, longest_word), rows
        return widths[id(column)]

    def wrap_minimum(column) -> int:
        """The narrowest a wrapping column may be."""
        natural, longest_word = column_widths(column)
        return max(longest_word, _widths([column.header])[1], min(natural, _WRAP_AT_LEAST))

    def build(selection, indexes: Iterable[int] | None = None, final: bool = False) -> Table:
        """The table of ``selection`` (the rows at ``indexes``, else all). ``final``: each
        column as wide as rich would measure it over all its cells, said to rich, which then
        measures no cell again (about a sixth of drawing a long table)."""
        table = Table(**_TABLE_STYLE, **table_options)
        for column in selection:
            natural, longest_word = column_widths(column)
            header_word = _widths([column.header])[1]
            if column.wrap:
                header = _header_lines(column.header, header_at[id(column)]) if id(column) in header_at \
                    else column.header
                fixed = max(natural, _widths([header])[0]) if final else None
                table.add_column(header, justify=column.justify, overflow="fold",
                                 min_width=wrap_minimum(column), width=fixed)
            else:
                width = max(natural, header_word)
                header = _header_lines(column.header, width)
                table.add_column(header, justify=column.justify, no_wrap=True, overflow="fold", min_width=width,
                                 width=max(width, _widths([header])[0]) if final else None)
        for index in range(len(rows)) if indexes is None else indexes:
            table.add_row(*(cells[id(column)][index] for column in selection))
        return table

    def measure(selection) -> Measurement:
        # Rich measures a column as the widest of its cells' measurements, so a table of the
        # deciding rows alone measures as the whole one does, at the cost of a few rows.
        for column in selection:
            column_widths(column)
        sample = build(selection, sorted(set().union(*(deciding[id(column)] for column in selection))))
        return Measurement.get(console, console.options.update(width=10**6), sample)

    kept, dropped = list(columns), []
    while not wide and measure(kept).minimum > console.width:
        droppable = [column for column in kept if column.priority > 0]
        if not droppable:
            break
        worst = max(droppable, key=lambda column: (column.priority, kept.index(column)))
        kept.remove(worst)
        dropped.append(worst.header)
    # Still too wide: the columns' narrower forms, one at a time in column order, until it fits.
    for column in [column for column in kept if column.narrow is not None]:
        if wide or measure(kept).minimum <= console.width:
            break
        cells[id(column)] = [_renderable(column.narrow(row)) for row in rows]
        widths.pop(id(column), None)
    width = max(console.width, measure(kept).maximum) if wide else console.width
    wrapping = [column for column in kept if column.wrap]
    if wrapping:
        # Rich would wrap at any space; wrap these ourselves at the width rich gives them.
        spare = max(0, width - measure(kept).minimum)
        allowed = {}
        for column in wrapping:
            natural, _ = column_widths(column)
            minimum = wrap_minimum(column)
            grant = min(spare, max(0, natural - minimum))
            allowed[id(column)] = minimum + grant
            spare -= grant
        for column in wrapping:
            cells[id(column)] = [wrap_text(cell, allowed[id(column)]) for cell in cells[id(column)]]
            widths.pop(id(column))
        for column in wrapping:
            # A header wider than its column takes what room is left, and is broken at spaces
            # beyond it: rich would otherwise widen the column for it and squeeze the others.
            over = cell_len(column.header) - allowed[id(column)]
            if over > 0:
                grant = min(spare, over)
                spare -= grant
                if grant < over:
                    header_at[id(column)] = allowed[id(column)] + grant
    # Widths are given to rich only where every column fits at its natural width (rich then
    # gives each that width); a table it must squeeze is left to rich to squeeze.
    table = build(kept, final=measure(kept).maximum <= width)
    return FittedTable(table, dropped, width)


def print_fitted(console: Console, fitted: FittedTable) -> None:
    """Print a fitted table (as wide as it needs with ``--wide``) and its note."""
    if fitted.width > console.width:  # --wide: as wide as the table needs
        before = console.width
        console.width = fitted.width
        try:
            console.print(fitted.table)
        finally:
            console.width = before
    else:
        console.print(fitted.table)
    note = fitted.note()
    if note:
        console.print(styled(note, "dim"))


def _reference_phrase(reference: str) -> str:
    return "from the sensor plane" if reference == "sensor" else "from the lens"


def render_setting(report: SettingReport, *, imperial: bool = False, console: Console | None = None) -> None:
    """The sharp zone of one setting as a short titled table with notes below."""
    console = console or stdout_console()
    zone = report.zone

    def dist(value_mm: float) -> str:
        return format_distance(value_mm, imperial=imperial)

    title = (
        f"{report.focal_mm:g} mm at {format_f_number(report.f_number)}, focused at {dist(report.focus_mm)} "
        f"({_reference_phrase(report.reference)})"
    )
    table = Table(title=title, show_header=False, box=None, pad_edge=False, title_justify="left")
    table.add_column(style="bold")
    table.add_column()
    table.add_row("Near limit", dist(zone.near_mm))
    table.add_row("Far limit", dist(zone.far_mm))
    depth = dist(zone.total_mm)
    behind = dist(zone.behind_mm)
    table.add_row("Depth of field", f"{depth}  ({dist(zone.front_mm)} in front, {behind} behind)")
    table.add_row("Hyperfocal distance", dist(zone.hyperfocal_mm))
    coc = report.coc
    sensor = coc.sensor.name if coc.sensor else "—"
    table.add_row("Circle of confusion", f"{format_length_mm(coc.coc_mm)}  ({coc.describe()})")
    table.add_row("Sensor format", sensor)
    table.add_row("Airy disk", f"{format_length_mm(report.airy_disk_mm)}  (diffraction limit "
                  f"f/{report.diffraction_limited_f_number:.1f} for this CoC)")
    if report.is_closeup:
        table.add_row("Magnification", f"{zone.magnification:.3g}×")
        table.add_row("Effective f-number", f"f/{zone.effective_f_number:.1f}")
        if report.closeup_total_mm is not None:
            table.add_row("Close-up depth (approx.)", dist(report.closeup_total_mm))
    console.print(table)
    for note in report.notes:
        console.print(line("• ", note))


def stack_digits(report: StackReport) -> int:
    """Significant figures that keep neighbouring frames apart: the farthest finite distance
    shown with the smallest step (or depth) to about two figures; 3 to 7."""
    plan = report.plan
    finite = [d for d in (*plan.focus_mm, *plan.near_mm, *plan.far_mm) if math.isfinite(d)]
    finest = [s for s in report.steps_mm if math.isfinite(s) and s > 0]
    finest += [far - near for near, far in zip(plan.near_mm, plan.far_mm) if math.isfinite(far) and far > near]
    if not finite or not finest:
        return 3
    return min(7, max(3, math.ceil(math.log10(max(finite) / min(finest))) + 1))


def render_stack(report: StackReport, *, imperial: bool = False, console: Console | None = None) -> None:
    """A focus-stack plan: one row per frame, near to far, with the step from the frame
    before, the working f-number, and (for a finite range) the same stack on a focusing rail."""
    console = console or stdout_console()
    plan = report.plan
    digits = stack_digits(report)

    def dist(value_mm: float) -> str:
        return format_distance(value_mm, imperial=imperial, digits=digits)

    def short(value_mm: float) -> str:
        return format_distance(value_mm, imperial=imperial)

    frames = "frame" if plan.frame_count == 1 else "frames"
    title = (
        f"{plan.frame_count} {frames} at {format_f_number(plan.f_number)} with {report.focal_mm:g} mm hold "
        f"{short(report.near_target_mm)} – {short(report.far_target_mm)}"
    )
    caption = (f"distances {_reference_phrase(plan.reference)}; CoC {format_length_mm(report.coc.coc_mm)} "
               f"({report.coc.describe()}); working f-number N (1 + m/P)")
    console.print(title, style="bold")
    table = Table()
    for head in ("#", "Focus at", "Step", "Sharp from", "Sharp to", "Scale", "Working"):
        table.add_column(head, justify="right", no_wrap=True)
    steps = ("—", *(format_distance(step, imperial=imperial, digits=2) for step in report.steps_mm))
    soft = report.diffraction_soft or (False,) * plan.frame_count
    for number, (focus, near, far) in enumerate(zip(plan.focus_mm, plan.near_mm, plan.far_mm), start=1):
        m = plan.magnification[number - 1] if plan.magnification else float("nan")
        working = plan.effective_f_number[number - 1] if plan.effective_f_number else plan.f_number
        mark = " ‡" if soft[number - 1] else ""
        table.add_row(str(number), dist(focus), steps[number - 1], dist(near), dist(far), f"{m:.3g}×",
                      f"f/{working:.1f}{mark}")
    console.print(table)
    console.print(caption)
    if plan.frame_count > 1:
        console.print(f"• neighbouring frames share {plan.overlap:.0%} of their depth")
    if math.isinf(plan.focus_mm[-1]):
        console.print("• the last frame is focused at infinity")
    rail = report.rail
    if rail is not None:
        console.print(f"• on a focusing rail: focus once at {dist(rail.focus_mm)}, then move the camera "
                      f"{format_distance(rail.step_mm, imperial=imperial, digits=2)} per frame, {rail.frame_count} "
                      f"frames (each {format_distance(rail.depth_mm, imperial=imperial, digits=2)} deep)")
    if any(soft):
        console.print("• ‡ diffraction at the working f-number (Airy disk 2.44 λ N, 550 nm) is wider than the CoC")
    for note in report.notes:
        console.print(f"• {note}")
