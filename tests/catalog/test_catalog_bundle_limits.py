"""Hostile bundles, built on the fly: each is refused in one line and writes nothing."""

from __future__ import annotations

import json
import zipfile

import pytest

from sharpzone.catalog.engine import open_catalog
from sharpzone.catalog.location import sqlite_url
from sharpzone.catalog.models import Lens
from sharpzone.catalog.service import import_catalog
from sharpzone.catalog.service import bundle as bundle_module
from sharpzone.errors import InvalidValue

HEADER = {"format": "sharpzone-catalogue-bundle", "format_version": 1, "schema_revision": "0004"}


def _refused(tmp_path, bundle, message) -> None:
    with open_catalog(sqlite_url(tmp_path / "target.sqlite")) as catalog:
        with pytest.raises(InvalidValue, match=message) as refused:
            with catalog.session_scope() as session:
                import_catalog(session, bundle)
        assert "\n" not in str(refused.value)
        with catalog.session_scope() as session:
            assert session.query(Lens).count() == 0


def _lens_row(**changes) -> dict:
    row = {"name": "Test 50", "focal_min_mm": 50, "focal_max_mm": 50, "max_aperture_wide": 2,
           "max_aperture_tele": 2, "min_aperture": 22, "confirmed": True}
    return {**row, **changes}


def test_a_zip_that_expands_past_the_cap_is_refused_before_decompressing(tmp_path, monkeypatch):
    # The same bomb at test scale: a 2 MiB entry of zeros against a 1 MiB cap (the real cap
    # is 1 GiB; only the declared sizes are read, so the size does not matter to the check).
    monkeypatch.setattr(bundle_module, "MAX_BUNDLE_BYTES", 1 << 20)
    bundle = tmp_path / "bomb.zip"
    with zipfile.ZipFile(bundle, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("manifest.json", json.dumps({**HEADER, "tables": ["frame"]}))
        archive.writestr("frame.csv", b"path\n" + b"0" * (2 << 20))
    assert bundle.stat().st_size < 20_000
    _refused(tmp_path, bundle, r"expands to 2 MiB: more than the 1 MiB a bundle may hold")


@pytest.mark.parametrize("name", ["../lens.csv", "/etc/lens.csv", "sub/lens.csv", "lens.csv.exe", "recipes.csv"])
def test_zip_entry_names_are_checked_before_anything_is_read(tmp_path, name):
    bundle = tmp_path / "names.zip"
    with zipfile.ZipFile(bundle, "w") as archive:
        archive.writestr("manifest.json", json.dumps(HEADER))
        archive.writestr(name, "name\nx\n")
    _refused(tmp_path, bundle, r"expected only manifest.json and <table>.csv files at the top")


def test_a_csv_field_over_128_kib_is_refused(tmp_path):
    bundle = tmp_path / "wide.zip"
    with zipfile.ZipFile(bundle, "w") as archive:
        archive.writestr("manifest.json", json.dumps(HEADER))
        archive.writestr("lens.csv", "name,focal_min_mm\n" + "x" * (129 * 1024) + ",50\n")
    _refused(tmp_path, bundle, r"cannot be read: field larger than field limit \(131072\)")


def test_a_manifest_nested_deep_is_refused(tmp_path):
    bundle = tmp_path / "deep.zip"
    with zipfile.ZipFile(bundle, "w") as archive:
        archive.writestr("manifest.json", "[" * 30_000 + "]" * 30_000)
    _refused(tmp_path, bundle, r"cannot be read|not a sharpzone catalogue bundle")


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ('{"lens": 5}', r"is not a sharpzone catalogue bundle"),
        (json.dumps({**HEADER, "tables": {"lens": 5}}), r"bundle table 'lens' must be a list of rows"),
        (json.dumps(HEADER)[:-1] + ', "tables": {"lens": [' + "[" * 100_000 + "]" * 100_000 + "]}}",
         r"bundle lens row 1: expected an object of fields, got a list"),
        (json.dumps(HEADER)[:-1] + ', "extra": ' + "[" * 100_000 + "]" * 100_000 + ', "tables": {}}',
         r"header field 'extra' must be a plain value, not a nested list"),
        (json.dumps({**HEADER, "tables": {"lens": [_lens_row(name={"a": {"b": 1}})]}}),
         r"bundle lens row 1: field 'name' must be a plain value, not a nested object"),
        (json.dumps({**HEADER, "tables": {"lens": [_lens_row(notes="x" * (200 * 1024))]}}),
         r"has a value longer than 128 KiB"),
        (json.dumps({**HEADER, "tables": {"lens": [_lens_row(focal_min_mm=0)]}}).replace('"focal_min_mm": 0', '"focal_min_mm": ' + "9" * 200_000),
         r"has a value longer than 128 KiB"),
        (json.dumps({**HEADER, "tables": {"lens": [_lens_row(focal_min_mm=2**63)]}}),
         r"not valid JSON: a whole number beyond 9223372036854775807"),
        (json.dumps({**HEADER, "tables": {"lens": [_lens_row()], "sensor_format": []}}),
         r"bundle table 'sensor_format' comes after 'lens'"),
        (json.dumps({**HEADER, "tables": {"lens": [_lens_row(), _lens_row(name="Test 51")]}})[:-30],
         r"is not valid JSON|ends too early"),
        ("\ufeff" + json.dumps(HEADER), r"cannot be read|not valid JSON"),
    ],
)
def test_hostile_json_bundles_are_refused_in_one_line(tmp_path, text, message):
    bundle = tmp_path / "hostile.json"
    bundle.write_text(text, encoding="utf-8")
    _refused(tmp_path, bundle, message)


def test_a_json_bundle_over_the_cap_is_refused_unread(tmp_path, monkeypatch):
    monkeypatch.setattr(bundle_module, "MAX_BUNDLE_BYTES", 1000)
    bundle = tmp_path / "big.json"
    bundle.write_text(json.dumps({**HEADER, "tables": {"lens": [_lens_row(name=f"L{i}") for i in range(50)]}}))
    _refused(tmp_path, bundle, r"more than the 0 MiB a bundle may hold")


def test_a_good_bundle_written_by_hand_still_imports(tmp_path):
    bundle = tmp_path / "hand.json"
    bundle.write_text(json.dumps({**HEADER, "tables": {"lens": [_lens_row()]}}))
    with open_catalog(sqlite_url(tmp_path / "target.sqlite")) as catalog, catalog.session_scope() as session:
        assert import_catalog(session, bundle).added["lens"] == 1


def test_the_command_prints_one_line_and_no_traceback(tmp_path):
    from typer.testing import CliRunner

    from sharpzone.cli.app import app

    bundle = tmp_path / "hostile.json"
    bundle.write_text(json.dumps(HEADER)[:-1] + ', "tables": {"lens": [' + "[" * 100_000 + "]" * 100_000 + "]}}")
    result = CliRunner().invoke(app, ["--catalog", str(tmp_path / "c.sqlite"), "catalog", "import", str(bundle)])
    assert result.exit_code == 2
    assert "Traceback" not in result.output and len(result.output.strip().splitlines()) == 1


def test_a_zip_that_lies_about_its_sizes_stops_at_the_declared_size(tmp_path):
    import struct

    bundle = tmp_path / "liar.zip"
    with zipfile.ZipFile(bundle, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("manifest.json", json.dumps(HEADER))
        archive.writestr("ingest_problem.csv", b"path,reason\n" + b"/a.jpg,x\n" * 200_000)
    data = bytearray(bundle.read_bytes())
    entry = data.index(b"PK\x01\x02", data.index(b"PK\x01\x02") + 4)  # the CSV's central record
    struct.pack_into("<I", data, entry + 24, 100)  # claims 100 bytes uncompressed
    bundle.write_bytes(bytes(data))
    _refused(tmp_path, bundle, r"cannot be read: .*(CRC|fewer fields)")
