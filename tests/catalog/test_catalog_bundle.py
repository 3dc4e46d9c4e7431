"""Export and import: the round trip loses nothing, in both bundle forms."""

from __future__ import annotations

import datetime as dt
import itertools
import json
import math
import zipfile

import pytest

from sharpzone.catalog.engine import open_catalog
from sharpzone.catalog.location import sqlite_url
from sharpzone.catalog.models import TABLES_IN_DEPENDENCY_ORDER, IngestProblem
from sharpzone.catalog.service import export_catalog, import_catalog
from sharpzone.catalog.service.bundle import bundle_fields, import_tables
from sharpzone.errors import Conflict, InvalidValue


_OBSERVED = itertools.count()


def _rows(session, tmp_path) -> dict[str, list[dict]]:
    """Every row of the catalogue as its JSON bundle carries them: what the round trips compare."""
    observed = tmp_path / f"observed-{next(_OBSERVED)}.json"
    export_catalog(session, observed)
    return json.loads(observed.read_text(encoding="utf-8"))["tables"]


@pytest.fixture
def filled_catalog(catalog, make_format, make_body, make_lens, make_shoot, make_frame, catalog_session):
    """Every table with rows, every nullable column set somewhere and left empty elsewhere."""
    fmt = make_format(name="test-44x33", width_mm=44, height_mm=33, coc_divisor=1730, aliases="mf;medium",
                      description="a “medium” frame, with commas", source="invented")
    body = make_body(name="Korvath MF", serial="A-1", sensor_format=fmt, pixel_width=11648, pixel_height=8736,
                     confirmed=False)
    lens = make_lens(name="Altamira 45-90", focal_min_mm=45, focal_max_mm=90, max_aperture_wide=3.5,
                     max_aperture_tele=4.5, min_aperture=32, close_focus_mm=0.1 + 0.2, pupil_magnification=0.75,
                     exif_names=["ALT 45-90", "ALT45-90 ⌀"])
    shoot = make_shoot(name="Quay", root_folder="/photos/quay", created_at=dt.datetime(2026, 11, 30, 9, 15, 1, 5),
                       plan_kind="range", plan_near_mm=4000, plan_far_mm=math.inf, planned_focal_mm=60,
                       planned_f_number=11, planned_focus_mm=6000, coc_policy="diagonal/1500", notes="line 1\nline 2")
    make_shoot(name="Empty plan")
    make_frame(shoot=shoot, body=body, lens=lens, path="/photos/quay/a,b.jpg", focus_mm=math.inf,
               captured_at=dt.datetime(2026, 11, 30, 9, 20, 5), utc_offset_minutes=-150, focal_35mm_mm=48,
               width_px=11648, height_px=8736, exif_make="Korvath", exif_model="MF", exif_lens_model="ALT 45-90",
               warnings="no subject distance;guessed body", file_size=2**40, iso=64000)
    make_frame(shoot=None, body=None, lens=None, path="/photos/loose.jpg", focal_mm=None, f_number=None,
               exposure_s=None, iso=None, focus_mm=None, focus_source="none")
    catalog_session.add(IngestProblem(shoot=None, path="/photos/broken.jpg", reason="truncated JPEG",
                                      seen_at=dt.datetime(2026, 11, 30, 10, 0, 0)))
    catalog_session.commit()
    return catalog


@pytest.mark.parametrize("suffix", [".json", ".zip"])
def test_round_trip_loses_nothing(filled_catalog, tmp_path, suffix):
    bundle = tmp_path / f"bundle{suffix}"
    with filled_catalog.session_scope() as session:
        before = _rows(session, tmp_path)
        written = export_catalog(session, bundle)
    assert written["frame"] == 2 and written["lens_alias"] == 2 and written["ingest_problem"] == 1

    with open_catalog(sqlite_url(tmp_path / "copy.sqlite")) as copy:
        with copy.session_scope() as session:
            result = import_catalog(session, bundle)
        with copy.session_scope() as session:
            after = _rows(session, tmp_path)
    assert after == before
    assert result.added["frame"] == 2 and result.unchanged["sensor_format"] == len(before["sensor_format"]) - 1
    far_frame = next(row for row in after["frame"] if row["path"] == "/photos/quay/a,b.jpg")
    assert far_frame["focus_mm"] == "inf" and far_frame["lens"] == "Altamira 45-90" and far_frame["shoot"] == "Quay"


def test_importing_twice_changes_nothing(filled_catalog, tmp_path):
    bundle = tmp_path / "bundle.json"
    with filled_catalog.session_scope() as session:
        export_catalog(session, bundle)
        result = import_catalog(session, bundle)
    assert sum(result.added.values()) == 0 and sum(result.replaced.values()) == 0


def test_json_bundle_is_documented_shape(filled_catalog, tmp_path):
    bundle = tmp_path / "bundle.json"
    with filled_catalog.session_scope() as session:
        export_catalog(session, bundle)
    document = json.loads(bundle.read_text(encoding="utf-8"))
    assert (document["format"], document["format_version"], document["schema_revision"]) == (
        "sharpzone-catalogue-bundle", 1, "0005")
    assert list(document["tables"]) == [model.__tablename__ for model in TABLES_IN_DEPENDENCY_ORDER]
    body = next(row for row in document["tables"]["body"] if row["name"] == "Korvath MF")
    assert body["format"] == "test-44x33" and "format_id" not in body and "id" not in body


def test_csv_bundle_has_a_manifest_and_one_file_per_table(filled_catalog, tmp_path):
    bundle = tmp_path / "bundle.zip"
    with filled_catalog.session_scope() as session:
        export_catalog(session, bundle)
    with zipfile.ZipFile(bundle) as archive:
        names = set(archive.namelist())
        manifest = json.loads(archive.read("manifest.json"))
        frame_header = archive.read("frame.csv").decode().splitlines()[0].split(",")
    assert names == {"manifest.json"} | {f"{m.__tablename__}.csv" for m in TABLES_IN_DEPENDENCY_ORDER}
    assert manifest["format_version"] == 1
    assert frame_header == [f.name for f in bundle_fields(TABLES_IN_DEPENDENCY_ORDER[5])]


def test_every_model_column_travels_in_the_bundle():
    for model in TABLES_IN_DEPENDENCY_ORDER:
        columns = {f.column for f in bundle_fields(model)}
        assert columns == {c.name for c in model.__table__.columns} - {"id"}


def test_differing_row_is_a_conflict_unless_replacing(filled_catalog, tmp_path):
    bundle = tmp_path / "bundle.json"
    with filled_catalog.session_scope() as session:
        export_catalog(session, bundle)
    document = json.loads(bundle.read_text(encoding="utf-8"))
    next(row for row in document["tables"]["lens"] if row["name"] == "Altamira 45-90")["min_aperture"] = 22
    bundle.write_text(json.dumps(document), encoding="utf-8")
    with pytest.raises(Conflict, match=r"lens name='Altamira 45-90' already exists with other values"):
        with filled_catalog.session_scope() as session:
            import_catalog(session, bundle)
    with filled_catalog.session_scope() as session:
        result = import_catalog(session, bundle, replace=True)
    assert result.replaced["lens"] == 1


def test_bundle_name_must_say_its_form(catalog_session, tmp_path):
    with pytest.raises(InvalidValue, match=r"must end in .json \(one JSON file\) or .zip \(CSV files\)"):
        export_catalog(catalog_session, tmp_path / "bundle.txt")
    assert not (tmp_path / "bundle.txt").exists()


def test_bundle_moves_a_catalogue_to_the_other_database(filled_catalog, tmp_path, request):
    # A studio moving its SQLite catalogue onto a shared PostgreSQL server, and back.
    bundle = tmp_path / "move.zip"
    with filled_catalog.session_scope() as session:
        before = _rows(session, tmp_path)
        export_catalog(session, bundle)
    on_sqlite = filled_catalog.engine.dialect.name == "sqlite"
    target = request.getfixturevalue("postgres_url") if on_sqlite else sqlite_url(tmp_path / "back.sqlite")
    with open_catalog(target) as moved:
        with moved.session_scope() as session:
            import_catalog(session, bundle)
        with moved.session_scope() as session:
            assert _rows(session, tmp_path) == before
            # ids were given by the target database: a new row still fits in
            session.add(IngestProblem(path="/photos/later.jpg", reason="unreadable"))


def test_a_large_bundle_imports_in_bulk_with_exact_counts(catalog, tmp_path):
    frames = [{"path": f"/cards/{n:05d}.jpg", "file_size": n + 1, "file_mtime_ns": n, "focus_mm": "inf" if n % 7 else 2500.0}
              for n in range(3000)]
    with catalog.session_scope() as session:
        result = import_tables(session, {"frame": frames})
    assert result.added["frame"] == 3000
    frames[5]["focus_mm"] = 1234.5
    with catalog.session_scope() as session:
        result = import_tables(session, {"frame": frames}, replace=True)
    assert (result.added["frame"], result.replaced["frame"], result.unchanged["frame"]) == (0, 1, 2999)
    with catalog.session_scope() as session:
        stored = {row["path"]: row["focus_mm"] for row in _rows(session, tmp_path)["frame"]}
    assert len(stored) == 3000 and stored["/cards/00005.jpg"] == 1234.5 and stored["/cards/00001.jpg"] == "inf"


def _edited_bundle(tmp_path, catalog, edit):
    """The JSON bundle of ``catalog`` with ``edit`` applied to its document."""
    bundle = tmp_path / "bundle.json"
    with catalog.session_scope() as session:
        export_catalog(session, bundle)
    document = json.loads(bundle.read_text(encoding="utf-8"))
    edit(document)
    bundle.write_text(json.dumps(document), encoding="utf-8")
    return bundle


def _frame(document, path="/photos/quay/a,b.jpg"):
    return next(row for row in document["tables"]["frame"] if row["path"] == path)


def _lens(document):
    return next(row for row in document["tables"]["lens"] if row["name"] == "Altamira 45-90")


def _shoot(document):
    return next(row for row in document["tables"]["shoot"] if row["name"] == "Quay")


# Each value the service functions refuse is refused by import too, naming the row.
@pytest.mark.parametrize(
    ("edit", "message"),
    [
        (lambda d: d.update(format_version=2), "format version 2; this program reads up to 1"),
        (lambda d: d["tables"].update(recipes=[]), "'recipes' is not a catalogue table"),
        (lambda d: d["tables"]["frame"][0].update(lens="Nope 50"), "lens 'Nope 50' is not in the bundle"),
        (lambda d: d["tables"]["frame"][0].update(iso="fast"), "iso 'fast' is not a valid int"),
        (lambda d: d["tables"]["frame"][0].update(colour="red"), "unknown field 'colour'"),
        (lambda d: _lens(d).update(focal_min_mm=-50), r"bundle lens row 1: .*shortest focal length -50(\.0)? mm must be a positive"),
        (lambda d: _lens(d).update(max_aperture_wide=0.1), r"maximum aperture 0.1 is not a valid f-number: expected f/0.5"),
        (lambda d: _lens(d).update(pupil_magnification=-1), r"pupil magnification -1(\.0)? must be"),
        (lambda d: _lens(d).update(max_magnification=0), r"maximum magnification 0(\.0)? must be"),
        (lambda d: _lens(d).update(min_aperture=2), r"minimum aperture f/2 is wider than the maximum aperture"),
        (lambda d: _lens(d).update(confirmed=1), r"confirmed 1 is not a valid bool"),
        (lambda d: _shoot(d).update(plan_kind="banana"), r"bundle shoot row \d: .*plan kind 'banana' is not known"),
        (lambda d: _shoot(d).update(coc_policy="blurry-ish"), r"CoC policy 'blurry-ish' is not valid"),
        (lambda d: _shoot(d).update(plan_far_mm=10), r"far limit .* must be beyond the near limit"),
        (lambda d: _shoot(d).update(planned_f_number=0.2), r"planned f-number 0.2 is not a valid f-number"),
        (lambda d: _frame(d).update(focus_source="telepathy"), r"bundle frame row 1: .*focus source 'telepathy' is not known"),
        (lambda d: _frame(d).update(iso=-1), r"ISO -1 must be a positive whole number"),
        (lambda d: _frame(d).update(iso=True), r"iso True is not a valid int"),
        (lambda d: _frame(d).update(iso=2**31), r"iso 2147483648 is out of range"),
        (lambda d: _frame(d).update(file_size=2**63 - 1, iso=2**40), r"iso 1099511627776 is out of range"),
        (lambda d: _frame(d).update(file_size=2**63), r"not valid JSON: a whole number beyond 9223372036854775807"),
        (lambda d: _frame(d).update(focus_point_x=1.5), r"focus point x 1.5 must be a fraction of the image from 0 to 1"),
        (lambda d: _frame(d).update(focus_mm=3000, focus_near_mm=4000, focus_far_mm=5000), r"nearest ≤ focus ≤ farthest"),
        (lambda d: _frame(d).update(f_number="8"), r"f_number '8' is not a valid float"),
        (lambda d: _frame(d).update(path=7), r"path 7 is not a valid text"),
        (lambda d: d["tables"]["body"][0].update(pixel_width=0), r"pixel width 0 must be a positive whole number"),
        (lambda d: d["tables"].update(lens=5), r"bundle table 'lens' must be a list of rows"),
        (lambda d: d["tables"]["lens"].append(5), r"bundle lens row 2: expected an object of fields, got int"),
        (lambda d: _lens(d).update(name={"deep": [1]}), r"field 'name' must be a plain value, not a nested object"),
    ],
)
def test_import_applies_the_rules_of_the_commands_and_writes_nothing(tmp_path, filled_catalog, edit, message):
    bundle = _edited_bundle(tmp_path, filled_catalog, edit)
    target = sqlite_url(tmp_path / "target.sqlite")
    with open_catalog(target) as copy:
        with pytest.raises(InvalidValue, match=message) as refused:
            with copy.session_scope() as session:
                import_catalog(session, bundle)
        assert "\n" not in str(refused.value)
        with copy.session_scope() as session:
            assert all(not rows for name, rows in _rows(session, tmp_path).items() if name != "sensor_format")


def test_csv_bundle_booleans_are_true_or_false_only(tmp_path, filled_catalog):
    bundle = tmp_path / "bundle.zip"
    with filled_catalog.session_scope() as session:
        export_catalog(session, bundle)
    with zipfile.ZipFile(bundle) as archive:
        entries = {name: archive.read(name) for name in archive.namelist()}
    entries["lens.csv"] = entries["lens.csv"].replace(b",false\n", b",0\n").replace(b",true\n", b",1\n")
    with zipfile.ZipFile(bundle, "w") as archive:
        for name, data in entries.items():
            archive.writestr(name, data)
    with open_catalog(sqlite_url(tmp_path / "target.sqlite")) as copy:
        with pytest.raises(InvalidValue, match=r"bundle lens row 1: confirmed '[01]' is not a valid bool"):
            with copy.session_scope() as session:
                import_catalog(session, bundle)


def test_unknown_values_are_empty_csv_cells_never_nan():
    from sharpzone.catalog.service.bundle import _to_csv

    # (a NaN can reach a row only from another writer, e.g. PostgreSQL's 'NaN')
    assert [_to_csv(value) for value in (None, math.nan, math.inf, 0.1 + 0.2, True)] == [
        "", "", "inf", "0.30000000000000004", "true"]


def test_a_failed_export_removes_its_partial_file_and_says_disk_full(filled_catalog, tmp_path, monkeypatch):
    import errno

    from sharpzone.catalog.service import bundle as bundle_module
    from sharpzone.errors import CatalogError

    real_rows = bundle_module._table_rows

    def rows_then_full_disk(session, model):
        yield from real_rows(session, model)
        if model is IngestProblem:
            raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(bundle_module, "_table_rows", rows_then_full_disk)
    for name in ("bundle.json", "bundle.zip"):
        with filled_catalog.session_scope() as session:
            with pytest.raises(CatalogError, match=r"cannot write .*: disk full \(free space on the disk"):
                export_catalog(session, tmp_path / name)
    assert list(tmp_path.iterdir()) == [tmp_path / "catalog.sqlite"] or not [
        p for p in tmp_path.iterdir() if "bundle" in p.name]


@pytest.mark.parametrize(
    ("edit", "message"),
    [
        (lambda d: d["tables"]["body"].append({**d["tables"]["body"][0], "name": "Twin"}),
         r"bundle body row 2: body 'Twin' claims the EXIF identity 'Korvath [^']+ A-1', which 'Korvath MF' already has"),
        (lambda d: d["tables"]["sensor_format"].append({**d["tables"]["sensor_format"][-1], "name": "other",
                                                         "aliases": "MEDIUM"}),
         r"sensor_format 'other' claims the name 'medium', which 'test-44x33' already has"),
    ],
)
def test_import_refuses_two_rows_claiming_one_identity(tmp_path, filled_catalog, edit, message):
    bundle = _edited_bundle(tmp_path, filled_catalog, edit)
    with open_catalog(sqlite_url(tmp_path / "target.sqlite")) as copy:
        with pytest.raises(Conflict, match=message):
            with copy.session_scope() as session:
                import_catalog(session, bundle)
