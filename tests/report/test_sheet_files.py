"""Sheet files: each form opened by a general-purpose reader (csv, html.parser, pypdf,
Pillow), not by the code that wrote it."""

from __future__ import annotations

import csv
import math
from html.parser import HTMLParser

import pytest

from sharpzone.analysis.setting import choose_coc
from sharpzone.analysis.sheets import LensSpec, build_sheet
from sharpzone.errors import InvalidValue
from sharpzone.report import sheet_files
from sharpzone.report.sheet_files import write_sheet

ZOOM = LensSpec("Altamira 24-70/2.8", 24, 70, 2.8, 2.8, 22, 380)
PRIME = LensSpec("Korvath 50/1.8", 50, 50, 1.8, 1.8, 22, 450)


@pytest.fixture(scope="module")
def zoom_sheet():
    return build_sheet(ZOOM, choose_coc(sensor="36x24"))


@pytest.fixture(scope="module")
def prime_sheet():
    return build_sheet(PRIME, choose_coc(sensor="36x24"))


def test_csv_parses_into_tidy_rows(tmp_path, zoom_sheet):
    path = write_sheet(zoom_sheet, tmp_path / "zoom.csv")
    rows = list(csv.DictReader(path.open(encoding="utf-8", newline="")))
    required = {"focal_mm", "f_number", "focus_m", "near_m", "far_m", "hyperfocal_m", "total_m", "coc_mm",
                "sensor", "reference", "lens"}
    assert required <= set(rows[0])
    expected_rows = sum(len(t.f_numbers) * (len(t.focus_mm) + 1) for t in zoom_sheet.tables)
    assert len(rows) == expected_rows
    assert {float(r["focal_mm"]) for r in rows} == {24.0, 35.0, 50.0, 70.0}
    assert all(r["lens"] == "Altamira 24-70/2.8" and r["sensor"] == "36x24" for r in rows)
    table = zoom_sheet.tables[2]
    column = table.f_numbers.index(8.0)
    at_3m = next(r for r in rows if r["focal_mm"] == "50.0" and r["f_number"] == "8.0" and r["focus_m"] == "3.0")
    assert float(at_3m["near_m"]) == pytest.approx(table.near_mm[list(table.focus_mm).index(3000.0), column] / 1000)
    infinite = [r for r in rows if r["focus_m"] == "inf"]
    assert infinite and all(r["far_m"] == "inf" and r["total_m"] == "inf" for r in infinite)
    at_hyperfocal = [r for r in rows if r["at_hyperfocal"] == "true"]
    assert len(at_hyperfocal) == sum(len(t.f_numbers) for t in zoom_sheet.tables)
    assert all(r["focus_m"] == r["hyperfocal_m"] and r["far_m"] == "inf" for r in at_hyperfocal)


class _TableCounter(HTMLParser):
    """Counts tables, sections and the cells of each table; collects text and tag names."""

    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []
        self.tables: list[list[list[str]]] = []
        self.text: list[str] = []
        self.style = ""
        self._in_style = False
        self._in_cell = False

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        if tag == "table":
            self.tables.append([])
        elif tag == "tr":
            self.tables[-1].append([])
        elif tag in ("td", "th") and self.tables:
            self.tables[-1][-1].append("")
        self._in_style = tag == "style"
        self._in_cell = tag in ("td", "th") or (self._in_cell and tag == "span")

    def handle_endtag(self, tag):
        self._in_style = False
        if tag in ("td", "th"):
            self._in_cell = False

    def handle_data(self, data):
        if self._in_style:
            self.style += data
            return
        self.text.append(data)
        if self._in_cell:
            self.tables[-1][-1][-1] += data


def _parsed_html(path) -> _TableCounter:
    parser = _TableCounter()
    parser.feed(path.read_text(encoding="utf-8"))
    parser.close()
    return parser


def test_html_holds_one_table_per_focal_length_and_prints_a_page_each(tmp_path, zoom_sheet):
    parsed = _parsed_html(write_sheet(zoom_sheet, tmp_path / "zoom.html"))
    assert len(parsed.tables) == len(zoom_sheet.tables) == 4
    assert parsed.tags.count("section") == 4
    assert "@page" in parsed.style and "page-break-after: always" in parsed.style
    # Self-contained: no scripts, links, images or anything fetched from elsewhere.
    assert not {"script", "link", "img", "iframe"} & set(parsed.tags)
    assert "url(" not in parsed.style and "http" not in parsed.style
    text = " ".join(parsed.text)
    for fact in ("Altamira 24-70/2.8", "36x24", "0.0288 mm", "diagonal / 1500", "sensor plane",
                 "f/21.5", "not safety distances"):
        assert fact in text
    first = parsed.tables[0]
    heads = first[0]
    assert heads[1] == "f/2.8" and heads[-1] == "f/22 †"
    assert len(first) == 1 + len(zoom_sheet.tables[0].focus_mm) + 2
    # Every number carries its unit: each cell is "near – far" with m/cm (or ∞).
    for row in first[1:-2]:
        for cell in row[1:]:
            near, far = cell.split(" – ")
            assert near.endswith(("m", "cm")) and (far.endswith(("m", "cm")) or far == "∞")


def test_markdown_has_a_table_per_focal_length_and_imperial_shows_feet(tmp_path, prime_sheet):
    metric = write_sheet(prime_sheet, tmp_path / "prime.md").read_text(encoding="utf-8")
    assert metric.count("\n## ") == 1 and "| f/1.8 |" in metric and " ft" not in metric
    imperial_sheet = build_sheet(PRIME, choose_coc(), imperial=True)
    imperial = write_sheet(imperial_sheet, tmp_path / "prime-ft.md", imperial=True).read_text(encoding="utf-8")
    assert "| 2 ft |" in imperial and " ft – " in imperial
    assert " m – " not in imperial and " cm" not in imperial


def test_pdf_has_a_page_of_pictures_and_a_table_page_per_focal_length(tmp_path, zoom_sheet):
    from pypdf import PdfReader

    reader = PdfReader(write_sheet(zoom_sheet, tmp_path / "zoom.pdf"))
    assert len(reader.pages) == 8
    for number, page in enumerate(reader.pages):
        focal = ("24 mm", "35 mm", "50 mm", "70 mm")[number // 2]
        text = page.extract_text()
        assert "Altamira 24-70/2.8" in text and focal in text
        assert ("Zone bars" in text) == (number % 2 == 0) and ("Table" in text) == (number % 2 == 1)
        # Landscape A4 by default: 297 × 210 mm = 841.9 × 595.3 pt (1 in = 72 pt = 25.4 mm).
        width, height = float(page.mediabox.width), float(page.mediabox.height)
        assert (width, height) == pytest.approx((297 / 25.4 * 72, 210 / 25.4 * 72), abs=0.01)
    assert reader.metadata.title == "Sharp-zone sheet: Altamira 24-70/2.8"
    letter = PdfReader(write_sheet(zoom_sheet, tmp_path / "zoom-letter.pdf", paper="letter")).pages[0]
    assert (float(letter.mediabox.width), float(letter.mediabox.height)) == (792, 612)  # 11 × 8.5 in


def test_png_holds_every_page_one_under_another(tmp_path, prime_sheet, zoom_sheet):
    from PIL import Image

    # A4 at 120 dpi: 297 mm = 11.69 in → 1403 px, 210 mm = 8.27 in → 992 px per page.
    with Image.open(write_sheet(prime_sheet, tmp_path / "prime.png")) as single:
        assert single.format == "PNG" and single.size == (1403, 2 * 992)
    with Image.open(write_sheet(zoom_sheet, tmp_path / "zoom.png")) as pages:
        assert pages.size == (1403, 8 * 992)


def test_unknown_extension_names_it_and_the_expected_ones(tmp_path, prime_sheet):
    with pytest.raises(InvalidValue) as caught:
        write_sheet(prime_sheet, tmp_path / "prime.docx")
    message = str(caught.value)
    assert "'.docx'" in message and ".csv, .md, .html, .pdf, .png" in message
    assert list(tmp_path.iterdir()) == []
    with pytest.raises(InvalidValue, match="no extension"):
        write_sheet(prime_sheet, tmp_path / "prime")


def test_a_failed_write_leaves_the_old_sheet_whole(tmp_path, prime_sheet, monkeypatch):
    target = tmp_path / "prime.md"
    target.write_text("the old sheet", encoding="utf-8")

    def broken_replace(source, destination):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(sheet_files.os, "replace", broken_replace)
    with pytest.raises(Exception, match="cannot write sheet .*No space left on device"):
        write_sheet(prime_sheet, target)
    assert target.read_text(encoding="utf-8") == "the old sheet"
    assert [p.name for p in tmp_path.iterdir()] == ["prime.md"]


def test_infinite_cells_print_as_the_infinity_sign(prime_sheet):
    from sharpzone.report.sheet_text import table_text

    text = table_text(prime_sheet, prime_sheet.tables[0])
    infinity_row = text.rows[text.ladder_rows - 1]
    assert infinity_row[0] == "∞" and all(cell.endswith("– ∞") for cell in infinity_row[1])
    assert math.isinf(prime_sheet.tables[0].far_mm[-1, 0])


MACRO = LensSpec("Korvath Macro 100/2.8", 100, 100, 2.8, 2.8, 32, 300, pupil_magnification=0.7)


def test_close_up_sheets_say_so_and_keep_near_and_far_apart():
    from sharpzone.report.sheet_text import sheet_facts, table_text

    sheet = build_sheet(MACRO, choose_coc(sensor="36x24"), stops="third")
    facts = dict(sheet_facts(sheet))
    # Effective f-number N (1 + m/P) (D. Jacobson, "Photographic Lenses Tutorial", section 04):
    # at 1:1 with P = 0.7 the lens works at 1 + 1/0.7 = 2.43 × the marked f-number.
    assert "1.00×" in facts["Close-up"] and "2.43 ×" in facts["Close-up"]
    assert "catalogued 30 cm" in facts["Nearest row"]
    text = table_text(sheet, sheet.tables[0])
    label, cells = text.rows[0]
    assert label == "40 cm (model's closest)"
    near, far = cells[0].split(" – ")
    assert near != far


def test_wide_tables_are_split_into_parts_not_squeezed(tmp_path):
    from pypdf import PdfReader

    sheet = build_sheet(MACRO, choose_coc(), stops="third")
    reader = PdfReader(write_sheet(sheet, tmp_path / "macro.pdf"))
    assert 2 <= len(reader.pages) <= 3
    tables = " ".join(page.extract_text() for page in reader.pages[1:])
    assert "f/2.8" in tables and "f/32" in tables and tables.count("Focus at") >= 2


def test_html_tables_keep_readable_type_by_splitting_columns():
    from sharpzone.report.sheet_text import SMALLEST_TABLE_PT, html_table_parts, table_text

    metric = build_sheet(PRIME, choose_coc())
    size, runs = html_table_parts(table_text(metric, metric.tables[0]))
    assert runs == [(0, len(metric.tables[0].f_numbers))] and SMALLEST_TABLE_PT <= size <= 10.0
    imperial = build_sheet(PRIME, choose_coc(), imperial=True, stops="third")
    text = table_text(imperial, imperial.tables[0], imperial=True)
    size, runs = html_table_parts(text, "letter")
    assert len(runs) >= 2 and size >= SMALLEST_TABLE_PT
    assert [c for a, b in runs for c in range(a, b)] == list(range(len(text.heads) - 1))


def test_facts_say_when_close_focus_is_not_catalogued():
    from sharpzone.report.sheet_text import sheet_facts

    lens = LensSpec("Korvath 85/1.4", 85, 85, 1.4, 1.4, 16)
    facts = dict(sheet_facts(build_sheet(lens, choose_coc())))
    assert facts["Lens"] == ("Korvath 85/1.4: 85 mm, f/1.4 to f/16, close focus not catalogued "
                             "(the rows start at 10 × the focal length)")
    assert dict(sheet_facts(build_sheet(ZOOM, choose_coc())))["Lens"].endswith("24–70 mm, f/2.8 to f/22, close focus 38 cm")


def test_each_page_states_the_close_up_remark_of_its_own_focal_length():
    from sharpzone.report.sheet_text import sheet_facts

    # A thin 105 mm lens focused 45 cm from the sensor is near 4 f, so at 0.59×; the same
    # distance with 24 mm is 0.06×, below the close-up threshold (0.1×) of the optics core.
    lens = LensSpec("Altamira 24-105/4", 24, 105, 4, 4, 22, 450)
    sheet = build_sheet(lens, choose_coc())
    assert "Close-up" not in dict(sheet_facts(sheet, table=sheet.tables[0]))
    tele = dict(sheet_facts(sheet, table=sheet.tables[-1]))
    assert tele["Close-up"].startswith("0.59× at 45 cm (105 mm)")
    assert dict(sheet_facts(sheet))["Close-up"] == tele["Close-up"]
