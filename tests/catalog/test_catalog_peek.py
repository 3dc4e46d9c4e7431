"""The quick questions asked of a SQLite catalogue file before SQLAlchemy is loaded: each
answer checked against the catalogue as the models write it."""

from __future__ import annotations

import sqlite3

import pytest

from sharpzone.catalog import peek
from sharpzone.catalog.engine import open_catalog
from sharpzone.catalog.location import sqlite_url
from sharpzone.catalog.migrate import head_revision
from sharpzone.catalog.models import Frame
from sharpzone.ingest.pipeline import ingest_paths
from tests.ingest.images import exif_block, jpeg


def test_the_names_asked_after_are_the_models():
    assert peek.FRAME_TABLE == Frame.__tablename__
    assert peek.FRAME_PATH_COLUMN == Frame.__table__.c.path.name


@pytest.fixture
def card_catalogue(tmp_path):
    """A catalogue holding the frames of one card at <tmp>/cards/a (one in a sub-folder)."""
    for name in ("cards/a/one.jpg", "cards/a/DCIM/two.jpg"):
        (tmp_path / name).parent.mkdir(parents=True, exist_ok=True)
        (tmp_path / name).write_bytes(jpeg(exif_block()))
    url = sqlite_url(tmp_path / "c.sqlite")
    with open_catalog(url) as catalog:
        assert ingest_paths(catalog, [tmp_path / "cards" / "a"], jobs=1).added == 2
    return url, tmp_path


def test_a_catalogue_that_does_not_exist_holds_nothing(tmp_path):
    assert not peek.may_hold_frames_under(sqlite_url(tmp_path / "new.sqlite"), [str(tmp_path)], head_revision())
    assert peek.stamped_revision(sqlite_url(tmp_path / "new.sqlite")) is None
    assert not (tmp_path / "new.sqlite").exists()  # asking created nothing


def test_frames_are_found_under_their_folder_and_nowhere_beside_it(card_catalogue):
    url, root = card_catalogue
    head = head_revision()
    assert peek.stamped_revision(url) == head
    # Under the folder, at a file, and the folder given with a trailing separator.
    assert peek.may_hold_frames_under(url, [f"{root}/cards/a"], head)
    assert peek.may_hold_frames_under(url, [f"{root}/cards/a/"], head)
    assert peek.may_hold_frames_under(url, [f"{root}/cards"], head)
    assert peek.may_hold_frames_under(url, [f"{root}/cards/a/one.jpg"], head)
    assert peek.may_hold_frames_under(url, [f"{root}/elsewhere", f"{root}/cards/a/DCIM"], head)
    # Beside it: names that share the prefix ("a0", "a-b", "ab") sort just around "a/".
    for other in ("cards/a0", "cards/a-b", "cards/ab", "cards/a/DCIM/two", "cards/b", "elsewhere"):
        assert not peek.may_hold_frames_under(url, [f"{root}/{other}"], head), other


def test_anything_not_that_simple_is_answered_cautiously(card_catalogue, tmp_path):
    url, root = card_catalogue
    # A schema other than the newest: the table may not be what we ask after.
    assert peek.may_hold_frames_under(url, [f"{root}/elsewhere"], "9999")
    # A server database, and a file that is not a database at all.
    assert peek.may_hold_frames_under("postgresql+psycopg://someone@db.invalid/studio", ["/x"], head_revision())
    (tmp_path / "junk.sqlite").write_bytes(b"this is not a database" * 100)
    assert peek.may_hold_frames_under(sqlite_url(tmp_path / "junk.sqlite"), ["/x"], head_revision())
    assert peek.stamped_revision(sqlite_url(tmp_path / "junk.sqlite")) is None
    # A SQLite file with tables but no stamp.
    connection = sqlite3.connect(tmp_path / "bare.sqlite")
    connection.execute("CREATE TABLE frame (path TEXT)")
    connection.close()
    assert peek.may_hold_frames_under(sqlite_url(tmp_path / "bare.sqlite"), ["/x"], head_revision())


def test_frames_in_folders_that_share_the_name_are_not_under_it(tmp_path):
    # "a-b" sorts just below "a/" and "a0" is where the range ends: neither is under "a".
    for name in ("cards/a0/three.jpg", "cards/a-b/four.jpg", "cards/a/../a.jpg"):
        (tmp_path / name).parent.mkdir(parents=True, exist_ok=True)
        (tmp_path / name).write_bytes(jpeg(exif_block()))
    url = sqlite_url(tmp_path / "c.sqlite")
    with open_catalog(url) as catalog:
        assert ingest_paths(catalog, [tmp_path / "cards"], jobs=1).added == 3
    head = head_revision()
    assert not peek.may_hold_frames_under(url, [f"{tmp_path}/cards/a"], head)
    assert peek.may_hold_frames_under(url, [f"{tmp_path}/cards/a0"], head)
    assert peek.may_hold_frames_under(url, [f"{tmp_path}/cards/a-b"], head)
    assert peek.may_hold_frames_under(url, [f"{tmp_path}/cards/a.jpg"], head)


def test_the_format_table_asked_after_is_the_models():
    from sharpzone.catalog.models import SensorFormatRow

    assert peek.FORMAT_TABLE == SensorFormatRow.__tablename__
    assert set(peek.FORMAT_COLUMNS) <= set(SensorFormatRow.__table__.c.keys())


def test_a_format_is_found_by_name_and_alias_as_the_catalogue_service_finds_it(tmp_path):
    from sharpzone.catalog.service import edit_format, get_format, list_formats

    url = sqlite_url(tmp_path / "c.sqlite")
    with open_catalog(url) as catalog, catalog.session_scope(write=True) as session:
        edit_format(session, "36x24", coc_divisor=1730.0, aliases=["full-frame", "FX Wide"])
        rows = [(row.name, row.alias_list) for row in list_formats(session)]
    asked = [spelling for name, aliases in rows for wanted in (name, *aliases)
             for spelling in (wanted, wanted.upper(), f"  {wanted} ")]
    assert len(asked) > 60
    with open_catalog(url) as catalog, catalog.session_scope() as session:
        for wanted in asked:
            assert peek.sensor_format(url, wanted, head_revision()) == get_format(session, wanted).to_core(), wanted
    edited = peek.sensor_format(url, "fx wide", head_revision())
    assert (edited.name, edited.coc_divisor) == ("36x24", 1730.0)  # the catalogue's edit, not the shipped value


def test_a_format_it_cannot_answer_for_is_left_to_the_full_path(card_catalogue, tmp_path):
    url, _ = card_catalogue
    assert peek.sensor_format(url, "no such format", head_revision()) is None
    assert peek.sensor_format(url, "36x24", "0000") is None  # another schema
    assert peek.sensor_format(sqlite_url(tmp_path / "none.sqlite"), "36x24", head_revision()) is None
    assert peek.sensor_format("postgresql://u@localhost/x", "36x24", head_revision()) is None
    assert not (tmp_path / "none.sqlite").exists()
