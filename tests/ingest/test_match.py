"""Match stage: bodies always registered and named once, sensor format inferred in order or
left unknown (and judged once set, without re-ingest), lenses named from LensModel, maker-note
candidates or LensSpecification, and widened by later frames (issue 10 parts 5 and 6)."""

from __future__ import annotations

import json
import math

import piexif
import pytest
from typer.testing import CliRunner

from sharpzone.analysis.frames import FrameFilter, frames_with_zones
from sharpzone.catalog.engine import open_catalog, session_scope
from sharpzone.catalog.models import Body, Frame, Lens
from sharpzone.catalog.service import edit_body
from sharpzone.cli.app import app
from sharpzone.ingest.match import MatchOutcome, body_name, infer_format, lens_from_name
from sharpzone.ingest.pipeline import ingest_paths
from sharpzone.ingest.records import CaptureRecord
from sharpzone.optics.formats import SensorFormat
from tests.ingest.images import exif_block, jpeg

# Image areas (mm): 36 x 24 is the 135 film frame (ISO 1222 / common practice); the smaller
# one stands for a 1-inch-type sensor, 13.2 x 8.8 mm (from memory).
FULL = SensorFormat("36x24", 36.0, 24.0)
ONE_INCH = SensorFormat("1in", 13.2, 8.8)
FORMATS = [FULL, ONE_INCH]


def _without(block: bytes, *tags: int) -> bytes:
    """An EXIF block with ``tags`` removed from the Exif IFD (piexif's own load and dump)."""
    exif = piexif.load(block)
    for tag in tags:
        exif["Exif"].pop(tag, None)
    exif.pop("thumbnail", None)
    return piexif.dump(exif)


NO_FORMAT_CLUES = (piexif.ExifIFD.FocalLengthIn35mmFilm, piexif.ExifIFD.FocalPlaneXResolution,
                   piexif.ExifIFD.FocalPlaneYResolution)


@pytest.mark.parametrize(("make", "model", "name"), [
    ("Acme", "Acme X1", "Acme X1"),
    ("ACME", "Acme X1", "Acme X1"),
    ("ACME CORP", "X1", "ACME CORP X1"),
    ("Acme Corporation", "ACME X1", "ACME X1"),
    ("", "X1", "X1"),
    ("Acme", "", "Acme"),
])
def test_body_name_does_not_repeat_the_make(make, model, name):
    assert body_name(make, model) == name


def test_format_order_equivalent_then_focal_plane_then_maker_note():
    # CIPA DC-008: FocalLengthIn35mmFilm / FocalLength = crop factor; 50 mm → 50 mm is 1.0.
    by_equivalent = CaptureRecord("a", focal_mm=50, focal_35mm_mm=50, sensor_width_mm=13.2, sensor_height_mm=8.8)
    assert infer_format(by_equivalent, FORMATS) == (FULL, "35 mm equivalent focal length")
    # The EXIF image is a 1,500 px preview of a 6,000 px sensor: the focal plane says 9 mm
    # across for the preview, 36 mm for the sensor's own pixels.
    preview = CaptureRecord("b", width_px=1500, height_px=1000, focal_plane_width_mm=9.0, focal_plane_height_mm=6.0,
                            sensor_width_px=6000, sensor_height_px=4000)
    assert infer_format(preview, FORMATS) == (FULL, "focal-plane resolution")
    maker_note = CaptureRecord("c", sensor_width_mm=13.2, sensor_height_mm=8.8)
    assert infer_format(maker_note, FORMATS) == (ONE_INCH, "sensor size in the maker note")
    assert infer_format(CaptureRecord("d", width_px=100, height_px=75), FORMATS) == (None, "")


@pytest.mark.parametrize(("name", "parsed"), [
    ("Altamira 18-55mm F3.5-5.6", (18, 55, 3.5, 5.6)),
    ("Altamira 50mm f/1.8", (50, 50, 1.8, 1.8)),
    ("Korvath 35 mm 1:2", (35, 35, 2, 2)),
    ("Mystery lens", (None, None, None, None)),
])
def test_lens_range_from_its_name(name, parsed):
    assert lens_from_name(name) == parsed


def test_a_body_without_a_format_is_linked_and_judged_once_the_format_is_set(tmp_path, written, catalog_url):
    written("a.jpg", jpeg(_without(exif_block(), *NO_FORMAT_CLUES)), tmp_path / "card")
    with open_catalog(catalog_url) as catalog:
        summary = ingest_paths(catalog, [tmp_path / "card"], jobs=1)
    assert summary.needs_format == ["Korvath KV-7"]
    with session_scope(catalog_url) as session:
        body = session.query(Body).one()
        assert (body.name, body.sensor_format, body.confirmed) == ("Korvath KV-7", None, False)
        assert session.query(Frame).one().body_id == body.id
        before = frames_with_zones(session, FrameFilter()).frames.iloc[0]
        assert before["body"] == "Korvath KV-7" and before["settings_missing"] == "sensor format unknown"
        assert math.isnan(before["near_mm"]) and "settings-unknown" in before["flags"]
        edit_body(session, "Korvath KV-7", format_name="36x24")
    with session_scope(catalog_url) as session:
        after = frames_with_zones(session, FrameFilter()).frames.iloc[0]
        assert after["settings_missing"] is None and after["near_mm"] > 0 and "settings-unknown" not in after["flags"]


def test_cli_names_the_body_that_needs_a_format_and_lists_it(tmp_path, written):
    written("a.jpg", jpeg(_without(exif_block(), *NO_FORMAT_CLUES)), tmp_path / "card")
    url = str(tmp_path / "c.sqlite")
    runner = CliRunner()
    result = runner.invoke(app, ["--catalog", url, "ingest", str(tmp_path / "card"), "--json"])
    assert json.loads(result.stdout)["needs_format"] == [
        {"body": "Korvath KV-7", "command": "sharpzone body edit 'Korvath KV-7' --format FORMAT"}]
    human = runner.invoke(app, ["--catalog", url, "ingest", str(tmp_path / "card"), "--shoot", "card"])
    assert human.exit_code == 0
    for command in (["body", "list"], ["body", "show", "Korvath KV-7"], ["catalog", "info"], ["frames"]):
        shown = runner.invoke(app, ["--catalog", url, *command], env={"COLUMNS": "200"})
        assert shown.exit_code == 0, (command, shown.output)
    assert "unknown" in runner.invoke(app, ["--catalog", url, "body", "show", "Korvath KV-7"]).stdout


def test_lens_from_maker_note_candidates_answers_to_all_of_them(tmp_path, written, catalog_url):
    import dataclasses

    from sharpzone.ingest.capture import read_capture

    def with_candidates(path, user_mm=None):
        record = read_capture(path, user_mm)
        return dataclasses.replace(record, lens_model=None, lens_spec=None,
                                   lens_candidates=("Altamira 35mm F1.4", "Korvath 35mm F1.4"))

    written("a.jpg", jpeg(exif_block(focal_length=(35, 1))), tmp_path / "card")
    with open_catalog(catalog_url) as catalog:
        summary = ingest_paths(catalog, [tmp_path / "card"], jobs=1, reader=with_candidates)
    with session_scope(catalog_url) as session:
        lens = session.query(Lens).one()
        assert lens.name == "Altamira 35mm F1.4" and not lens.confirmed
        assert sorted(alias.exif_name for alias in lens.aliases) == ["Altamira 35mm F1.4", "Korvath 35mm F1.4"]
        assert (lens.focal_min_mm, lens.max_aperture_wide) == (35, 1.4)  # from its name
    assert any("also answers to 'Korvath 35mm F1.4'" in item for item in summary.registered)


def test_a_zoom_first_seen_at_one_end_widens_with_later_frames(tmp_path, written, catalog_url):
    for number, (focal, f_number) in enumerate([(24, (40, 10)), (50, (56, 10)), (70, (28, 10)), (70, (320, 10))]):
        written(f"{number}.jpg", jpeg(exif_block(lens_model=b"Mystery zoom", lens_specification=None,
                                                  focal_length=(focal, 1), f_number=f_number)), tmp_path / "card")
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [tmp_path / "card"], jobs=1)
    with session_scope(catalog_url) as session:
        lens = session.query(Lens).one()
        assert (lens.focal_min_mm, lens.focal_max_mm) == (24, 70)
        assert (lens.max_aperture_wide, lens.max_aperture_tele, lens.min_aperture) == (2.8, 2.8, 32.0)


def test_lens_named_from_lens_specification_alone(tmp_path, written, catalog_url):
    written("a.jpg", jpeg(exif_block(lens_model=None)), tmp_path / "card")
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [tmp_path / "card"], jobs=1)
        ingest_paths(catalog, [tmp_path / "card"], jobs=1, shoot="again")
    with session_scope(catalog_url) as session:
        lens = session.query(Lens).one()  # LensSpecification (EXIF 0xA432) 24-70 mm f/2.8
        assert lens.name == "24-70mm f/2.8" and (lens.focal_min_mm, lens.focal_max_mm) == (24, 70)


def test_scripted_matcher_decides(tmp_path, written, catalog_url):
    written("a.jpg", jpeg(exif_block()), tmp_path / "card")

    class Scripted:
        def __init__(self, session):
            self.session = session

        def match(self, record):
            return MatchOutcome(body_id=None, lens_id=None, warnings=["scripted: left unmatched"])

    with open_catalog(catalog_url) as catalog:
        summary = ingest_paths(catalog, [tmp_path / "card"], jobs=1, matcher_factory=Scripted)
    assert summary.warnings == 1
    with session_scope(catalog_url) as session:
        frame = session.query(Frame).one()
        assert frame.body_id is None and "scripted" in frame.warnings
        assert session.query(Body).count() == 0


def test_what_a_run_remembers_between_batches_matches_what_one_batch_does(tmp_path, written, catalog_url):
    # The zoom of the test above, one frame a batch: the run's memory of the lens between
    # batches must widen it exactly as one batch does; a body with a format is settled.
    for number, (focal, f_number) in enumerate([(24, (40, 10)), (50, (56, 10)), (70, (28, 10)), (70, (320, 10)),
                                                (50, (56, 10))]):
        written(f"{number}.jpg", jpeg(exif_block(lens_model=b"Mystery zoom", lens_specification=None,
                                                  focal_length=(focal, 1), f_number=f_number)), tmp_path / "card")
    with open_catalog(catalog_url) as catalog:
        summary = ingest_paths(catalog, [tmp_path / "card"], jobs=1, batch_size=1)
    assert summary.added == 5 and len(summary.registered) == 2  # one body, one lens
    with session_scope(catalog_url) as session:
        lens = session.query(Lens).one()
        assert (lens.focal_min_mm, lens.focal_max_mm) == (24, 70)
        assert (lens.max_aperture_wide, lens.max_aperture_tele, lens.min_aperture) == (2.8, 2.8, 32.0)
        assert {frame.lens_id for frame in session.query(Frame)} == {lens.id}
        assert len({frame.body_id for frame in session.query(Frame)}) == 1


def test_a_batch_rolled_back_is_forgotten_by_the_run():
    from sharpzone.ingest.match import MatchMemory, _KnownBody

    memory = MatchMemory()
    memory.stage({("a", "b", None): _KnownBody(1, "A B", False)}, {})
    memory.discard()
    memory.commit()
    assert memory.bodies == {}
    memory.stage({("a", "b", None): _KnownBody(1, "A B", False)}, {})
    memory.commit()
    assert memory.bodies[("a", "b", None)].id == 1
    memory.clear()
    assert memory.bodies == {} and memory.formats is None
