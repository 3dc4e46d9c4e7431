"""Sharp-zone sheets as print-ready pictures: a PDF on A4 or Letter (landscape), and one PNG
holding the same pages one under another.

Each focal length gets a page of pictures (the near and far limits against focus distance,
the zone bars of our own, and the facts) and then its table, split into as many parts and
pages as the text needs at a readable size. Every text position is worked out from the
measured size of the text (matplotlib's own font metrics), so nothing runs into anything
else or off the paper; ``tests/report/test_sheet_layout.py`` reads the files back with other
libraries to make sure.

matplotlib is imported inside the functions (it is slow to load) and used without pyplot:
figures are drawn on their own Agg canvas, so no global backend or state is touched.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass

import numpy as np

from sharpzone.analysis.sheets import FocalTable, Sheet
from sharpzone.report.sheet_files import check_paper
from sharpzone.report.sheet_text import (
    DIFFRACTION_MARK,
    TableText,
    column_slice,
    sheet_facts,
    sheet_title,
    table_caption,
    table_text,
)
from sharpzone.units import format_round_distance

# Landscape paper, inches: ISO 216 A4 (297 × 210 mm) and US Letter (11 × 8.5 in).
PAPERS = {"a4": (297 / 25.4, 210 / 25.4), "letter": (11.0, 8.5)}
DEFAULT_PAPER = "a4"
# Kept clear on every side: more than the unprintable edge of office printers (about 5 mm).
MARGIN_IN = 0.45
PNG_DPI = 120

INK = "#1b1b1b"
GRID_INK = "#c8c8c8"
STRIPE = "#f0f0f0"
HYPERFOCAL_FILL = "#e2e2e2"
PAST_INK = "#555555"
# Charts of more f-numbers than this show wide open and the full stops only.
MAX_CURVE_PAIRS = 9
# Farthest y the chart shows, as a multiple of its farthest focus sample: a far limit past
# it (or infinite) runs off the top of the chart.
Y_HEADROOM = 4.0
# Table type: the first of these sizes that fits the table on one page, else the last
# (never smaller); a row is this many times as tall.
TABLE_FONTS_PT = (10.0, 9.0, 8.0, 7.5, 7.0)
TABLE_LINE = 1.55
PART_GAP_IN = 0.22
CELL_PAD_IN = 0.14
# Each f-number's curve differs in colour, lightness, line style and marker, so that
# neighbours stay apart in colour, in grey and in black and white.
LINE_STYLES = ("-", (0, (6, 2)), (0, (1.5, 1.5)), (0, (6, 2, 1.5, 2)), (0, (3, 1.2)),
               (0, (8, 2, 1.5, 2, 1.5, 2)), "-", (0, (6, 2)), (0, (1.5, 1.5)))
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*", "h")


def render_pdf(sheet: Sheet, *, imperial: bool = False, paper: str = DEFAULT_PAPER) -> bytes:
    """The sheet as a PDF: per focal length a page of charts and facts, then its table."""
    from matplotlib import rc_context
    from matplotlib.backends.backend_pdf import PdfPages

    out = io.BytesIO()
    metadata = {"Title": sheet_title(sheet), "Creator": "sharpzone", "Subject": sheet.caveat}
    # TrueType text (not Type 3): selectable, searchable and measured exactly by readers.
    with rc_context({"pdf.fonttype": 42}), PdfPages(out, metadata=metadata) as pdf:
        for figure in sheet_pages(sheet, imperial=imperial, paper=paper):
            pdf.savefig(figure)
    return out.getvalue()


def render_png(sheet: Sheet, *, imperial: bool = False, paper: str = DEFAULT_PAPER) -> bytes:
    """The sheet as one PNG: the PDF's pages one under another (one page wide at ``PNG_DPI``)."""
    from PIL import Image

    pages = []
    for figure in sheet_pages(sheet, imperial=imperial, paper=paper):
        figure.set_dpi(PNG_DPI)
        figure.canvas.draw()
        pages.append(np.asarray(figure.canvas.buffer_rgba())[:, :, :3])
    image = Image.fromarray(np.vstack(pages))
    out = io.BytesIO()
    image.save(out, format="PNG", dpi=(PNG_DPI, PNG_DPI), optimize=True)
    return out.getvalue()


def sheet_pages(sheet: Sheet, *, imperial: bool = False, paper: str = DEFAULT_PAPER) -> list:
    """The pages (matplotlib figures) of the sheet, in order."""
    size = PAPERS[check_paper(paper)]
    pages = []
    for table in sheet.tables:
        pages.append(_views_page(sheet, table, size, imperial=imperial))
        pages.extend(_table_pages(sheet, table, size, imperial=imperial))
    return pages


# ---- page furniture ------------------------------------------------------------------------

def _new_figure(size_in: tuple[float, float]):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    figure = Figure(figsize=size_in, dpi=72)
    FigureCanvasAgg(figure)
    return figure


@dataclass(frozen=True)
class _Frame:
    """A page's usable box in inches from the bottom left, and the figure's size."""

    width: float
    height: float
    left: float
    right: float
    top: float
    bottom: float

    def x(self, inches: float) -> float:
        return inches / self.width

    def y(self, inches: float) -> float:
        return inches / self.height


def _furnished_page(sheet: Sheet, table: FocalTable, size: tuple[float, float], *, subtitle: str):
    """A page with the header (sheet title, focal length, what the page holds) and footer
    (how to read a cell, the caveat); returns the figure and the box left between them."""
    from matplotlib.lines import Line2D

    width, height = size
    figure = _new_figure(size)
    frame = _Frame(width, height, MARGIN_IN, width - MARGIN_IN, height - MARGIN_IN, MARGIN_IN)
    title_base = frame.top - 0.28
    figure.text(frame.x(frame.left), frame.y(title_base), sheet_title(sheet), fontsize=13, fontweight="bold",
                color=INK, va="baseline")
    figure.text(frame.x(frame.left), frame.y(title_base - 0.2), subtitle, fontsize=8, color=INK, va="baseline")
    figure.text(frame.x(frame.right), frame.y(title_base), f"{table.focal_mm:g} mm", fontsize=20,
                fontweight="bold", color=INK, ha="right", va="baseline")
    rule = frame.top - 0.56
    figure.add_artist(Line2D([frame.x(frame.left), frame.x(frame.right)], [frame.y(rule)] * 2,
                             transform=figure.transFigure, color=INK, linewidth=1.2))
    figure.text(frame.x(frame.left), frame.y(frame.bottom + 0.17), table_caption(sheet), fontsize=7, color=INK,
                va="baseline")
    figure.text(frame.x(frame.left), frame.y(frame.bottom + 0.02), sheet.caveat, fontsize=7, color=INK,
                style="italic", va="baseline")
    body = _Frame(width, height, frame.left, frame.right, rule - 0.15, frame.bottom + 0.42)
    return figure, body


def _text_size_in(figure, text: str, size: float, weight: str = "normal", style: str = "normal") -> tuple[float, float]:
    """Width and height (inches) of ``text`` as the figure will set it."""
    from matplotlib.font_manager import FontProperties

    renderer = figure.canvas.get_renderer()
    props = FontProperties(size=size, weight=weight, style=style)
    width, height, _descent = renderer.get_text_width_height_descent(text, props, ismath=False)
    return width / figure.dpi, height / figure.dpi


# ---- the page of pictures ------------------------------------------------------------------

def _views_page(sheet: Sheet, table: FocalTable, size, *, imperial: bool):
    figure, body = _furnished_page(sheet, table, size, subtitle="Near and far limits, zone bars and what the sheet assumes")
    middle = (body.left + body.right) / 2
    # Left: the limit curves, with their legend and note below the axes.
    charted = _charted_columns(table)
    legend_rows = math.ceil(len(charted) / 5)
    axes_bottom = body.bottom + 0.5 + 0.17 * legend_rows + 0.35
    chart = figure.add_axes((body.x(body.left + 0.62), body.y(axes_bottom),
                             body.x(middle - 0.25 - body.left - 0.62), body.y(body.top - 0.05 - axes_bottom)))
    handles = _draw_chart(chart, sheet, table, imperial=imperial)
    figure.legend(handles=handles, loc="upper center", ncol=min(len(handles), 5), fontsize=7, frameon=False,
                  bbox_to_anchor=(body.x((body.left + middle - 0.25) / 2 + 0.3), body.y(axes_bottom - 0.42)),
                  handlelength=3.2, columnspacing=1.4, borderaxespad=0)
    figure.text(body.x(body.left), body.y(body.bottom + 0.02),
                "Lower curve: sharp from; upper curve: sharp to; a far limit at ∞ leaves the top edge. "
                "Marker on its own: focused at the hyperfocal distance.", fontsize=6.5, color=INK, va="baseline")
    # Right: the facts at the bottom (their height measured), the zone bars above them.
    facts_top = _draw_facts(figure, sheet, table, body, left=middle + 0.25, imperial=imperial)
    bars_bottom = facts_top + 0.6
    bars = figure.add_axes((body.x(middle + 0.25 + 0.62), body.y(bars_bottom),
                            body.x(body.right - middle - 0.25 - 0.62 - 0.3), body.y(body.top - 0.2 - bars_bottom)))
    _draw_bars(bars, sheet, table, imperial=imperial)
    return figure


def _palette(count: int) -> list:
    """Colours running dark to light (viridis: its lightness rises steadily, so neighbours
    also differ in grey)."""
    from matplotlib import colormaps

    return [colormaps["viridis"](value) for value in np.linspace(0.0, 0.88, max(count, 1))]


def curve_styles(count: int) -> list[dict]:
    """Per charted f-number: colour, line style and marker, all three different from its
    neighbours'."""
    return [{"color": colour, "linestyle": LINE_STYLES[i % len(LINE_STYLES)], "marker": MARKERS[i % len(MARKERS)]}
            for i, colour in enumerate(_palette(count))]


def _charted_columns(table: FocalTable) -> list[int]:
    """The columns that get a curve pair: all, or wide open and the full stops when many."""
    if len(table.f_numbers) <= MAX_CURVE_PAIRS:
        return list(range(len(table.f_numbers)))
    from sharpzone.optics.stops import marked_f_numbers

    full = set(marked_f_numbers("full", 0.5, 128.0))
    return [0] + [column for column, n in enumerate(table.f_numbers) if column and n in full]


def _round_ticks(low_mm: float, high_mm: float, *, imperial: bool, most: int = 8) -> list[float]:
    """Tick positions (mm) at round distances, thinned to at most ``most``."""
    from sharpzone.analysis.sheets import round_distances_mm

    for steps in ((1.0, 2.0, 5.0), (1.0, 3.0), (1.0,)):
        ticks = [d for d in round_distances_mm(steps, imperial=imperial) if low_mm <= d <= high_mm]
        if len(ticks) <= most:
            return ticks
    return ticks[::2]


def _distance_axis(axis, low_mm: float, high_mm: float, *, imperial: bool, most: int = 8) -> None:
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullLocator

    axis.set_major_locator(FixedLocator(_round_ticks(low_mm, high_mm, imperial=imperial, most=most)))
    axis.set_major_formatter(FuncFormatter(lambda value, _position: format_round_distance(value, imperial=imperial)))
    axis.set_minor_locator(NullLocator())


def _style_axes(axes) -> None:
    axes.tick_params(labelsize=7, colors=INK)
    axes.grid(True, color=GRID_INK, linewidth=0.5)
    for spine in axes.spines.values():
        spine.set_color(INK)
        spine.set_linewidth(0.6)


def _legend_label(table: FocalTable, column: int) -> str:
    past = table.past_diffraction_limit[column]
    return f"f/{table.f_numbers[column]:g}" + (f" {DIFFRACTION_MARK}" if past else "")


def _draw_chart(axes, sheet: Sheet, table: FocalTable, *, imperial: bool) -> list:
    """Near (lower) and far (upper) limit curves against focus distance, both log scales;
    returns the legend handles (one per charted f-number)."""
    from matplotlib.lines import Line2D

    focus = table.curve_focus_mm
    x_low, x_high = float(focus[0]), float(focus[-1])
    y_high = x_high * Y_HEADROOM
    axes.set_xscale("log")
    axes.set_yscale("log")
    axes.plot(focus, focus, color=INK, linewidth=0.8, linestyle=":")
    charted = _charted_columns(table)
    handles = [Line2D([], [], color=INK, linewidth=0.8, linestyle=":", label="focus distance")]
    every = max(1, len(focus) // 7)
    for order, (column, style) in enumerate(zip(charted, curve_styles(len(charted)))):
        far = np.where(np.isfinite(table.curve_far_mm[:, column]), table.curve_far_mm[:, column], y_high * 10)
        # Markers staggered per curve so that neighbours' markers do not sit on each other.
        marks = slice(order % every, None, every)
        common = {"color": style["color"], "linestyle": style["linestyle"], "linewidth": 1.4,
                  "marker": style["marker"], "markersize": 3.6, "markevery": marks, "markerfacecolor": "white",
                  "markeredgewidth": 0.9}
        axes.plot(focus, table.curve_near_mm[:, column], **common)
        axes.plot(focus, far, **common)
        hyperfocal = float(table.hyperfocal_mm[column])
        if x_low <= hyperfocal <= x_high:
            axes.plot([hyperfocal], [table.hyperfocal_near_mm[column]], marker=style["marker"], markersize=5.5,
                      color=style["color"], linestyle="none")
        handles.append(Line2D([], [], label=_legend_label(table, column), **{k: v for k, v in common.items()
                                                                              if k != "markevery"}))
    axes.set_xlim(x_low, x_high)
    axes.set_ylim(min(float(table.curve_near_mm.min()), x_low) * 0.9, y_high)
    _distance_axis(axes.xaxis, x_low * 0.5, y_high * 2, imperial=imperial, most=7)
    _distance_axis(axes.yaxis, x_low * 0.5, y_high * 2, imperial=imperial, most=9)
    _style_axes(axes)
    where = "from the sensor" if sheet.reference == "sensor" else "from the lens"
    axes.set_xlabel(f"focus distance ({where})", fontsize=8, color=INK)
    axes.set_ylabel("sharp from / sharp to", fontsize=8, color=INK)
    return handles


def bar_rows(table: FocalTable, most: int = 3) -> list[int]:
    """The focus rows the zone bars show: up to ``most`` finite rows spread evenly on a log
    scale over the ladder (the close-focus row only when few rows are finite)."""
    finite = [row for row, focus in enumerate(table.focus_mm) if math.isfinite(focus)]
    if len(finite) > most + 1:
        finite = finite[1:]
    if len(finite) <= most:
        return finite
    logs = np.log([table.focus_mm[row] for row in finite])
    wanted = np.linspace(logs[0], logs[-1], most + 2)[1:-1] if most > 1 else [logs.mean()]
    chosen = sorted({finite[int(np.argmin(np.abs(logs - value)))] for value in wanted})
    return chosen


def _draw_bars(axes, sheet: Sheet, table: FocalTable, *, imperial: bool) -> None:
    """Zone bars: for each chosen focus distance a group of horizontal bars, one per charted
    f-number, from sharp-from to sharp-to on a distance scale; ◆ at each f-number's
    hyperfocal distance, a dotted line at the focus distance."""
    charted = _charted_columns(table)
    styles = curve_styles(len(charted))
    rows = bar_rows(table, most=3 if len(charted) <= 6 else 2)
    if not rows:
        axes.set_axis_off()
        return
    near = table.near_mm[rows][:, charted]
    far = table.far_mm[rows][:, charted]
    hyperfocal = table.hyperfocal_mm[charted]
    finite_far = far[np.isfinite(far)]
    x_low = float(near.min()) * 0.8
    x_high = max(float(finite_far.max()) if finite_far.size else 0.0, float(hyperfocal.max()),
                 float(table.focus_mm[rows[-1]])) * 2.2
    axes.set_xscale("log")
    axes.set_xlim(x_low, x_high)
    y_ticks, y_labels = [], []
    y = 0.0
    per_group = len(charted) + 1.4
    for group, row in enumerate(rows):
        top = y
        axes.text(x_low * 1.03, top + 0.2, f"focused at {format_round_distance(float(table.focus_mm[row]), imperial=imperial)}",
                  fontsize=7, fontweight="bold", color=INK, va="center", ha="left")
        for order, (column, style) in enumerate(zip(charted, styles)):
            centre = top + 1.2 + order
            start, end = float(table.near_mm[row, column]), float(table.far_mm[row, column])
            reaches_infinity = not math.isfinite(end)
            stop = x_high if reaches_infinity else end
            axes.barh(centre, stop - start, left=start, height=0.62, color=style["color"], edgecolor=INK,
                      linewidth=0.4, hatch=None)
            if reaches_infinity:
                axes.plot([x_high], [centre], marker=">", markersize=4, color=INK, clip_on=False)
            axes.plot([float(table.hyperfocal_mm[column])], [centre], marker="D", markersize=4.2,
                      markerfacecolor="white", markeredgecolor=INK, markeredgewidth=0.8, linestyle="none")
            y_ticks.append(centre)
            y_labels.append(_legend_label(table, column))
        axes.plot([float(table.focus_mm[row])] * 2, [top + 0.6, top + 1.8 + len(charted) - 1], color=INK,
                  linewidth=0.8, linestyle=":")
        y = top + per_group
    axes.set_ylim(y - 0.3, -0.4)
    axes.set_yticks(y_ticks)
    axes.set_yticklabels(y_labels, fontsize=6.5)
    _distance_axis(axes.xaxis, x_low, x_high, imperial=imperial, most=6)
    _style_axes(axes)
    axes.grid(False, axis="y")
    axes.tick_params(axis="y", length=0, labelsize=6.5)
    axes.set_title("Zone bars: sharp from – sharp to;  ◆ hyperfocal distance;  ▶ reaches ∞", fontsize=7.5,
                   color=INK, loc="left")


def _draw_facts(figure, sheet: Sheet, table: FocalTable, body: _Frame, *, left: float, imperial: bool) -> float:
    """The facts block at the bottom right: bold labels, wrapped text beside. Returns the
    height (inches from the bottom) of its top edge."""
    size, line = 7.0, 7.0 * 1.32 / 72
    facts = sheet_facts(sheet, imperial=imperial, table=table)
    label_width = max(_text_size_in(figure, label, size, "bold")[0] for label, _value in facts) + 0.12
    text_width = body.right - left - label_width
    blocks = [(label, _wrap_measured(figure, value, size, text_width)) for label, value in facts]
    height = sum(len(lines) * line + 0.035 for _label, lines in blocks)
    y = body.bottom + 0.3 + height
    top = y
    for label, lines in blocks:
        figure.text(body.x(left), body.y(y), label, fontsize=size, fontweight="bold", color=INK, va="top")
        figure.text(body.x(left + label_width), body.y(y), "\n".join(lines), fontsize=size, color=INK, va="top",
                    linespacing=1.32)
        y -= len(lines) * line + 0.035
    return top


def _wrap_measured(figure, text: str, size: float, width_in: float) -> list[str]:
    """``text`` broken into lines no wider than ``width_in`` as set at ``size``."""
    lines: list[str] = []
    for word in text.split():
        candidate = f"{lines[-1]} {word}" if lines else word
        if lines and _measured_width_in(figure, candidate, "normal") * size / 10.0 <= width_in:
            lines[-1] = candidate
        else:
            lines.append(word)
    return lines or [""]


# ---- table pages ---------------------------------------------------------------------------

def _column_widths(figure, text: TableText, size: float) -> tuple[float, list[float]]:
    """Width (inches) of the label column and of each f-number column, from the widest text
    (measured once at 10 pt and scaled: type widths grow in proportion to the size)."""
    scale = size / 10.0

    def widest(strings, weight="normal"):
        return max(_measured_width_in(figure, s, weight) for s in set(strings)) * scale

    labels = [label for label, _cells in text.rows] + [text.heads[0]]
    label_width = widest(labels, "bold") + CELL_PAD_IN
    widths = [max(widest([cells[column] for _label, cells in text.rows]),
                  widest([text.heads[column + 1]], "bold")) + CELL_PAD_IN
              for column in range(len(text.heads) - 1)]
    return label_width, widths


_WIDTHS: dict[tuple[str, str], float] = {}


def _measured_width_in(figure, text: str, weight: str) -> float:
    """Width (inches) of ``text`` at 10 pt, remembered: tables repeat their strings."""
    key = (text, weight)
    if len(_WIDTHS) > 20_000:
        _WIDTHS.clear()
    if key not in _WIDTHS:
        # Rounding up by 2 % covers the hinting differences between sizes.
        _WIDTHS[key] = _text_size_in(figure, text, 10.0, weight)[0] * 1.02
    return _WIDTHS[key]


def table_parts(label_width: float, widths: list[float], available_in: float) -> list[tuple[int, int]]:
    """Split the f-number columns into the fewest runs (start, stop) of near-equal length
    that each fit ``available_in`` beside the label column."""
    count = len(widths)
    for parts in range(1, count + 1):
        per = math.ceil(count / parts)
        runs = [(start, min(start + per, count)) for start in range(0, count, per)]
        if all(label_width + sum(widths[a:b]) <= available_in for a, b in runs):
            return runs
    return [(c, c + 1) for c in range(count)]


def _table_pages(sheet: Sheet, table: FocalTable, size, *, imperial: bool) -> list:
    """The table of one focal length on as many pages as it needs, every part full width."""
    text = table_text(sheet, table, imperial=imperial)
    figure, body = _furnished_page(sheet, table, size, subtitle="Table: sharp from – sharp to")
    # Of the sizes that put the whole table on one page, the one with the fewest parts and
    # then the largest type; when none does, the smallest type over as many pages as needed.
    layouts = []
    for font in TABLE_FONTS_PT:
        label_width, widths = _column_widths(figure, text, font)
        runs = table_parts(label_width, widths, body.right - body.left)
        row_height = font * TABLE_LINE / 72
        part_height = (len(text.rows) + 1) * row_height + PART_GAP_IN
        fits = len(runs) * part_height - PART_GAP_IN <= body.top - body.bottom
        layouts.append((not fits, len(runs) if fits else 0, -font, font, label_width, widths, runs, row_height,
                        part_height))
    fitting = [layout for layout in layouts if not layout[0]]
    chosen = min(fitting) if fitting else layouts[-1]
    font, label_width, widths, runs, row_height, part_height = chosen[3:]
    pages = [figure]
    y = body.top
    for start, stop in runs:
        if y - (part_height - PART_GAP_IN) < body.bottom and y != body.top:
            figure, body = _furnished_page(sheet, table, size, subtitle="Table, continued: sharp from – sharp to")
            pages.append(figure)
            y = body.top
        part = column_slice(text, start, stop)
        spare = (body.right - body.left - label_width - sum(widths[start:stop])) / max(stop - start, 1)
        _draw_table(figure, body, part, y, label_width, [w + min(spare, 0.35) for w in widths[start:stop]],
                    row_height, font)
        y -= part_height
    return pages


def _draw_table(figure, body: _Frame, text: TableText, top: float, label_width: float, widths: list[float],
                row_height: float, size: float) -> None:
    """One part of a table from ``top`` (inches) down: bold heads over a rule, striped rows,
    the hyperfocal rows shaded, columns past the diffraction limit in grey italics."""
    from matplotlib.lines import Line2D
    from matplotlib.patches import Rectangle

    total = label_width + sum(widths)
    left = body.left
    rights = list(np.cumsum([label_width, *widths]) + left)

    def baseline(row: int) -> float:
        return top - (row + 1) * row_height + 0.3 * row_height

    for row in range(len(text.rows)):
        fill = HYPERFOCAL_FILL if row >= text.ladder_rows else STRIPE if row % 2 else None
        if fill:
            y0 = top - (row + 2) * row_height
            figure.add_artist(Rectangle((body.x(left), body.y(y0)), body.x(total), body.y(row_height),
                                        transform=figure.transFigure, facecolor=fill, edgecolor="none", zorder=0))
    figure.add_artist(Line2D([body.x(left), body.x(left + total)], [body.y(top - row_height)] * 2,
                             transform=figure.transFigure, color=INK, linewidth=0.9))
    marked = [False, *text.marked_columns]
    for column, head in enumerate(text.heads):
        x = left + CELL_PAD_IN / 2 if column == 0 else rights[column] - CELL_PAD_IN / 2
        figure.text(body.x(x), body.y(baseline(0)), head, fontsize=size, fontweight="bold",
                    color=PAST_INK if marked[column] else INK, ha="left" if column == 0 else "right", va="baseline")
    for row, (label, cells) in enumerate(text.rows, start=1):
        figure.text(body.x(left + CELL_PAD_IN / 2), body.y(baseline(row)), label, fontsize=size, fontweight="bold",
                    color=INK, va="baseline")
        for column, cell in enumerate(cells, start=1):
            past = marked[column]
            figure.text(body.x(rights[column] - CELL_PAD_IN / 2), body.y(baseline(row)), cell, fontsize=size,
                        color=PAST_INK if past else INK, style="italic" if past else "normal", ha="right",
                        va="baseline")


# ---- the chart for HTML ---------------------------------------------------------------------

def chart_svg(sheet: Sheet, table: FocalTable, *, imperial: bool = False) -> str:
    """The limit curves and zone bars of ``table`` as an inline SVG element (text kept as
    text), sized in millimetres to the printable width of a landscape page."""
    from matplotlib import rc_context

    # Narrower than the printable width of Letter (255 mm), so printed it only grows.
    width_in, height_in = 9.9, 3.9
    figure = _new_figure((width_in, height_in))
    frame = _Frame(width_in, height_in, 0.05, width_in - 0.05, height_in - 0.1, 0.05)
    charted = _charted_columns(table)
    legend_rows = math.ceil((len(charted) + 1) / 5)
    axes_bottom = 0.55 + 0.17 * legend_rows + 0.2
    chart = figure.add_axes((frame.x(0.65), frame.y(axes_bottom), frame.x(4.3), frame.y(height_in - 0.15 - axes_bottom)))
    handles = _draw_chart(chart, sheet, table, imperial=imperial)
    figure.legend(handles=handles, loc="upper center", ncol=min(len(handles), 5), fontsize=7, frameon=False,
                  bbox_to_anchor=(frame.x(0.65 + 2.15), frame.y(axes_bottom - 0.42)), handlelength=3.2,
                  columnspacing=1.4, borderaxespad=0)
    bars = figure.add_axes((frame.x(5.75), frame.y(0.45), frame.x(width_in - 5.75 - 0.1),
                            frame.y(height_in - 0.45 - 0.35)))
    _draw_bars(bars, sheet, table, imperial=imperial)
    out = io.StringIO()
    with rc_context({"svg.fonttype": "none", "svg.hashsalt": "sharpzone"}):
        figure.savefig(out, format="svg", metadata={"Date": None})
    svg = out.getvalue()
    svg = svg[svg.index("<svg"):]
    # Size it to the page's width; the viewBox keeps the drawing's proportions.
    return svg.replace(f'width="{width_in * 72:g}pt" height="{height_in * 72:g}pt"',
                       'width="100%" height="auto" role="img"', 1)
