"""Sharp-zone sheets as print-ready pictures: a PDF with one landscape page per focal length
(chart of near and far limits against focus distance, and the table), or one PNG.

matplotlib is imported inside the functions (it is slow to load) and used without pyplot:
figures are drawn on their own Agg canvas, so no global backend or state is touched.
"""

from __future__ import annotations

import io
import math

import numpy as np

from sharpzone.analysis.sheets import FocalTable, Sheet
from sharpzone.report.sheet_text import (
    DIFFRACTION_MARK,
    column_slice,
    sheet_facts,
    sheet_title,
    table_caption,
    table_text,
)
from sharpzone.units import format_round_distance

# A landscape page that fits both A4 (297 × 210 mm, 11.69 × 8.27 in) and Letter
# (11 × 8.5 in) unscaled.
PAGE_SIZE_IN = (11.0, 8.2)
PNG_DPI = 150
# PNG of several focal lengths: a grid of charts, this many across, each this tall (in).
GRID_COLUMNS = 2
GRID_ROW_HEIGHT_IN = 3.7
GRID_MARGIN_HEIGHT_IN = 1.4

INK = "#1b1b1b"
GRID_INK = "#c8c8c8"
STRIPE = "#f0f0f0"
HYPERFOCAL_FILL = "#e2e2e2"
# Wider tables are drawn in two halves, one above the other.
MAX_COLUMNS_PER_TABLE = 10
# Charts of more f-numbers than this show wide open and the full stops only.
MAX_CURVE_PAIRS = 9
# Farthest y the chart shows, as a multiple of its farthest focus sample: a far limit past
# it (or infinite) runs off the top of the chart.
Y_HEADROOM = 4.0


def png_size_px(sheet: Sheet) -> tuple[int, int]:
    """Width and height of ``render_png``'s image: one page for a single focal length, else
    a grid of charts ``GRID_COLUMNS`` wide."""
    width_in, height_in = _png_figure_size_in(len(sheet.tables))
    return int(width_in * PNG_DPI), int(height_in * PNG_DPI)


def _png_figure_size_in(focal_lengths: int) -> tuple[float, float]:
    if focal_lengths == 1:
        return PAGE_SIZE_IN
    rows = math.ceil(focal_lengths / GRID_COLUMNS)
    return PAGE_SIZE_IN[0], GRID_MARGIN_HEIGHT_IN + rows * GRID_ROW_HEIGHT_IN


def render_pdf(sheet: Sheet, *, imperial: bool = False) -> bytes:
    """The sheet as a PDF: one page per focal length with the facts, chart and table."""
    from matplotlib.backends.backend_pdf import PdfPages

    out = io.BytesIO()
    metadata = {"Title": sheet_title(sheet), "Creator": "sharpzone", "Subject": sheet.caveat}
    with PdfPages(out, metadata=metadata) as pdf:
        for table in sheet.tables:
            pdf.savefig(_page_figure(sheet, table, imperial=imperial))
    return out.getvalue()


def render_png(sheet: Sheet, *, imperial: bool = False) -> bytes:
    """The sheet as one PNG: the full page for a single focal length, else a grid of charts
    (one per focal length) under the facts, sized as ``png_size_px`` says."""
    if len(sheet.tables) == 1:
        figure = _page_figure(sheet, sheet.tables[0], imperial=imperial)
    else:
        figure = _grid_figure(sheet, imperial=imperial)
    out = io.BytesIO()
    figure.savefig(out, format="png", dpi=PNG_DPI)
    return out.getvalue()


def _new_figure(size_in: tuple[float, float]):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    figure = Figure(figsize=size_in)
    FigureCanvasAgg(figure)
    return figure


def _page_figure(sheet: Sheet, table: FocalTable, *, imperial: bool):
    figure = _new_figure(PAGE_SIZE_IN)
    text = table_text(sheet, table, imperial=imperial)
    figure.text(0.03, 0.955, sheet_title(sheet), fontsize=13, fontweight="bold", color=INK, va="baseline")
    figure.text(0.97, 0.955, text.title, fontsize=22, fontweight="bold", color=INK, ha="right", va="baseline")
    figure.add_artist(_rule(figure, 0.945))
    columns = len(table.f_numbers)
    if columns <= MAX_COLUMNS_PER_TABLE:
        chart = figure.add_axes((0.065, 0.555, 0.56, 0.355))
        _draw_table(figure.add_axes((0.03, 0.065, 0.94, 0.425)), text)
    else:
        # Half- and third-stop sheets: a smaller chart and the table in two halves.
        chart = figure.add_axes((0.065, 0.655, 0.56, 0.255))
        half = math.ceil(columns / 2)
        _draw_table(figure.add_axes((0.03, 0.335, 0.94, 0.255)), column_slice(text, 0, half))
        _draw_table(figure.add_axes((0.03, 0.065, 0.94, 0.255)), column_slice(text, half, columns))
    _draw_chart(chart, sheet, table, imperial=imperial)
    _draw_facts(figure, sheet, table, imperial=imperial, x=0.655, top=0.915)
    figure.text(0.03, 0.04, table_caption(sheet), fontsize=7.5, color=INK)
    figure.text(0.03, 0.018, sheet.caveat, fontsize=7.5, color=INK, style="italic")
    return figure


def _grid_figure(sheet: Sheet, *, imperial: bool):
    width_in, height_in = _png_figure_size_in(len(sheet.tables))
    figure = _new_figure((width_in, height_in))
    top_in, bottom_in = 1.05, 0.35
    figure.text(0.03, 1 - 0.4 / height_in, sheet_title(sheet), fontsize=13, fontweight="bold", color=INK)
    facts = sheet_facts(sheet, imperial=imperial)
    lines = ["   ".join(f"{label}: {value}" for label, value in facts[:2]),
             "   ".join(f"{label}: {value}" for label, value in facts[2:4]),
             "   ".join(f"{label}: {value}" for label, value in facts[4:])]
    figure.text(0.03, 1 - 0.58 / height_in, "\n".join(lines), fontsize=7.5, color=INK, va="top", linespacing=1.35)
    figure.text(0.03, 0.12 / height_in, sheet.caveat, fontsize=7.5, color=INK, style="italic")
    rows = math.ceil(len(sheet.tables) / GRID_COLUMNS)
    cell_h = (height_in - top_in - bottom_in) / rows
    for index, table in enumerate(sheet.tables):
        row, column = divmod(index, GRID_COLUMNS)
        left = 0.075 + column * 0.49
        bottom_edge = height_in - top_in - (row + 1) * cell_h + 0.55
        axes = figure.add_axes((left, bottom_edge / height_in, 0.41, (cell_h - 0.95) / height_in))
        _draw_chart(axes, sheet, table, imperial=imperial, title=f"{table.focal_mm:g} mm")
    return figure


def _rule(figure, y: float):
    from matplotlib.lines import Line2D

    return Line2D([0.03, 0.97], [y, y], transform=figure.transFigure, color=INK, linewidth=1.2)


def _palette(count: int) -> list:
    """Distinct colours that stay distinct printed in grey: dark blue through to amber."""
    from matplotlib import colormaps

    return [colormaps["viridis"](value) for value in np.linspace(0.05, 0.85, max(count, 1))]


def _draw_chart(axes, sheet: Sheet, table: FocalTable, *, imperial: bool, title: str | None = None):
    """Near (lower) and far (upper) limit curves against focus distance, both log scales."""
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullLocator

    focus = table.curve_focus_mm
    x_low, x_high = float(focus[0]), float(focus[-1])
    y_high = x_high * Y_HEADROOM
    axes.set_xscale("log")
    axes.set_yscale("log")
    axes.plot(focus, focus, color=INK, linewidth=0.8, linestyle=":", label="focus distance")
    charted = _charted_columns(table)
    for column, colour in zip(charted, _palette(len(charted))):
        f_number = table.f_numbers[column]
        past = table.past_diffraction_limit[column]
        style = "--" if past else "-"
        far = np.where(np.isfinite(table.curve_far_mm[:, column]), table.curve_far_mm[:, column], y_high * 10)
        label = f"f/{f_number:g}" + (f" {DIFFRACTION_MARK}" if past else "")
        axes.plot(focus, table.curve_near_mm[:, column], color=colour, linewidth=1.5, linestyle=style, label=label)
        axes.plot(focus, far, color=colour, linewidth=1.5, linestyle=style)
        hyperfocal = float(table.hyperfocal_mm[column])
        if x_low <= hyperfocal <= x_high:
            axes.plot([hyperfocal], [table.hyperfocal_near_mm[column]], marker="o", markersize=3.5, color=colour)
    axes.set_xlim(x_low, x_high)
    axes.set_ylim(min(float(table.curve_near_mm.min()), x_low) * 0.9, y_high)
    ticks = _round_ticks(x_low * 0.5, y_high * 2, imperial=imperial)
    label_of = FuncFormatter(lambda value, _position: format_round_distance(value, imperial=imperial))
    for axis in (axes.xaxis, axes.yaxis):
        axis.set_major_locator(FixedLocator(ticks))
        axis.set_major_formatter(label_of)
        axis.set_minor_locator(NullLocator())
    axes.tick_params(labelsize=7, colors=INK)
    axes.grid(True, color=GRID_INK, linewidth=0.5)
    for spine in axes.spines.values():
        spine.set_color(INK)
        spine.set_linewidth(0.6)
    where = "from the sensor" if sheet.reference == "sensor" else "from the lens"
    axes.set_xlabel(f"focus distance ({where})", fontsize=8, color=INK)
    axes.set_ylabel("sharp from (lower curve) / to (upper curve)", fontsize=8, color=INK)
    axes.text(0.01, 0.985, "far limit ∞ above the top edge; ● focused at the hyperfocal distance",
              transform=axes.transAxes, fontsize=6.5, color=INK, va="top")
    if title:
        axes.set_title(title, fontsize=11, fontweight="bold", color=INK, loc="left")
    # Below the near-limit curves the chart is empty: room for a compact legend.
    legend_title = None if len(charted) == len(table.f_numbers) else "full stops shown"
    axes.legend(loc="lower right", fontsize=6.5, ncol=2, framealpha=0.92, edgecolor=GRID_INK,
                handlelength=2.0, columnspacing=1.0, title=legend_title, title_fontsize=6.5)


def _charted_columns(table: FocalTable) -> list[int]:
    """The columns that get a curve pair: all, or wide open and the full stops when many."""
    if len(table.f_numbers) <= MAX_CURVE_PAIRS:
        return list(range(len(table.f_numbers)))
    from sharpzone.optics.stops import marked_f_numbers

    full = set(marked_f_numbers("full", 0.5, 128.0))
    return [0] + [column for column, n in enumerate(table.f_numbers) if column and n in full]


def _round_ticks(low_mm: float, high_mm: float, *, imperial: bool) -> list[float]:
    """Tick positions (mm) at round distances, thinned to at most about eight."""
    from sharpzone.analysis.sheets import round_distances_mm

    for steps in ((1.0, 2.0, 5.0), (1.0, 3.0), (1.0,)):
        ticks = [d for d in round_distances_mm(steps, imperial=imperial) if low_mm <= d <= high_mm]
        if len(ticks) <= 8:
            return ticks
    return ticks


def _draw_facts(figure, sheet: Sheet, table: FocalTable, *, imperial: bool, x: float, top: float):
    """The facts block beside the chart: bold labels in one column, wrapped text beside."""
    import textwrap

    line_height = 0.0152
    y = top
    for label, value in sheet_facts(sheet, imperial=imperial, table=table):
        lines = textwrap.wrap(value, 42)
        figure.text(x, y, label, fontsize=7, fontweight="bold", color=INK, va="top")
        figure.text(x + 0.102, y, "\n".join(lines), fontsize=7, color=INK, va="top", linespacing=1.3)
        y -= line_height * len(lines) + 0.007


def _table_font_size(columns: int) -> float:
    return 7.5 if columns <= 8 else 6.5 if columns <= 11 else 5.2 if columns <= 15 else 4.2


def _draw_table(axes, text) -> None:
    """The table of the page: focus distances down, f-numbers across, 'near – far' cells."""
    axes.set_axis_off()
    cells = [[label, *row] for label, row in text.rows]
    columns = len(text.heads)
    first = 0.12 if columns > 4 else 0.2
    widths = [first] + [(1 - first) / (columns - 1)] * (columns - 1)
    drawn = axes.table(cellText=cells, colLabels=text.heads, colWidths=widths, cellLoc="right",
                       bbox=(0, 0, 1, 1))
    drawn.auto_set_font_size(False)
    drawn.set_fontsize(_table_font_size(columns))
    for (row, column), cell in drawn.get_celld().items():
        cell.PAD = 0.03
        if row == 0:
            cell.set_text_props(fontweight="bold", color=INK)
            cell.set_facecolor("white")
            cell.visible_edges = "B"
            cell.set_edgecolor(INK)
            cell.set_linewidth(1.0)
            continue
        data_row = row - 1
        if column == 0:
            cell.set_text_props(fontweight="bold", ha="left")
            # Table cells take their alignment from one table-wide setting; matplotlib
            # (3.8 to 3.11) keeps it per cell in ``_loc`` with no public setter.
            cell._loc = "left"
        # A cell fills only with all four edges drawn: draw them in the fill colour, so
        # the row shading alone separates the rows.
        fill = HYPERFOCAL_FILL if data_row >= text.ladder_rows else STRIPE if data_row % 2 else "white"
        cell.set_facecolor(fill)
        cell.set_edgecolor(fill)
        if column and text.marked_columns[column - 1]:
            cell.set_text_props(style="italic", color="#555555")
