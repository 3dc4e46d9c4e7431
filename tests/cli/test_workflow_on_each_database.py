"""A whole studio day through the command line, once on SQLite and once on PostgreSQL:
ingest a card, list frames, check them against a plan, print a lens sheet, export the
catalogue and import it into a fresh one. The figures must agree between the databases."""

from __future__ import annotations

import csv
import json
import math

import pytest
from typer.testing import CliRunner

from sharpzone.optics import sharp_zone
from tests.ingest.images import exif_block, jpeg

runner = CliRunner()
COC = math.hypot(36, 24) / 1500  # diagonal / 1500 (lens maker's newsletter, 2007)


def cli(catalog_url, *args):
    from sharpzone.cli.app import app

    result = runner.invoke(app, ["--catalog", catalog_url, *args])
    assert result.exit_code == 0, result.output
    return result


@pytest.fixture
def card(tmp_path):
    """Four frames through an invented 24-70 at 50 mm: f/2.8 and f/11, focused at 3.2 m and
    at infinity (EXIF SubjectDistance 0xFFFFFFFF, CIPA DC-008 4.6.5)."""
    folder = tmp_path / "card" / "DCIM"
    folder.mkdir(parents=True)
    settings = {"wide-near": ((28, 10), (32, 10)), "closed-near": ((11, 1), (32, 10)),
                "wide-far": ((28, 10), (0xFFFFFFFF, 1)), "closed-far": ((11, 1), (0xFFFFFFFF, 1))}
    for name, (f_number, distance) in settings.items():
        (folder / f"{name}.jpg").write_bytes(jpeg(exif_block(f_number=f_number, subject_distance=distance)))
    return folder


def test_ingest_frames_check_sheet_export_import(catalog_url, card, tmp_path, request):
    cli(catalog_url, "body", "add", "Korvath KV-7", "--make", "Korvath", "--model", "Korvath KV-7",
        "--format", "36x24")
    summary = json.loads(cli(catalog_url, "ingest", str(card), "--shoot", "Quay", "--jobs", "1", "--json").stdout)
    assert (summary["added"], summary["updated"], summary["failed"]) == (4, 0, [])
    again = json.loads(cli(catalog_url, "ingest", str(card), "--shoot", "Quay", "--jobs", "1", "--json").stdout)
    assert (again["added"], again["unchanged"]) == (0, 4)

    frames = {row["path"].rsplit("/", 1)[1]: row
              for row in json.loads(cli(catalog_url, "frames", "--shoot", "Quay", "--json").stdout)}
    assert len(frames) == 4
    expected = sharp_zone(50, 11, COC, 3200)  # the core's figure for the same inputs
    assert frames["closed-near.jpg"]["near_m"] == pytest.approx(expected.near_mm / 1000, rel=1e-6)
    assert frames["closed-far.jpg"]["far_m"] == "inf" and frames["closed-far.jpg"]["focus_m"] == "inf"

    checked = {row["path"].rsplit("/", 1)[1]: row["flags"] for row in
               json.loads(cli(catalog_url, "check", "--shoot", "Quay", "--near", "2.5m", "--far", "5m", "--json").stdout)}
    assert checked["closed-near.jpg"] == [] and "too-wide-open" in checked["wide-near.jpg"]

    lens = json.loads(cli(catalog_url, "lens", "list", "--json").stdout)[0]["name"]
    sheet = tmp_path / "sheet.csv"
    cli(catalog_url, "sheet", lens, "--body", "Korvath KV-7", "--focal", "50", "--distances", "3.2m", "--out", str(sheet))
    with open(sheet, encoding="utf-8", newline="") as handle:
        row = next(r for r in csv.DictReader(handle) if float(r["f_number"]) == 11)
    assert float(row["near_m"]) == pytest.approx(expected.near_mm / 1000, rel=1e-3)

    bundle = tmp_path / "quay.json"
    cli(catalog_url, "catalog", "export", str(bundle))
    on_sqlite = catalog_url.startswith("sqlite")
    target = request.getfixturevalue("postgres_url") if on_sqlite else str(tmp_path / "copy.sqlite")
    cli(target, "catalog", "import", str(bundle))
    copied = {row["path"].rsplit("/", 1)[1]: row for row in json.loads(cli(target, "frames", "--json").stdout)}
    assert copied == frames
