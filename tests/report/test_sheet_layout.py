"""Sheets that print: every form rendered and read back by libraries that did not write it —
pdfminer.six measures each character's box in the PDFs, WeasyPrint (an HTML/CSS typesetter)
prints the HTML to PDF pages that pdfminer then measures, Pillow opens the PNG. Each checks
the page size, that no two characters overlap, that nothing comes nearer the paper's edge
than a printer can print, and that the type stays readable; metric and imperial, full,
half and third stops.

Page sizes: ISO 216 A4 is 297 × 210 mm, US Letter 8.5 × 11 in; 1 pt = 1/72 in."""

from __future__ import annotations

import io

import numpy as np
import pytest

from sharpzone.analysis.setting import choose_coc
from sharpzone.analysis.sheets import LensSpec, build_sheet
from sharpzone.report.sheet_files import render_sheet

pdfminer_layout = pytest.importorskip("pdfminer.layout")
from pdfminer.high_level import extract_pages  # noqa: E402

A4_LANDSCAPE_PT = (297 / 25.4 * 72, 210 / 25.4 * 72)
LETTER_LANDSCAPE_PT = (11 * 72, 8.5 * 72)
# Office printers leave about 5 mm unprinted at each edge (common practice).
PRINTABLE_EDGE_PT = 5 / 25.4 * 72

PRIME = LensSpec("Korvath 50/1.8", 50, 50, 1.8, 1.8, 22, 450)
ZOOM = LensSpec("Altamira 24-105/4", 24, 105, 4, 4, 22, 450)
MACRO = LensSpec("Vale Macro 100/2.8", 100, 100, 2.8, 2.8, 32, 300, 1.0, 1.0)
CASES = [(stops, imperial) for stops in ("full", "half", "third") for imperial in (False, True)]


def _sheet(lens, stops, imperial, **options):
    return build_sheet(lens, choose_coc(sensor="36x24"), stops=stops, imperial=imperial, **options)


def _pages(pdf: bytes):
    """Per page: (width, height, char boxes as an array of x0, y0, x1, y1, size)."""
    pages = []
    for page in extract_pages(io.BytesIO(pdf)):
        boxes = []

        def walk(item):
            if isinstance(item, pdfminer_layout.LTChar):
                if item.get_text().strip():
                    # The box is one type size tall across the line of text: its height, or
                    # its width for text turned a quarter (an axis label).
                    turned = abs(item.matrix[1]) > abs(item.matrix[0])
                    size = item.width if turned else item.height
                    boxes.append((item.x0, item.y0, item.x1, item.y1, size))
            elif hasattr(item, "__iter__"):
                for child in item:
                    walk(child)

        walk(page)
        pages.append((page.width, page.height, np.array(boxes, dtype=float).reshape(-1, 5)))
    return pages


def _overlaps(boxes: np.ndarray) -> list[tuple[int, int]]:
    """Pairs of characters whose boxes share more than a fifth of the smaller box: sweep in x."""
    order = np.argsort(boxes[:, 0])
    b = boxes[order]
    area = (b[:, 2] - b[:, 0]) * (b[:, 3] - b[:, 1])
    found = []
    for i in range(len(b)):
        j = i + 1
        while j < len(b) and b[j, 0] < b[i, 2]:
            width = min(b[i, 2], b[j, 2]) - b[j, 0]
            height = min(b[i, 3], b[j, 3]) - max(b[i, 1], b[j, 1])
            # Neighbours in one word may kern into each other ("Ta"); that is type, not a clash.
            neighbours = abs(int(order[i]) - int(order[j])) == 1 and abs(b[i, 1] - b[j, 1]) < 0.5
            if width > 0 and height > 0 and width * height > 0.2 * min(area[i], area[j]) and not neighbours:
                found.append((int(order[i]), int(order[j])))
            j += 1
    return found


def _check_pages(pdf: bytes, size_pt, smallest_pt: float) -> list:
    pages = _pages(pdf)
    assert pages
    for number, (width, height, boxes) in enumerate(pages, start=1):
        assert (width, height) == pytest.approx(size_pt, abs=0.5), f"page {number} is {width} × {height} pt"
        assert len(boxes), f"page {number} has no text"
        edge = PRINTABLE_EDGE_PT
        inside = ((boxes[:, 0] >= edge) & (boxes[:, 2] <= width - edge) & (boxes[:, 1] >= edge)
                  & (boxes[:, 3] <= height - edge))
        assert inside.all(), f"page {number}: {int((~inside).sum())} characters nearer the edge than 5 mm"
        assert boxes[:, 4].min() >= smallest_pt - 0.05, f"page {number}: type of {boxes[:, 4].min():.1f} pt"
        clashes = _overlaps(boxes)
        assert not clashes, f"page {number}: {len(clashes)} overlapping characters, e.g. at {boxes[clashes[0][0], :2]}"
    return pages


@pytest.mark.parametrize("stops, imperial", CASES)
def test_pdf_pages_are_a4_readable_and_clear(stops, imperial):
    sheet = _sheet(PRIME, stops, imperial)
    pages = _check_pages(render_sheet(sheet, ".pdf", imperial=imperial), A4_LANDSCAPE_PT, smallest_pt=6.5)
    assert len(pages) >= 2  # the pictures, then the table


def test_pdf_of_a_zoom_in_imperial_thirds_on_letter():
    # The worst case measured before: imperial third stops ran cells into each other.
    sheet = _sheet(ZOOM, "third", True, focal_lengths=[24, 105])
    _check_pages(render_sheet(sheet, ".pdf", imperial=True, paper="letter"), LETTER_LANDSCAPE_PT, smallest_pt=6.5)


def test_pdf_of_a_macro_lens():
    sheet = _sheet(MACRO, "half", False)
    _check_pages(render_sheet(sheet, ".pdf"), A4_LANDSCAPE_PT, smallest_pt=6.5)


def _weasyprint():
    weasyprint = pytest.importorskip("weasyprint")
    return weasyprint


@pytest.mark.parametrize("stops, imperial", CASES)
def test_html_tables_print_on_a4_with_readable_type_and_nothing_cut(stops, imperial):
    from sharpzone.report.sheet_text import render_html

    weasyprint = _weasyprint()
    # The tables alone (the chart is the same picture at every scale: printed once below).
    page = render_html(_sheet(PRIME, stops, imperial), imperial=imperial, charts=False)
    # Table type at least 7.5 pt: no more ~6 pt third-stop tables.
    _check_pages(weasyprint.HTML(string=page).write_pdf(), A4_LANDSCAPE_PT, smallest_pt=7.5)


def test_html_with_its_chart_prints_on_a4():
    weasyprint = _weasyprint()
    page = render_sheet(_sheet(PRIME, "full", False), ".html").decode("utf-8")
    assert page.count("<svg") == 1 and "size: A4 landscape" in page
    # Chart labels at least 6.5 pt, as in the PDF.
    _check_pages(weasyprint.HTML(string=page).write_pdf(), A4_LANDSCAPE_PT, smallest_pt=6.5)


def test_html_of_a_zoom_in_imperial_thirds_on_letter():
    weasyprint = _weasyprint()
    sheet = _sheet(ZOOM, "third", True, focal_lengths=[24, 105])
    page = render_sheet(sheet, ".html", imperial=True, paper="letter").decode("utf-8")
    assert "size: letter landscape" in page
    _check_pages(weasyprint.HTML(string=page).write_pdf(), LETTER_LANDSCAPE_PT, smallest_pt=6.5)


def _png(data: bytes):
    from PIL import Image

    image = Image.open(io.BytesIO(data))
    image.load()
    return image


def _blank_edges(image, page_height_px: int) -> None:
    """Every page of the PNG keeps a white band at all four edges: nothing is cut."""
    pixels = np.asarray(image.convert("L"))
    band = 24  # px at 120 dpi: 5 mm
    for top in range(0, pixels.shape[0], page_height_px):
        page = pixels[top:top + page_height_px]
        for name, strip in (("top", page[:band]), ("bottom", page[-band:]), ("left", page[:, :band]),
                            ("right", page[:, -band:])):
            assert strip.min() >= 250, f"page at {top} px: ink in the {name} 5 mm"


@pytest.mark.parametrize("stops, imperial, focal_lengths", [("full", False, [24, 105]), ("third", True, [105])])
def test_png_of_a_zoom_holds_every_page_with_nothing_cut(stops, imperial, focal_lengths):
    from sharpzone.report.sheet_chart import PNG_DPI, sheet_pages

    sheet = _sheet(ZOOM, stops, imperial, focal_lengths=focal_lengths)
    image = _png(render_sheet(sheet, ".png", imperial=imperial))
    pages = len(sheet_pages(sheet, imperial=imperial))
    assert pages >= 2 * len(focal_lengths)  # pictures and table for each focal length, not only charts
    page_height = round(210 / 25.4 * PNG_DPI)
    assert image.size == (round(297 / 25.4 * PNG_DPI), pages * page_height)
    _blank_edges(image, page_height)


def test_png_of_a_prime_in_half_stops_metric():
    from sharpzone.report.sheet_chart import PNG_DPI

    image = _png(render_sheet(_sheet(PRIME, "half", False), ".png", paper="letter"))
    assert image.size[0] == 11 * PNG_DPI and image.size[1] % round(8.5 * PNG_DPI) == 0
    _blank_edges(image, round(8.5 * PNG_DPI))


def test_curves_differ_in_colour_line_style_and_marker():
    from sharpzone.report.sheet_chart import curve_styles

    styles = curve_styles(9)
    for before, after in zip(styles, styles[1:]):
        assert before["linestyle"] != after["linestyle"] and before["marker"] != after["marker"]
        # Neighbours differ in grey too (ITU-R BT.601 luma weights 0.299, 0.587, 0.114).
        luma = [0.299 * s["color"][0] + 0.587 * s["color"][1] + 0.114 * s["color"][2] for s in (before, after)]
        assert abs(luma[0] - luma[1]) > 0.03
    assert len({s["marker"] for s in styles}) == 9
