"""CSV for spreadsheets cannot run a formula; bundles keep names exactly.

The rule (cells starting with =, +, -, @, tab or carriage return are formulas to a
spreadsheet; prefix an apostrophe) is OWASP's advice on CSV injection.
"""

from __future__ import annotations

import csv
import datetime as dt
import io

import pytest
from typer.testing import CliRunner

from sharpzone.cli.app import app
from sharpzone.report.spreadsheet import safe_cell

FORMULA = "=cmd|' /C calc'!A0"
runner = CliRunner()


@pytest.mark.parametrize(("value", "shown"), [
    (FORMULA, "'" + FORMULA), ("+1+2", "'+1+2"), ("-2+3", "'-2+3"), ("@SUM(A1)", "'@SUM(A1)"),
    ("\tx", "'\tx"), ("\rx", "'\rx"),
    (-0.5, -0.5), ("-0.5", "-0.5"), ("+3", "+3"), ("1e-3", "1e-3"), ("inf", "inf"), ("Korvath", "Korvath"), ("", ""),
])
def test_safe_cell(value, shown):
    assert safe_cell(value) == shown


@pytest.fixture
def formula_catalog(tmp_path):
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_body, add_lens, add_shoot

    url = str(tmp_path / "catalog.sqlite")
    with session_scope(url) as session:
        body = add_body(session, FORMULA, exif_make=FORMULA, exif_model="K7", format_name="36x24")
        lens = add_lens(session, "@lens", focal_min_mm=50, max_aperture_wide=1.8, min_aperture=22)
        shoot = add_shoot(session, "+shoot", near_mm=2500, far_mm=4000)
        session.add(Frame(path="/cards/-0001.jpg", file_size=1, file_mtime_ns=1, shoot=shoot, body=body, lens=lens,
                          focal_mm=50.0, f_number=8.0, focus_mm=3000.0, focus_source="exif",
                          captured_at=dt.datetime(2026, 5, 1, 10, 0)))
    return url


def test_frames_csv_neutralises_formulas_and_keeps_numbers(formula_catalog):
    result = runner.invoke(app, ["--catalog", formula_catalog, "frames", "--csv"])
    assert result.exit_code == 0, result.output
    rows = list(csv.DictReader(io.StringIO(result.stdout)))
    assert rows[0]["body"] == "'" + FORMULA and rows[0]["lens"] == "'@lens" and rows[0]["shoot"] == "'+shoot"
    assert rows[0]["path"] == "/cards/-0001.jpg"
    assert float(rows[0]["f_number"]) == 8.0 and float(rows[0]["focus_m"]) == 3.0
    for row in rows:
        assert not any(value.startswith(("=", "+", "@")) for value in row.values())


def test_sheet_csv_neutralises_formulas(formula_catalog, tmp_path):
    out = tmp_path / "sheet.csv"
    result = runner.invoke(app, ["--catalog", formula_catalog, "sheet", "@lens", "--out", str(out)])
    assert result.exit_code == 0, result.output
    rows = list(csv.DictReader(io.StringIO(out.read_text(encoding="utf-8"))))
    assert {row["lens"] for row in rows} == {"'@lens"}


@pytest.mark.parametrize("suffix", [".zip", ".json"])
def test_a_bundle_round_trips_formula_names_exactly(formula_catalog, tmp_path, suffix):
    bundle = str(tmp_path / f"bundle{suffix}")
    other = str(tmp_path / "other.sqlite")
    assert runner.invoke(app, ["--catalog", formula_catalog, "catalog", "export", bundle]).exit_code == 0
    assert runner.invoke(app, ["--catalog", other, "catalog", "import", bundle]).exit_code == 0
    listed = runner.invoke(app, ["--catalog", other, "body", "list", "--json"]).stdout
    import json

    assert [body["name"] for body in json.loads(listed)] == [FORMULA]
