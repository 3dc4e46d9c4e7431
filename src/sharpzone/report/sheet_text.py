"""Sharp-zone sheets as text: tidy CSV rows for machines, Markdown and printable HTML tables
for people (one table per focal length: focus distances down, f-numbers across).

The pieces every human form shares (the facts block, column heads, row labels and cell
text) live here too; ``sharpzone.report.sheet_chart`` uses them for PDF and PNG.
"""

from __future__ import annotations

import csv
import html
import io
import math
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

from sharpzone.analysis.sheets import DEFAULT_CLOSE_FOCUS_FOCAL_LENGTHS, FocalTable, Sheet, focal_range_text
from sharpzone.optics.dof import CLOSEUP_MAGNIFICATION
from sharpzone.optics.stops import stop_difference
from sharpzone.report.spreadsheet import safe_cell
from sharpzone.units import (format_distance, format_f_number, format_length_mm, format_round_distance, format_zone,
                             metres_or_inf)

# The machine interface of ``sharpzone sheet --out FILE.csv`` (documented in README.md).
CSV_COLUMNS = (
    "lens", "sensor", "coc_mm", "coc_policy", "reference", "focal_mm", "f_number", "past_diffraction_limit",
    "focus_m", "at_hyperfocal", "near_m", "far_m", "total_m", "hyperfocal_m",
)
DIFFRACTION_MARK = "†"


# ---- machine form ----------------------------------------------------------------------

def sheet_records(sheet: Sheet) -> Iterator[dict[str, Any]]:
    """One record per focal length × f-number × focus distance, in the CSV's columns:
    distances in metres (``"inf"`` for infinity), the ladder rows first and then the row
    focused at the hyperfocal distance (``at_hyperfocal`` true)."""
    common = {
        "lens": sheet.lens.name,
        "sensor": sheet.coc.sensor.name if sheet.coc.sensor else None,
        "coc_mm": sheet.coc.coc_mm,
        "coc_policy": sheet.coc.policy.spec,
        "reference": sheet.reference,
    }
    for table in sheet.tables:
        for column, f_number in enumerate(table.f_numbers):
            per_column = {**common, "focal_mm": table.focal_mm, "f_number": f_number,
                          "past_diffraction_limit": table.past_diffraction_limit[column]}
            hyperfocal = float(table.hyperfocal_mm[column])
            for row, focus in enumerate(table.focus_mm):
                yield {**per_column, "focus_m": metres_or_inf(float(focus)), "at_hyperfocal": False,
                       "near_m": metres_or_inf(float(table.near_mm[row, column])),
                       "far_m": metres_or_inf(float(table.far_mm[row, column])),
                       "total_m": metres_or_inf(float(table.total_mm[row, column])),
                       "hyperfocal_m": metres_or_inf(hyperfocal)}
            yield {**per_column, "focus_m": metres_or_inf(hyperfocal), "at_hyperfocal": True,
                   "near_m": metres_or_inf(float(table.hyperfocal_near_mm[column])), "far_m": "inf",
                   "total_m": "inf", "hyperfocal_m": metres_or_inf(hyperfocal)}


def render_csv(sheet: Sheet) -> str:
    """The sheet as tidy CSV (``CSV_COLUMNS``); booleans as ``true``/``false``, unknown empty."""
    out = io.StringIO()
    writer = csv.DictWriter(out, fieldnames=CSV_COLUMNS, lineterminator="\n")
    writer.writeheader()
    for record in sheet_records(sheet):
        writer.writerow({key: safe_cell(_csv_value(value)) for key, value in record.items()})
    return out.getvalue()


def _csv_value(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    return str(value)


# ---- pieces shared by the human forms ------------------------------------------------------

@dataclass(frozen=True)
class TableText:
    """One focal length's table as text: column heads, then (label, cells) rows; the last
    two rows are the hyperfocal distance and the zone when focused there."""

    title: str
    heads: list[str]
    rows: list[tuple[str, list[str]]]
    ladder_rows: int
    marked_columns: list[bool]


def _reference_phrase(reference: str) -> str:
    return ("from the sensor plane (the focal-plane mark)" if reference == "sensor"
            else "from the lens (front principal plane)")


def sheet_title(sheet: Sheet) -> str:
    return f"Sharp-zone sheet: {sheet.lens.name}"


def sheet_facts(sheet: Sheet, *, imperial: bool = False, table: FocalTable | None = None) -> list[tuple[str, str]]:
    """What the sheet assumes, as (label, text) pairs: lens, format, CoC, reference, stops,
    diffraction limit, and close-up remarks for ``table`` (a page of one focal length) or
    for the sheet's closest-focusing table. Every number carries its unit."""
    lens = sheet.lens
    widest = (format_f_number(lens.max_aperture_wide) if lens.max_aperture_wide == lens.max_aperture_tele
              else f"{format_f_number(lens.max_aperture_wide)}–{lens.max_aperture_tele:g}")
    if sheet.close_focus_assumed:
        close = (f"close focus not catalogued (the rows start at {DEFAULT_CLOSE_FOCUS_FOCAL_LENGTHS:g} × "
                 "the focal length)")
    else:
        close = f"close focus {format_round_distance(lens.close_focus_mm, imperial=imperial)}"
    sensor = sheet.coc.sensor
    fmt = f"{sensor.name} ({sensor.width_mm:g} × {sensor.height_mm:g} mm)" if sensor else "not given (fixed CoC)"
    return [
        ("Lens", f"{lens.name}: {focal_range_text(lens)}, {widest} to f/{lens.min_aperture:g}, {close}"),
        ("Format", fmt),
        ("Circle of confusion", f"{format_length_mm(sheet.coc.coc_mm)} ({sheet.coc.describe()})"),
        ("Distances", _reference_phrase(sheet.reference)),
        ("f-numbers", f"{sheet.stops} stops from wide open (marked values)"),
        ("Diffraction", f"past f/{sheet.diffraction_limited_f_number:.1f} the Airy disk (550 nm) outgrows the CoC; "
                        f"columns marked {DIFFRACTION_MARK} are past it"),
    ] + _focusing_fact(sheet, imperial=imperial, table=table) + _nearest_row_fact(sheet, imperial=imperial, table=table) \
        + _closeup_fact(sheet, imperial=imperial, table=table)


def _focusing_fact(sheet: Sheet, *, imperial: bool, table: FocalTable | None) -> list[tuple[str, str]]:
    """Where the lens's focal length follows its focus (a recorded maximum magnification)."""
    followed = [each for each in ([table] if table else sheet.tables) if each.macro is not None]
    if not followed:
        return []
    each = followed[0]
    spec = each.macro
    from sharpzone.optics.magnification import format_magnification

    return [("Close focusing", f"{format_magnification(spec.max_magnification)} at "
             f"{format_round_distance(spec.close_focus_mm, imperial=imperial)}: "
             f"the focal length shortens to {spec.close_focus_focal_mm:.0f} mm there (internal focusing) and "
             f"returns to {spec.focal_mm:g} mm towards infinity; each row uses its own")]


def _closeup_fact(sheet: Sheet, *, imperial: bool, table: FocalTable | None) -> list[tuple[str, str]]:
    """Where the nearest rows are close-up work, the light loss and earlier diffraction."""
    closest = table or max(sheet.tables, key=lambda each: float(each.magnification[0]))
    magnification = float(closest.magnification[0])
    if magnification < CLOSEUP_MAGNIFICATION:
        return []
    factor = 1 + magnification / sheet.lens.pupil_magnification
    return [("Close-up", f"{magnification:.2f}× at {format_round_distance(float(closest.focus_mm[0]), imperial=imperial)} "
             f"({closest.focal_mm:g} mm): the lens works at {factor:.2f} × the marked f-number "
             f"({stop_difference(1.0, factor):.1f} stops darker), so diffraction starts past marked "
             f"f/{sheet.diffraction_limited_f_number / factor:.1f}")]


def _nearest_row_fact(sheet: Sheet, *, imperial: bool, table: FocalTable | None) -> list[tuple[str, str]]:
    raised = [each for each in ([table] if table else sheet.tables) if each.close_focus_raised]
    if not raised or sheet.lens.close_focus_mm is None:
        return []
    focal = ", ".join(f"{table.focal_mm:g} mm" for table in raised)
    return [("Nearest row", f"at {focal} the thin-lens model reaches no nearer than 4 × the focal length "
             f"from the sensor, so the rows start there, not at the catalogued "
             f"{format_round_distance(sheet.lens.close_focus_mm, imperial=imperial)}")]


zone_text = format_zone  # a cell: one rounding rule for near – far, in units


def f_number_head(table: FocalTable, column: int) -> str:
    head = format_f_number(table.f_numbers[column])
    return f"{head} {DIFFRACTION_MARK}" if table.past_diffraction_limit[column] else head


def table_text(sheet: Sheet, table: FocalTable, *, imperial: bool = False) -> TableText:
    """The words and numbers of one focal length's table, ready for any layout."""
    columns = range(len(table.f_numbers))
    rows: list[tuple[str, list[str]]] = []
    for row, focus in enumerate(table.focus_mm):
        label = format_round_distance(float(focus), imperial=imperial)
        if row == 0 and math.isclose(float(focus), table.close_focus_mm):
            label += " (model's closest)" if table.close_focus_raised else " (closest)"
        cells = [zone_text(float(table.near_mm[row, c]), float(table.far_mm[row, c]), imperial=imperial)
                 for c in columns]
        rows.append((label, cells))
    rows.append(("Hyperfocal distance",
                 [format_distance(float(table.hyperfocal_mm[c]), imperial=imperial) for c in columns]))
    rows.append(("Focused there",
                 [zone_text(float(table.hyperfocal_near_mm[c]), math.inf, imperial=imperial) for c in columns]))
    return TableText(
        title=f"{table.focal_mm:g} mm",
        heads=["Focus at"] + [f_number_head(table, c) for c in columns],
        rows=rows,
        ladder_rows=len(table.focus_mm),
        marked_columns=list(table.past_diffraction_limit),
    )


def column_slice(text: TableText, start: int, stop: int) -> TableText:
    """The focus column and f-number columns ``start`` to ``stop`` (0-based) of ``text``."""
    return TableText(
        title=text.title,
        heads=[text.heads[0], *text.heads[1 + start:1 + stop]],
        rows=[(label, cells[start:stop]) for label, cells in text.rows],
        ladder_rows=text.ladder_rows,
        marked_columns=text.marked_columns[start:stop],
    )


def table_caption(sheet: Sheet) -> str:
    """The line under every table: how to read a cell."""
    return (f"Each cell: sharp from – sharp to, {_reference_phrase(sheet.reference)}; "
            f"{DIFFRACTION_MARK} past the diffraction limit.")


# ---- Markdown ----------------------------------------------------------------------------

def _md(text: str) -> str:
    return text.replace("|", "\\|")


def render_markdown(sheet: Sheet, *, imperial: bool = False) -> str:
    """The sheet as Markdown: the facts, then one table per focal length, then the caveat."""
    lines = [f"# {_md(sheet_title(sheet))}", ""]
    lines += [f"- **{label}:** {_md(text)}" for label, text in sheet_facts(sheet, imperial=imperial)]
    lines += ["", f"_{sheet.caveat}_", ""]
    for table in sheet.tables:
        text = table_text(sheet, table, imperial=imperial)
        lines += [f"## {text.title}", ""]
        lines.append("| " + " | ".join(_md(head) for head in text.heads) + " |")
        lines.append("|" + "---|" + "---:|" * (len(text.heads) - 1))
        for label, cells in text.rows:
            lines.append(f"| {_md(label)} | " + " | ".join(_md(cell) for cell in cells) + " |")
        lines += ["", table_caption(sheet), ""]
    return "\n".join(lines)


# ---- HTML ----------------------------------------------------------------------------

# Neutral print styling of our own; no external fonts, scripts or images. On screen the page
# keeps a margin from the window edge; in print the @page margins do that.
_HTML_STYLE = """
@page { size: %(paper)s landscape; margin: 11mm 12mm; }
* { box-sizing: border-box; }
html { background: #fafafa; }
body { font-family: "DejaVu Sans", "Segoe UI", Arial, sans-serif; color: #1b1b1b; background: white;
       margin: 0 auto; padding: 10mm 12mm; max-width: 297mm; }
section.focal { page-break-after: always; break-after: page; }
section.focal:last-of-type { page-break-after: auto; break-after: auto; }
header { display: flex; justify-content: space-between; align-items: baseline;
         border-bottom: 2px solid #1b1b1b; margin-bottom: 2mm; }
h1 { font-size: 13pt; margin: 0; font-weight: 600; }
h2 { font-size: 20pt; margin: 0; font-weight: 700; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 0.3mm 4mm;
           font-size: 8pt; margin: 0 0 2.5mm 0; }
dl.facts dt { font-weight: 600; color: #444; }
dl.facts dd { margin: 0; }
figure.chart { margin: 0 0 3mm 0; break-inside: avoid; page-break-inside: avoid; }
figure.chart svg { display: block; width: 100%%; height: auto; }
figure.chart figcaption { font-size: 7.5pt; color: #333; }
table { border-collapse: collapse; width: 100%%; margin: 0 0 3mm 0; page-break-inside: avoid; break-inside: avoid; }
th, td { padding: 0.7mm 0.45em; text-align: right; border-bottom: 0.3mm solid #d0d0d0; white-space: nowrap; }
thead th { border-bottom: 0.5mm solid #1b1b1b; font-size: 1.05em; }
thead th:first-child { text-align: left; }
tbody th { text-align: left; font-weight: 600; }
tbody tr:nth-child(even) td, tbody tr:nth-child(even) th { background: #f2f2f2; }
.past { color: #6b6b6b; font-style: italic; }
tr.hyperfocal th, tr.hyperfocal td { border-top: 0.5mm solid #1b1b1b; background: #e6e6e6; }
p.caption, p.caveat { font-size: 7.5pt; margin: 1.5mm 0 0 0; color: #333; }
p.caveat { font-style: italic; }
@media print { html { background: white; } body { padding: 0; max-width: none; }
               body { -webkit-print-color-adjust: exact; print-color-adjust: exact; } }
"""

# Printable width of a landscape page (paper less the 12 mm side margins), in points.
_PRINT_WIDTH_MM = {"a4": 297 - 24, "letter": 279.4 - 24}
# Average advance of a character and cell padding in ems for the faces above (measured
# against the rendered pages by tests/report/test_sheet_layout.py, with room to spare).
_CHAR_EM = 0.6
_CELL_PADDING_EM = 1.1
# Table type never smaller than this; never larger than the largest.
SMALLEST_TABLE_PT = 7.5
_LARGEST_TABLE_PT = 10.0


def html_table_parts(text: TableText, paper: str = "a4") -> tuple[float, list[tuple[int, int]]]:
    """Type size (pt) and the runs of f-number columns (start, stop) that the table is set
    in, one above the other: the fewest runs that keep the type at least
    ``SMALLEST_TABLE_PT`` with every cell on one line across the printed width."""
    width_pt = _PRINT_WIDTH_MM[paper] * 72 / 25.4
    label_width = max(len(label) for label, _cells in text.rows + [(text.heads[0], [])])
    widths = [max(max(len(cells[c]) for _l, cells in text.rows), len(text.heads[c + 1]))
              for c in range(len(text.heads) - 1)]

    def size_for(run: tuple[int, int]) -> float:
        ems = sum(w * _CHAR_EM + _CELL_PADDING_EM for w in [label_width, *widths[run[0]:run[1]]])
        return width_pt / ems

    count = len(widths)
    for parts in range(1, count + 1):
        per = math.ceil(count / parts)
        runs = [(start, min(start + per, count)) for start in range(0, count, per)]
        size = min(size_for(run) for run in runs)
        if size >= SMALLEST_TABLE_PT:
            return round(min(size, _LARGEST_TABLE_PT), 1), runs
    return SMALLEST_TABLE_PT, [(c, c + 1) for c in range(count)]


def _past_class(past: bool) -> str:
    return ' class="past"' if past else ""


def _html_table(text: TableText, size: float) -> str:
    esc = html.escape
    marked = [False, *text.marked_columns]
    heads = "".join(f'<th scope="col"{_past_class(past)}>{esc(head)}</th>' for head, past in zip(text.heads, marked))
    body_rows = []
    for number, (label, cells) in enumerate(text.rows):
        row_class = ' class="hyperfocal"' if number == text.ladder_rows else ""
        tds = "".join(f"<td{_past_class(past)}>{esc(cell)}</td>" for cell, past in zip(cells, text.marked_columns))
        body_rows.append(f'<tr{row_class}><th scope="row">{esc(label)}</th>{tds}</tr>')
    return (f'<table style="font-size: {size}pt"><thead><tr>{heads}</tr></thead>'
            f"<tbody>{''.join(body_rows)}</tbody></table>")


def render_html(sheet: Sheet, *, imperial: bool = False, paper: str = "a4", charts: bool = True) -> str:
    """The sheet as one self-contained HTML page that prints one focal length per page on
    ``paper`` (landscape A4 or Letter): facts, the chart (inline SVG) and the table."""
    esc = html.escape
    parts = [
        "<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{esc(sheet_title(sheet))}</title>", f"<style>{_HTML_STYLE % {'paper': paper.upper() if paper == 'a4' else paper}}</style>",
        "</head>", "<body>",
    ]
    for table in sheet.tables:
        text = table_text(sheet, table, imperial=imperial)
        facts = "".join(f"<dt>{esc(label)}</dt><dd>{esc(value)}</dd>"
                        for label, value in sheet_facts(sheet, imperial=imperial, table=table))
        size, runs = html_table_parts(text, paper)
        parts += [
            '<section class="focal">',
            f"<header><h1>{esc(sheet_title(sheet))}</h1><h2>{esc(text.title)}</h2></header>",
            f'<dl class="facts">{facts}</dl>',
        ]
        if charts:
            from sharpzone.report.sheet_chart import chart_svg

            parts.append(f'<figure class="chart">{chart_svg(sheet, table, imperial=imperial)}'
                         "<figcaption>Left: sharp from (lower curves) and sharp to (upper curves) against the focus "
                         "distance. Right: zone bars for a few focus distances, ◆ at the hyperfocal distance."
                         "</figcaption></figure>")
        parts += [_html_table(column_slice(text, start, stop), size) for start, stop in runs]
        parts += [
            f'<p class="caption">{esc(table_caption(sheet))}</p>',
            f'<p class="caveat">{esc(sheet.caveat)}</p>',
            "</section>",
        ]
    parts += ["</body>", "</html>", ""]
    return "\n".join(parts)
