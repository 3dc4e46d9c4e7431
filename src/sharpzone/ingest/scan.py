"""Find a shoot's image files: walk folders, follow folder links without looping, sniff content.

A file is a candidate when its extension is an image extension *and* its first bytes are
those of an image (JPEG, TIFF and TIFF-based raw, HEIF, PNG, or a raw container with an
embedded EXIF JPEG). Other files are counted and ignored without being opened; a file with
an image extension but other content, an unreadable folder and a link loop are problems.
File names are handled as bytes, so names that are not valid UTF-8 work.
"""

from __future__ import annotations

import os
import stat
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field

from sharpzone.ingest import formats
from sharpzone.ingest.records import ReadProblem, os_error_reason, printable_path


@dataclass(frozen=True)
class CandidateFile:
    """An image file to read. ``path`` is absolute (``os.fsdecode`` form, fine for ``open``)."""

    path: str
    size: int
    mtime_ns: int
    kind: str

    @property
    def printable_path(self) -> str:
        return printable_path(self.path)


@dataclass(frozen=True)
class IgnoredFile:
    """A file that is not an image by its extension (or not a regular file)."""

    path: str


@dataclass
class ScanResult:
    """Everything a scan found: candidates in walk order, problems, and the ignored count."""

    candidates: list[CandidateFile] = field(default_factory=list)
    problems: list[ReadProblem] = field(default_factory=list)
    ignored: int = 0


ScanEvent = CandidateFile | ReadProblem | IgnoredFile


def scan_paths(paths: Iterable[str | bytes | os.PathLike]) -> ScanResult:
    """Walk files and folders (recursively) and collect image candidates and problems."""
    result = ScanResult()
    for event in iter_scan(paths):
        if isinstance(event, CandidateFile):
            result.candidates.append(event)
        elif isinstance(event, ReadProblem):
            result.problems.append(event)
        else:
            result.ignored += 1
    return result


def iter_scan(paths: Iterable[str | bytes | os.PathLike], *, sniff: bool = True) -> Iterator[ScanEvent]:
    """Like ``scan_paths`` but yields each event as it is found (for progress display).

    ``sniff=False`` judges by extension and ``stat`` alone and leaves the content check to
    the reader (``kind`` is then ""): ingest does that so each file is opened once, in a
    worker, and a rescan of unchanged files opens none.
    """
    seen_files: set[tuple[int, int]] = set()
    seen_folders: dict[tuple[int, int], bytes] = {}
    for given in paths:
        path = os.path.abspath(os.fsencode(given))
        try:
            info = os.stat(path)
        except OSError as err:
            yield _problem(path, err)
            continue
        if stat.S_ISDIR(info.st_mode):
            yield from _walk(path, info, seen_folders, seen_files, sniff)
        else:
            yield from _consider_file(path, info, seen_files, sniff)


def _walk(root: bytes, root_info: os.stat_result, seen_folders: dict, seen_files: set,
          sniff: bool = True) -> Iterator[ScanEvent]:
    # Depth-first with an explicit stack; each entry carries the folder ids above it, so a
    # link back to an ancestor is told apart from a second route to an already-seen folder.
    stack = [(root, root_info, ())]
    while stack:
        folder, info, ancestors = stack.pop()
        folder_id = (info.st_dev, info.st_ino)
        if folder_id in ancestors:
            target = seen_folders.get(folder_id, b"")
            yield ReadProblem(os.fsdecode(folder), f"folder link loop back to {printable_path(target)}: not followed")
            continue
        if folder_id in seen_folders:
            continue  # reached again by another route; its files are already listed
        seen_folders[folder_id] = folder
        try:
            with os.scandir(folder) as entries:
                listed = sorted(entries, key=lambda entry: entry.name)
        except OSError as err:
            yield _problem(folder, err)
            continue
        subfolders = []
        for entry in listed:
            try:
                entry_info = entry.stat()  # follows links
            except OSError as err:
                yield _problem(entry.path, err)
                continue
            if stat.S_ISDIR(entry_info.st_mode):
                subfolders.append((entry.path, entry_info, ancestors + (folder_id,)))
            else:
                yield from _consider_file(entry.path, entry_info, seen_files, sniff)
        stack.extend(reversed(subfolders))


def _extension(path: bytes) -> str:
    """``.jpg`` from ``…/IMG_1.JPG`` (lower case; "" for none or a leading-dot name).

    The same rule as ``os.path.splitext``, which costs a noticeable share of a rescan.
    """
    name_start = path.rfind(os.sep.encode()) + 1
    dot = path.rfind(b".", name_start)
    if dot <= name_start or path[name_start:dot].strip(b".") == b"":
        return ""
    return path[dot:].lower().decode("ascii", "replace")


def _consider_file(path: bytes, info: os.stat_result, seen_files: set, sniff: bool = True) -> Iterator[ScanEvent]:
    extension = _extension(path)
    if not stat.S_ISREG(info.st_mode) or extension not in formats.ALL_IMAGE_EXTENSIONS:
        yield IgnoredFile(os.fsdecode(path))
        return
    file_id = (info.st_dev, info.st_ino)
    if file_id in seen_files:
        return
    seen_files.add(file_id)
    if info.st_size == 0:
        yield ReadProblem(os.fsdecode(path), "empty file")
        return
    if not sniff:
        yield CandidateFile(os.fsdecode(path), info.st_size, info.st_mtime_ns, "")
        return
    try:
        kind = sniff_file(path, extension)
    except OSError as err:
        yield _problem(path, err)
        return
    if kind is None:
        yield ReadProblem(os.fsdecode(path), f"not an image: the content does not match its {extension} extension")
        return
    yield CandidateFile(os.fsdecode(path), info.st_size, info.st_mtime_ns, kind)


def sniff_file(path: str | bytes, extension: str | None = None) -> str | None:
    """The image kind of a file by its content (``formats.JPEG`` ...), or ``None``.

    Raw extensions also get a search for an embedded EXIF JPEG near the start.
    """
    if extension is None:
        extension = os.path.splitext(os.fsdecode(path))[1].lower()
    with open(path, "rb") as file:
        head = file.read(64)
        kind = formats.sniff_image_kind(head)
        if kind is None and extension in formats.RAW_EXTENSIONS:
            file.seek(0)
            if formats.find_embedded_exif_jpeg(file.read(formats.EMBEDDED_SEARCH_BYTES)) is not None:
                kind = formats.EMBEDDED_JPEG
    return kind


def _problem(path: bytes | str, err: OSError) -> ReadProblem:
    return ReadProblem(os.fsdecode(path), os_error_reason(err))
