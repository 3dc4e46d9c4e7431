"""``sharpzone sheet`` through typer's CliRunner, on a throwaway catalogue."""

from __future__ import annotations

import csv
import json
import math

import pytest
from typer.testing import CliRunner

from sharpzone.cli.app import app

runner = CliRunner()


@pytest.fixture
def catalog_path(tmp_path):
    """A catalogue file with an invented zoom, prime and body."""
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.service import add_body, add_lens

    path = tmp_path / "catalog.sqlite"
    with session_scope(path) as session:
        add_lens(session, "Altamira 24-70/2.8", focal_min_mm=24, focal_max_mm=70, max_aperture_wide=2.8,
                 close_focus_mm=380, exif_names=["ALTAMIRA OPTICAL 24-70mm F2.8"])
        add_lens(session, "Korvath 50/1.8", focal_min_mm=50, max_aperture_wide=1.8, close_focus_mm=450,
                 pupil_magnification=0.8)
        add_body(session, "Korvath KX-2", exif_make="Korvath", exif_model="KX-2", format_name="aps-c",
                 pixel_width=6000, pixel_height=4000)
    return path


def invoke(catalog_path, *args: str):
    return runner.invoke(app, ["--catalog", str(catalog_path), *args])


def _csv_rows(path):
    with open(path, encoding="utf-8", newline="") as handle:
        return list(csv.DictReader(handle))


def test_csv_sheet_of_a_zoom_by_its_exif_alias(catalog_path, tmp_path):
    out = tmp_path / "zoom.csv"
    result = invoke(catalog_path, "sheet", "ALTAMIRA OPTICAL 24-70mm F2.8", "--out", str(out))
    assert result.exit_code == 0, result.output
    assert str(out) in result.stdout
    rows = _csv_rows(out)
    assert {r["lens"] for r in rows} == {"Altamira 24-70/2.8"}
    assert sorted({float(r["focal_mm"]) for r in rows}) == [24.0, 35.0, 50.0, 70.0]
    assert min(float(r["focus_m"]) for r in rows if r["focus_m"] != "inf") == pytest.approx(0.38)


def test_sheet_rows_equal_dof_json(catalog_path, tmp_path):
    out = tmp_path / "prime.csv"
    result = invoke(catalog_path, "sheet", "korvath 50/1.8", "--body", "Korvath KX-2", "--distances", "3m,10m",
                    "-d", "inf", "--out", str(out))
    assert result.exit_code == 0, result.output
    rows = _csv_rows(out)
    assert {r["sensor"] for r in rows} == {"aps-c-23.6x15.7"}
    for row in rows:
        if row["at_hyperfocal"] == "true":
            continue
        focus = "inf" if row["focus_m"] == "inf" else f"{row['focus_m']}m"
        dof = runner.invoke(app, ["dof", "--focal", row["focal_mm"], "--aperture", row["f_number"], "--distance",
                                  focus, "--sensor", "aps-c", "--pupil", "0.8", "--json"])
        data = json.loads(dof.stdout)
        for key in ("near_m", "far_m", "total_m", "hyperfocal_m"):
            expected = data[key]
            got = row[key]
            assert got == expected if expected == "inf" else float(got) == pytest.approx(expected, rel=1e-12)
        assert float(row["coc_mm"]) == pytest.approx(data["coc_mm"], rel=1e-15)


@pytest.mark.parametrize("form", ["md", "html", "pdf", "png"])
def test_every_form_is_written(catalog_path, tmp_path, form):
    out = tmp_path / f"prime.{form}"
    result = invoke(catalog_path, "sheet", "Korvath 50/1.8", "-o", str(out), "--stops", "half")
    assert result.exit_code == 0, result.output
    assert out.stat().st_size > 500


def test_imperial_sheet_shows_feet(catalog_path, tmp_path):
    out = tmp_path / "prime.md"
    result = invoke(catalog_path, "sheet", "Korvath 50/1.8", "-o", str(out), "--imperial")
    assert result.exit_code == 0, result.output
    text = out.read_text(encoding="utf-8")
    assert " ft" in text and "| 3 ft |" in text


def test_fixed_coc_and_lens_reference_reach_the_sheet(catalog_path, tmp_path):
    out = tmp_path / "prime.csv"
    result = invoke(catalog_path, "sheet", "Korvath 50/1.8", "-o", str(out), "--coc", "0.03",
                    "--reference", "lens", "--focal", "50")
    assert result.exit_code == 0, result.output
    rows = _csv_rows(out)
    assert {r["coc_mm"] for r in rows} == {"0.03"} and {r["reference"] for r in rows} == {"lens"}
    # Lens-referenced exact form H = f²/(N c) + f (Open Photographic Society, "Hyperfocal distance").
    f8 = next(r for r in rows if r["f_number"] == "8.0")
    assert float(f8["hyperfocal_m"]) == pytest.approx((50 * 50 / (8 * 0.03) + 50) / 1000)
    assert not math.isinf(float(f8["near_m"]))


@pytest.mark.parametrize(
    "args, code, words",
    [
        (("Korvath 50/1.8", "--out", "sheet.docx"), 2, "--out: sheet file 'sheet.docx' has extension '.docx': "
                                                       "expected one of .csv, .md, .html, .pdf, .png"),
        (("Nosuch 35/2", "--out", "sheet.csv"), 1, "no lens named 'Nosuch 35/2'"),
        (("Korvath 50/1.8", "--out", "sheet.csv", "--focal", "85"), 2, "focal length 85 mm is outside"),
        (("Korvath 50/1.8", "--out", "sheet.csv", "--stops", "quarter"), 2, "--stops: 'quarter' is not valid"),
        (("Korvath 50/1.8", "--out", "sheet.csv", "-d", "20cm"), 2, "nearer than the close-focus distance"),
        (("Korvath 50/1.8", "--out", "sheet.csv", "-d", "far"), 2, "--distances: 'far' is not a distance"),
        (("Korvath 50/1.8", "--out", "sheet.csv", "--body", "Korvath KX-2", "--sensor", "36x24"), 2,
         "either --body or --sensor"),
        (("Korvath 50/1.8", "--out", "sheet.csv", "--sensor", "nosuch"), 1, "no sensor format 'nosuch'"),
        (("Korvath 50/1.8", "--out", "no/such/folder/sheet.csv"), 1, "does not exist"),
    ],
)
def test_bad_input_is_one_clear_line_and_no_file(catalog_path, tmp_path, monkeypatch, args, code, words):
    monkeypatch.chdir(tmp_path)
    before = set(tmp_path.iterdir())
    result = invoke(catalog_path, "sheet", *args)
    assert result.exit_code == code, result.output
    assert result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and words in lines[0] and "Traceback" not in result.stderr
    assert set(tmp_path.iterdir()) == before


def test_sheet_has_help_text():
    result = runner.invoke(app, ["sheet", "--help"])
    assert result.exit_code == 0
    assert "sharp-zone sheet" in result.stdout and "--out" in result.stdout


def test_paper_letter_on_request_and_a4_by_default(catalog_path, tmp_path):
    from pypdf import PdfReader

    a4, letter = tmp_path / "a4.pdf", tmp_path / "letter.pdf"
    assert invoke(catalog_path, "sheet", "Korvath 50/1.8", "-o", str(a4)).exit_code == 0
    assert invoke(catalog_path, "sheet", "Korvath 50/1.8", "-o", str(letter), "--paper", "Letter").exit_code == 0
    # ISO 216 A4 landscape 297 × 210 mm = 841.9 × 595.3 pt; US Letter 11 × 8.5 in = 792 × 612 pt.
    box = PdfReader(a4).pages[0].mediabox
    assert (float(box.width), float(box.height)) == pytest.approx((841.89, 595.28), abs=0.01)
    box = PdfReader(letter).pages[0].mediabox
    assert (float(box.width), float(box.height)) == (792, 612)
    refused = invoke(catalog_path, "sheet", "Korvath 50/1.8", "-o", str(tmp_path / "x.pdf"), "--paper", "a3")
    assert refused.exit_code == 2 and "--paper" in refused.output and not (tmp_path / "x.pdf").exists()


def test_sheet_of_a_lens_recording_its_maximum_magnification(catalog_path, tmp_path):
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.service import add_lens

    with session_scope(catalog_path) as session:
        add_lens(session, "Vale Macro 100/2.8", focal_min_mm=100, max_aperture_wide=2.8, min_aperture=32,
                 close_focus_mm=300, max_magnification=1.0)
    out = tmp_path / "macro.csv"
    assert invoke(catalog_path, "sheet", "Vale Macro 100/2.8", "-o", str(out)).exit_code == 0
    first = _csv_rows(out)[0]
    # The rows start at the lens's own close focus (30 cm), not at 4 × 100 mm = 40 cm.
    assert float(first["focus_m"]) == pytest.approx(0.3)
    # At 1:1 with f/2.8: depth ≈ 2 N c (1 + m)/m² = 2 × 2.8 × 0.0288 × 2 = 0.32 mm (common
    # practice; D. Jacobson, "Photographic Lenses Tutorial", §04).
    assert float(first["total_m"]) * 1000 == pytest.approx(2 * 2.8 * float(first["coc_mm"]) * 2, rel=0.02)
    markdown = tmp_path / "macro.md"
    assert invoke(catalog_path, "sheet", "Vale Macro 100/2.8", "-o", str(markdown)).exit_code == 0
    assert "Close focusing" in markdown.read_text(encoding="utf-8")
