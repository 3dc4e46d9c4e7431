"""scan_paths: content and extension decide, folder links never loop, odd names and folders are reported."""

from __future__ import annotations

import io
import os

import pytest

from sharpzone.ingest import formats
from sharpzone.ingest.scan import CandidateFile, IgnoredFile, iter_scan, scan_paths

from . import images


@pytest.fixture
def shoot(tmp_path, written):
    """A shoot folder with one image of each kind, a sidecar, a note and a mislabelled file."""
    folder = tmp_path / "shoot"
    exif = images.exif_block()
    written("day1/a.jpg", images.jpeg(exif), folder)
    written("day1/b.TIF", images.pillow_image("TIFF", exif), folder)
    written("day1/c.png", images.pillow_image("PNG", exif), folder)
    written("day2/d.heic", images.heif(exif), folder)
    written("day2/e.dng", images.pillow_image("TIFF", exif), folder)
    written("day2/f.raw", images.raw_with_embedded_jpeg(images.jpeg(exif)), folder)
    written("day1/a.xmp", b"<x/>", folder)
    written("notes.txt", b"call the harbour master", folder)
    written("day2/g.jpg", b"not really a picture", folder)
    return folder


def _names(result) -> list[str]:
    return [os.path.basename(candidate.path) for candidate in result.candidates]


def test_finds_images_by_content_and_extension(shoot):
    result = scan_paths([shoot])
    assert _names(result) == ["a.jpg", "b.TIF", "c.png", "d.heic", "e.dng", "f.raw"]
    assert [candidate.kind for candidate in result.candidates] == [
        formats.JPEG, formats.TIFF, formats.PNG, formats.HEIF, formats.TIFF, formats.EMBEDDED_JPEG]
    assert result.ignored == 2  # the sidecar and the note
    assert [(os.path.basename(problem.path), problem.reason) for problem in result.problems] == [
        ("g.jpg", "not an image: the content does not match its .jpg extension")]


def test_candidates_carry_absolute_path_size_and_mtime(shoot, monkeypatch):
    monkeypatch.chdir(shoot)
    candidate = scan_paths(["day1"]).candidates[0]
    path = shoot / "day1" / "a.jpg"
    info = path.stat()
    assert candidate == CandidateFile(str(path), info.st_size, info.st_mtime_ns, formats.JPEG)


def test_is_a_generator_yielding_as_it_walks(shoot):
    events = iter_scan([shoot])
    # A folder's own files come before its subfolders'.
    assert next(events) == IgnoredFile(str(shoot / "notes.txt"))
    assert next(events).path.endswith("a.jpg")


def test_a_file_given_directly(shoot):
    result = scan_paths([shoot / "day1" / "a.jpg", shoot / "notes.txt"])
    assert _names(result) == ["a.jpg"] and result.ignored == 1


def test_heif_by_compatible_brand_only():
    # ISO/IEC 14496-12 ftyp: major brand, minor version, then compatible brands.
    head = b"\x00\x00\x00\x18ftypkorv\x00\x00\x00\x00mif1heic"
    assert formats.sniff_image_kind(head) == formats.HEIF
    assert formats.sniff_image_kind(b"\x00\x00\x00\x14ftypisom\x00\x00\x00\x00isom") is None


@pytest.mark.parametrize("head", [b"II*\x00\x08\x00\x00\x00", b"MM\x00*\x00\x00\x00\x08", b"IIRO\x08\x00\x00\x00", b"IIU\x00\x08\x00\x00\x00"])
def test_tiff_signatures_including_raw_variants(head):
    assert formats.sniff_image_kind(head + b"\x00" * 24) == formats.TIFF


def test_folder_link_loop_is_a_problem_not_an_endless_walk(shoot):
    os.symlink(shoot, shoot / "day1" / "back-to-shoot")
    result = scan_paths([shoot])
    assert _names(result) == ["a.jpg", "b.TIF", "c.png", "d.heic", "e.dng", "f.raw"]
    loops = [problem for problem in result.problems if "loop" in problem.reason]
    assert len(loops) == 1 and loops[0].path.endswith("back-to-shoot")


def test_second_route_to_a_folder_lists_its_files_once(shoot):
    os.symlink(shoot / "day1", shoot / "also-day1")
    result = scan_paths([shoot, shoot / "day1"])
    assert sorted(_names(result)) == ["a.jpg", "b.TIF", "c.png", "d.heic", "e.dng", "f.raw"]
    assert [problem.reason for problem in result.problems if "loop" in problem.reason] == []


def test_broken_link_and_missing_path_are_problems(shoot, tmp_path):
    os.symlink(tmp_path / "gone.jpg", shoot / "dangling.jpg")
    result = scan_paths([shoot, tmp_path / "nowhere"])
    reasons = {os.path.basename(problem.path): problem.reason for problem in result.problems}
    assert reasons["dangling.jpg"].startswith("no such file")
    assert reasons["nowhere"].startswith("no such file")


def test_special_files_are_ignored_without_opening_them(tmp_path):
    os.mkfifo(tmp_path / "pipe.jpg")  # opening a FIFO would block the scan
    result = scan_paths([tmp_path])
    assert result.candidates == [] and result.problems == [] and result.ignored == 1


def test_empty_image_file_is_a_problem(written, tmp_path):
    written("empty.jpg", b"")
    assert [problem.reason for problem in scan_paths([tmp_path]).problems] == ["empty file"]


def test_unreadable_folder_is_a_problem(shoot):
    locked = shoot / "day2"
    os.chmod(locked, 0)
    try:
        if os.access(locked, os.R_OK):
            pytest.skip("running as a user whom folder permissions do not stop (root)")
        result = scan_paths([shoot])
        assert ("day2", "permission denied") in [
            (os.path.basename(problem.path), problem.reason) for problem in result.problems]
        assert _names(result) == ["a.jpg", "b.TIF", "c.png"]
    finally:
        os.chmod(locked, 0o755)


def test_unreadable_folder_is_a_problem_even_when_running_as_root(shoot, monkeypatch):
    real_scandir = os.scandir
    locked = os.fsencode(shoot / "day2")

    def scandir(path):
        if os.fsencode(path) == locked:
            raise PermissionError(13, "Permission denied")
        return real_scandir(path)

    monkeypatch.setattr(os, "scandir", scandir)
    result = scan_paths([shoot])
    assert [(os.path.basename(problem.path), problem.reason) for problem in result.problems] == [
        ("day2", "permission denied")]
    assert _names(result) == ["a.jpg", "b.TIF", "c.png"]


def test_non_utf8_file_name(written, tmp_path):
    written(b"harbour-\xe9t\xe9.jpg", images.jpeg(images.exif_block()))  # Latin-1 bytes, not UTF-8
    candidate = scan_paths([os.fsencode(tmp_path)]).candidates[0]
    assert os.fsencode(candidate.path).endswith(b"harbour-\xe9t\xe9.jpg")
    assert candidate.printable_path.endswith("harbour-\\xe9t\\xe9.jpg")
    strict_terminal = io.TextIOWrapper(io.BytesIO(), encoding="utf-8", errors="strict")
    print(candidate.printable_path, file=strict_terminal)  # must not raise
    with pytest.raises(UnicodeEncodeError):
        print(candidate.path, file=strict_terminal)  # why printable_path exists
    with open(candidate.path, "rb") as file:  # the decoded path still opens the file
        assert file.read(2) == b"\xff\xd8"
