"""A frame is one file however it is reached (issue 12 part 4), and ingest files frames
where the user meant (issue 11 part 6)."""

from __future__ import annotations

import os

import pytest
from typer.testing import CliRunner

from sharpzone.catalog.engine import open_catalog, session_scope
from sharpzone.catalog.models import Frame, Shoot
from sharpzone.cli.app import app
from sharpzone.ingest.pipeline import USER_DISTANCES_KEY, ingest_paths
from tests.ingest.images import exif_block, jpeg


@pytest.fixture
def card(tmp_path, written):
    folder = tmp_path / "card"
    for number in range(9):
        written(f"IMG_{number}.JPG", jpeg(exif_block(subject_distance=(2000 + number, 1000))),
                folder / ("sub" if number >= 6 else ""))
    return folder


def _frames(url):
    with session_scope(url) as session:
        return sorted((frame.path, frame.shoot.name if frame.shoot else None) for frame in session.query(Frame))


def _shoots(url):
    with session_scope(url) as session:
        return sorted(shoot.name for shoot in session.query(Shoot))


def test_folder_then_link_to_it_then_link_inside_it_is_nine_frames(tmp_path, card, catalog_url):
    os.symlink(card, tmp_path / "card-link")
    os.symlink(card / "sub", tmp_path / "sub-link")
    with open_catalog(catalog_url) as catalog:
        first = ingest_paths(catalog, [card], jobs=1)
        second = ingest_paths(catalog, [tmp_path / "card-link"], jobs=1)
        third = ingest_paths(catalog, [tmp_path / "sub-link"], jobs=1)
    assert (first.added, second.added, third.added) == (9, 0, 0)
    assert (second.unchanged, third.unchanged) == (9, 3)
    frames = _frames(catalog_url)
    assert len(frames) == 9 and all(path.startswith(str(card.resolve())) for path, _ in frames)
    assert _shoots(catalog_url) == ["card"]


def test_hard_link_and_file_link_across_runs_are_the_same_frame(tmp_path, card, catalog_url):
    other = tmp_path / "other"
    other.mkdir()
    os.link(card / "IMG_0.JPG", other / "hard.JPG")
    os.symlink(card / "IMG_1.JPG", other / "soft.JPG")
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [card], jobs=1)
        again = ingest_paths(catalog, [other], jobs=1)
        once_more = ingest_paths(catalog, [other], jobs=1)
    assert again.added == 0 and len(_frames(catalog_url)) == 9
    assert once_more.unchanged == 2 and once_more.read == 0


def test_a_renamed_file_keeps_its_frame(card, catalog_url):
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [card], jobs=1)
        os.rename(card / "IMG_0.JPG", card / "renamed.JPG")
        again = ingest_paths(catalog, [card], jobs=1, prune=True)
    paths = [os.path.basename(path) for path, _ in _frames(catalog_url)]
    assert len(paths) == 9 and "renamed.JPG" in paths and "IMG_0.JPG" not in paths
    assert again.added == 0 and again.pruned == 0


def test_prune_through_a_link(tmp_path, card, catalog_url):
    os.symlink(card, tmp_path / "card-link")
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [card], jobs=1)
        (card / "IMG_3.JPG").unlink()
        pruned = ingest_paths(catalog, [tmp_path / "card-link"], jobs=1, prune=True)
    assert pruned.pruned == 1 and len(_frames(catalog_url)) == 8


def test_a_folder_link_out_of_the_folders_given_is_not_followed(tmp_path, card, written, catalog_url):
    written("outside.JPG", jpeg(exif_block()), tmp_path / "elsewhere")
    os.symlink(tmp_path / "elsewhere", card / "escape")
    os.symlink(card, card / "sub" / "loop")
    with open_catalog(catalog_url) as catalog:
        result = ingest_paths(catalog, [card], jobs=1)
    assert result.added == 9
    reasons = {os.path.basename(path): reason for path, reason in result.failed}
    assert "outside the folders given: not followed" in reasons["escape"]
    assert "loop back" in reasons["loop"]


def test_an_empty_folder_or_a_non_image_creates_no_shoot(tmp_path, written, catalog_url):
    (tmp_path / "empty").mkdir()
    written("notes.txt", b"call the harbour master", tmp_path / "notes")
    with open_catalog(catalog_url) as catalog:
        empty = ingest_paths(catalog, [tmp_path / "empty"], jobs=1)
        notes = ingest_paths(catalog, [tmp_path / "notes" / "notes.txt"], jobs=1)
    assert (empty.added, notes.added, notes.ignored) == (0, 0, 1)
    assert not empty.shoot_created and _shoots(catalog_url) == []


def test_files_of_another_shoot_stay_there_unless_a_shoot_is_named(card, written, catalog_url):
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [card], shoot="card", jobs=1)
        assert ingest_paths(catalog, [card / "sub"], shoot="Harbour", jobs=1).moved == {"card": 3}
        written("IMG_new.JPG", jpeg(exif_block()), card)
        plain = ingest_paths(catalog, [card], jobs=1)
        assert plain.elsewhere == {"Harbour": 3} and plain.added == 1 and plain.shoot == "card"
        assert sorted({shoot for _, shoot in _frames(catalog_url)}) == ["Harbour", "card"]
        moved = ingest_paths(catalog, [card], shoot="Pier", jobs=1)
    assert moved.moved == {"Harbour": 3, "card": 7}
    assert {shoot for _, shoot in _frames(catalog_url)} == {"Pier"}


def test_a_rerun_without_shoot_joins_the_shoot_its_frames_are_in(card, written, catalog_url):
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [card], shoot="Harbour", jobs=1)
        written("IMG_late.JPG", jpeg(exif_block()), card)
        again = ingest_paths(catalog, [card], jobs=1)
    assert again.shoot == "Harbour" and again.added == 1 and not again.elsewhere
    assert _shoots(catalog_url) == ["Harbour"]


def test_cli_names_the_other_shoot(card, tmp_path):
    url = str(tmp_path / "c.sqlite")
    runner = CliRunner()
    assert runner.invoke(app, ["--catalog", url, "ingest", str(card)]).exit_code == 0
    assert runner.invoke(app, ["--catalog", url, "ingest", str(card / "sub"), "--shoot", "Harbour"]).exit_code == 0
    result = runner.invoke(app, ["--catalog", url, "ingest", str(card)])
    assert result.exit_code == 0, result.output
    assert "3 files already belong to shoot 'Harbour'" in " ".join(result.stdout.split())


def test_new_fields_are_stored_and_a_user_distance_is_exact(card, tmp_path, catalog_url):
    distances = tmp_path / "d.csv"
    distances.write_text("file,distance\nIMG_2.JPG,4m\n")
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [card], jobs=1)
        ingest_paths(catalog, [card], jobs=1, distances_csv=distances)
    with session_scope(catalog_url) as session:
        frames = {os.path.basename(frame.path): frame for frame in session.query(Frame)}
        info = os.stat(card / "IMG_1.JPG")
        assert (frames["IMG_1.JPG"].device, frames["IMG_1.JPG"].inode) == (info.st_dev, info.st_ino)
        # SubjectDistance 2001/1000 m (EXIF 0x9206) is one exact distance.
        one = frames["IMG_1.JPG"]
        assert one.focus_near_mm == one.focus_far_mm == pytest.approx(2001)
        user = frames["IMG_2.JPG"]
        assert (user.focus_mm, user.focus_near_mm, user.focus_far_mm) == (4000, 4000, 4000)
        assert user.focus_key == USER_DISTANCES_KEY == "user distances CSV" and user.focus_source == "user"


def test_a_rerun_into_the_same_shoot_moves_nothing(card, catalog_url):
    with open_catalog(catalog_url) as catalog:
        ingest_paths(catalog, [card], shoot="Harbour", jobs=1)
        again = ingest_paths(catalog, [card], shoot="harbour", jobs=1)  # names ignore case
    assert again.moved == {} and again.shoot == "Harbour" and again.unchanged == 9
