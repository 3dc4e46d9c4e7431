"""Find a shoot's image files: walk folders, follow folder links without looping, sniff content.

Every file is reported by its resolved path (links followed) with its (device, inode), so a
file is one frame however it is reached: through a link to the folder, a link inside it, a
file link or a hard link. A folder link is followed only while it stays inside the folders
the user named; one leading elsewhere is reported and not followed.

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

# ``scan_paths`` is the whole scan as one result, for a script; the ingest walks with
# ``iter_scan`` to show progress as it goes.
__all__ = ["CandidateFile", "IgnoredFile", "ScanResult", "iter_scan", "resolved_roots", "scan_paths", "sniff_file"]


@dataclass(frozen=True)
class CandidateFile:
    """An image file to read. ``path`` is absolute (``os.fsdecode`` form, fine for ``open``)."""

    path: str
    size: int
    mtime_ns: int
    kind: str
    device: int | None = field(default=None, compare=False)
    inode: int | None = field(default=None, compare=False)

    @property
    def printable_path(self) -> str:
        return printable_path(self.path)

    @property
    def file_id(self) -> tuple[int, int] | None:
        return None if self.device is None else (self.device, self.inode)


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
    given_paths = [os.path.abspath(os.fsencode(given)) for given in paths]
    roots = resolved_roots(given_paths)
    for path in given_paths:
        try:
            info = os.stat(path)
        except OSError as err:
            yield _problem(path, err)
            continue
        resolved = os.path.realpath(path)
        if stat.S_ISDIR(info.st_mode):
            yield from _walk(resolved, info, seen_folders, seen_files, sniff, roots)
        else:
            yield from _consider_file(resolved, info, seen_files, sniff)


def resolved_roots(paths: Iterable[str | bytes]) -> tuple[bytes, ...]:
    """The folders among ``paths``, resolved, each ending in a separator: where links may lead."""
    roots = []
    for path in paths:
        resolved = os.path.realpath(os.fsencode(path))
        if os.path.isdir(resolved):
            roots.append(resolved.rstrip(os.sep.encode()) + os.sep.encode())
    return tuple(roots)


def _inside(path: bytes, roots: tuple[bytes, ...]) -> bool:
    return any((path + os.sep.encode()).startswith(root) for root in roots)


def _walk(root: bytes, root_info: os.stat_result, seen_folders: dict, seen_files: set,
          sniff: bool = True, roots: tuple[bytes, ...] = ()) -> Iterator[ScanEvent]:
    # Depth-first with an explicit stack; each entry carries the folder ids above it, so a
    # link back to an ancestor is told apart from a second route to an already-seen folder.
    # Folders are walked by their resolved paths, so a file's path is resolved by joining
    # its name, except for links, which are resolved one by one.
    separator = os.sep.encode()
    stack = [(root, root, root_info, ())]
    while stack:
        folder, reached_as, info, ancestors = stack.pop()
        folder_id = (info.st_dev, info.st_ino)
        if folder_id in ancestors:
            target = seen_folders.get(folder_id, b"")
            yield ReadProblem(os.fsdecode(reached_as), f"folder link loop back to {printable_path(target)}: not followed")
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
        prefix = folder.rstrip(separator) + separator
        for entry in listed:
            try:
                entry_info = entry.stat()  # follows links
                linked = entry.is_symlink()
                path = os.path.realpath(entry.path) if linked else prefix + entry.name
            except OSError as err:
                yield _problem(entry.path, err)
                continue
            if stat.S_ISDIR(entry_info.st_mode):
                if linked and roots and not _inside(path, roots) and (entry_info.st_dev, entry_info.st_ino) not in ancestors:
                    yield ReadProblem(os.fsdecode(entry.path), f"folder link to {printable_path(path)}, outside the "
                                      "folders given: not followed")
                    continue
                subfolders.append((path, entry.path, entry_info, ancestors + (folder_id,)))
            else:
                yield from _consider_file(path, entry_info, seen_files, sniff)
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
        yield CandidateFile(os.fsdecode(path), info.st_size, info.st_mtime_ns, "", info.st_dev, info.st_ino)
        return
    try:
        kind = sniff_file(path, extension)
    except OSError as err:
        yield _problem(path, err)
        return
    if kind is None:
        yield ReadProblem(os.fsdecode(path), f"not an image: the content does not match its {extension} extension")
        return
    yield CandidateFile(os.fsdecode(path), info.st_size, info.st_mtime_ns, kind, info.st_dev, info.st_ino)


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
