"""A card shaped like real ones, end to end through the command line: maker-note focus
distances of several makers, a raw container, a body that writes no 35 mm equivalent and a
lens named only in the maker note's own terms. Every body and lens the files name is linked,
every focus distance they record is found with its bracket, and a format set after ingest
makes the body's frames judged without a new ingest.

The maker-note fields are written by libexiv2 itself (``makernotes``); the expected
distances are libexiv2's own printed values for the same files, and the step-code bracket is
the published code: distance = 0.01 m × 10^(code/40), ± half a step (REFERENCES.md,
"Maker-note focus distances").
"""

from __future__ import annotations

import json
import math

import piexif
import pytest
from typer.testing import CliRunner

from sharpzone.cli.app import app
from tests.ingest import makernotes

runner = CliRunner()


def _plain_exif(extra: dict | None = None) -> bytes:
    """Standard tags as a camera writes them, without SubjectDistance, LensModel, the 35 mm
    equivalent or the focal-plane resolution (so nothing standard names the format)."""
    exif = {
        piexif.ExifIFD.ExposureTime: (1, 250),
        piexif.ExifIFD.FNumber: (28, 10),
        piexif.ExifIFD.FocalLength: (50, 1),
        piexif.ExifIFD.ISOSpeedRatings: 400,
        piexif.ExifIFD.DateTimeOriginal: b"2026:05:17 14:03:22",
    }
    exif.update(extra or {})
    return piexif.dump({"0th": {piexif.ImageIFD.Make: b"Placeholder"}, "Exif": exif})


@pytest.fixture
def card(tmp_path):
    folder = tmp_path / "card"
    folder.mkdir()
    lens_model = {piexif.ExifIFD.LensModel: b"Altamira 24-70mm F2.8"}
    files = {
        # Canon file info: a lower/upper bracket in centimetres (libexiv2 prints 2.40 m / 2.50 m).
        "canon.jpg": makernotes.makernote_jpeg(makernotes.CANON, {
            "Exif.CanonFi.FocusDistanceUpper": "250", "Exif.CanonFi.FocusDistanceLower": "240"},
            exif=_plain_exif(lens_model)),
        # Nikon lens data 0204 (stored encrypted): step code 80 = 0.01 m × 10^2 = 1.00 m.
        "nikon.jpg": makernotes.makernote_jpeg(makernotes.NIKON, makernotes.nikon_lens_data("0204", 80),
                                               exif=_plain_exif({piexif.ExifIFD.LensSpecification: (
                                                   (24, 1), (70, 1), (28, 10), (28, 10))})),
        # Olympus focus info: one distance in metres.
        "olympus.jpg": makernotes.makernote_jpeg(makernotes.OLYMPUS, {"Exif.OlympusFi.FocusDistance": "3500/1000"},
                                                 exif=_plain_exif(lens_model)),
        # A raw container (CR3) with the Canon bracket 2.00–2.20 m.
        "raw.cr3": makernotes.cr3(220, 200),
    }
    for name, data in files.items():
        (folder / name).write_bytes(data)
    return folder


def _frames(catalog: str) -> dict[str, dict]:
    result = runner.invoke(app, ["--catalog", catalog, "frames", "--json"])
    assert result.exit_code == 0, result.output
    return {item["path"].rsplit("/", 1)[1]: item for item in json.loads(result.stdout)}


def test_a_real_card_links_every_body_and_lens_and_finds_every_distance(card, tmp_path):
    catalog = str(tmp_path / "catalog.sqlite")
    result = runner.invoke(app, ["--catalog", catalog, "ingest", str(card), "--shoot", "Quay", "--json"])
    assert result.exit_code == 0, result.output
    summary = json.loads(result.stdout)
    assert summary["added"] == 4 and summary["failed"] == []
    frames = _frames(catalog)
    assert set(frames) == {"canon.jpg", "nikon.jpg", "olympus.jpg", "raw.cr3"}
    assert all(item["body"] for item in frames.values()), frames  # every file names a make/model
    assert frames["canon.jpg"]["lens"] and frames["olympus.jpg"]["lens"] and frames["nikon.jpg"]["lens"]

    canon = frames["canon.jpg"]
    assert (canon["focus_near_m"], canon["focus_far_m"]) == (pytest.approx(2.40), pytest.approx(2.50))
    assert canon["focus_source"] == "makernote" and canon["focus_key"].startswith("Exif.CanonFi.")
    nikon = frames["nikon.jpg"]
    half_step = 10 ** (1 / 80)
    assert nikon["focus_m"] == pytest.approx(1.00, rel=1e-3)
    assert (nikon["focus_near_m"], nikon["focus_far_m"]) == (pytest.approx(1 / half_step, rel=1e-3),
                                                              pytest.approx(half_step, rel=1e-3))
    olympus = frames["olympus.jpg"]
    assert olympus["focus_m"] == pytest.approx(3.5) and olympus["focus_source"] == "makernote"
    raw = frames["raw.cr3"]
    assert (raw["focus_near_m"], raw["focus_far_m"]) == (pytest.approx(2.00), pytest.approx(2.20))


def test_a_body_given_its_format_after_ingest_is_judged_without_a_new_ingest(card, tmp_path):
    catalog = str(tmp_path / "catalog.sqlite")
    result = runner.invoke(app, ["--catalog", catalog, "ingest", str(card), "--shoot", "Quay", "--json"])
    summary = json.loads(result.stdout)
    # Nothing in these files names a sensor size: each body waits for its format, and the
    # summary says which and how to set it.
    waiting = [item["body"] for item in summary["needs_format"]]
    assert waiting, summary
    assert all(item["command"] == f"sharpzone body edit '{item['body']}' --format FORMAT"
               for item in summary["needs_format"])
    # A rerun over the unchanged card reads no file, and still says what is waiting.
    again = runner.invoke(app, ["--catalog", catalog, "ingest", str(card), "--shoot", "Quay", "--json"])
    assert sorted(item["body"] for item in json.loads(again.stdout)["needs_format"]) == sorted(waiting)
    before = _frames(catalog)
    unjudged = [name for name, item in before.items() if item["body"] in waiting]
    assert unjudged and all(before[name]["near_m"] is None for name in unjudged)
    for body in waiting:
        edit = runner.invoke(app, ["--catalog", catalog, "body", "edit", body, "--format", "36x24"])
        assert edit.exit_code == 0, edit.output
    after = _frames(catalog)
    for name in unjudged:
        item = after[name]
        assert item["coc_mm"] == pytest.approx(math.hypot(36, 24) / 1500, rel=1e-3)  # diagonal / 1500
        assert item["near_m"] is not None and item["near_m"] < item["focus_m"]
