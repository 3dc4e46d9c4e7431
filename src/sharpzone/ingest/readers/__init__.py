"""Metadata readers behind one protocol: libexiv2 first, exifread as the fallback.

A reader opens some kinds of file (``formats`` kinds) and turns one file into tags:
``{"Group.Name": value}`` with libexiv2's key names (``"Exif.Photo.FNumber"``,
``"Exif.CanonFi.FocusDistanceUpper"``), so the field table in ``sharpzone.ingest.fields``
serves every reader. The value conventions, the same for every reader:

* integers stay ``int``; ASCII becomes a stripped ``str`` (empty → left out); UNDEFINED
  becomes ``bytes``; several values become a ``tuple``;
* a rational becomes ``float`` numerator/denominator as stored (not reduced);
  **0/0 is ``None``** (unknown, CIPA DC-008 writes unknown apertures so);
  **an unsigned rational whose numerator is 0xFFFFFFFF is ``math.inf``** (infinity, the
  CIPA DC-008 SubjectDistance convention, also used by maker notes);
* "unknown" codes that are plain numbers (SubjectDistance 0, a maker's 0 or 0xFFFF) are
  kept as read: the field table says what each key's codes mean;
* ``key + fields.PRINTED`` holds libexiv2's printed value where the table asks for it;
* ``fields.CONTAINER_WIDTH``/``HEIGHT``/``IS_RAW`` describe the container itself.

Readers are read-only, raise only ``FileReadError`` (a ``ReadError``) with a short reason,
and check a file's EXIF directories against the work budget in ``readers.containers``
before decoding them.
"""

from __future__ import annotations

import functools
import os
from typing import Protocol

from sharpzone.ingest.readers.containers import Sniffed, sniff_and_check
from sharpzone.ingest.records import FileReadError

TagValue = int | float | str | bytes | tuple | None
Tags = dict[str, TagValue]


class Reader(Protocol):
    """A metadata reader: ``name`` for messages, ``kinds`` it opens, ``read`` one file."""

    name: str
    kinds: frozenset[str]

    def read(self, path: str, *, checked: bool = False, metadata: bytes | None = None) -> Tags:
        """The file's tags, keyed and valued as this package's docstring says. ``checked``:
        the shared directory check already ran on the file (a reader may skip its own);
        ``metadata``: a JPEG's bytes up to its image data, read already (``Sniffed``), which
        a reader may decode instead of opening the file again."""
        ...


@functools.cache
def default_readers() -> tuple[Reader, ...]:
    """libexiv2 first (maker notes, every container), then exifread (standard tags only).
    Made once: the readers keep no state between files."""
    from sharpzone.ingest.readers.exifread_reader import ExifreadReader
    from sharpzone.ingest.readers.exiv2_reader import Exiv2Reader

    return (Exiv2Reader(), ExifreadReader())


def sniff_file(path: str | bytes | os.PathLike) -> Sniffed:
    """The file's ``formats`` kind (``Sniffed.kind``; ``None``: not an image), told on one
    open that also runs the shared directory check (the work budget for every reader) and,
    for a JPEG, reads its metadata segments (``Sniffed.metadata``); raises
    ``FileReadError`` for an empty, unreadable or damaged file."""
    return sniff_and_check(os.fsdecode(path))


def read_tags(path: str | bytes | os.PathLike, readers: tuple[Reader, ...] | None = None, *,
              sniffed: Sniffed | None = None) -> Tags:
    """Tags of one file from the first reader that opens its kind and does not fail.

    ``sniffed`` is what ``sniff_file`` told of this file, when it was asked already; else
    the file is sniffed first. A file that every reader refuses raises the last reader's
    ``FileReadError`` (the fallback walks the container itself and names the damage most
    precisely); a damaged-directory verdict of the shared work budget is final (no other
    reader may spend the time).
    """
    path = os.fsdecode(path)
    if sniffed is None:
        sniffed = sniff_file(path)  # one open: the kind, and the work budget for every reader
    kind = sniffed.kind
    last_error: FileReadError | None = None
    for reader in readers if readers is not None else default_readers():
        if kind not in reader.kinds:
            continue
        try:
            return reader.read(path, checked=True, metadata=sniffed.metadata)
        except FileReadError as err:
            if err.reason.startswith(_FINAL_REASONS):
                raise
            last_error = err
    if last_error is not None:
        raise last_error
    raise FileReadError(path, "not an image" if kind is None else f"no reader opens {kind} files")


# Reasons no second reader can change: the file is not there, or its structure is damaged.
_FINAL_REASONS = ("damaged EXIF", "permission denied", "no such file", "is a folder", "empty file")
