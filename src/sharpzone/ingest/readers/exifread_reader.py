"""The fallback reader: exifread (3.5.1) decodes the standard tags of a TIFF block that
``containers`` located and checked; no maker notes.

exifread is only ever handed a TIFF block we found ourselves, because its own container
readers have traps (measured, see tests/ingest/test_exifread_reader.py):

* a JPEG whose EXIF segment comes after more than about 4 kB of other segments reads as
  "no EXIF"; raw containers whose EXIF lives in an embedded JPEG read as "no EXIF";
* its HEIF reader keeps parsed boxes in class-level state, so one file's answer depends on
  the files read before it, and it ignores the ``heix``/``msf1`` brands;
* its PNG reader decodes chunk names eagerly and fails on non-ASCII ones;
* rationals are reduced fractions, so 0/0 raises on ``float()`` and the SubjectDistance
  infinity mark (numerator 0xFFFFFFFF) is lost unless the denominator is coprime with it:
  we re-read every rational's raw numerator and denominator;
* errors other than its own escape (IndexError, UnicodeDecodeError, ...),
  and its logger writes warnings to stderr;
* a directory that an EXIF or GPS pointer reaches again is read again: such pointers are
  blanked in a private copy of the block first, so each directory is read once.
"""

from __future__ import annotations

import io
import logging
import math
import os
import struct
from typing import BinaryIO

from sharpzone.ingest import fields, formats
from sharpzone.ingest.readers import Tags, TagValue
from sharpzone.ingest.readers.containers import (
    POINTER_TAGS,
    Unreadable,
    check_directories,
    exif_tiff_block,
    image_size,
    tiff_byte_order,
)
from sharpzone.ingest.records import FileReadError, os_error_reason

# The IFDs whose tags describe the main image; thumbnails, maker notes and interoperability
# data are left out. Later groups win when a name repeats.
_KEPT_IFDS = ("Image", "GPS", "EXIF")
from sharpzone.vocabulary import SUBJECT_DISTANCE_INFINITY as _INFINITE_NUMERATOR  # noqa: E402
# A tag number no reader knows: what a looping pointer entry becomes in the private copy.
_BLANK_TAG = 0xFFFF

_exifread_module = None


class ExifreadReader:
    """Standard EXIF tags through exifread, for every kind whose container we can walk."""

    name = "exifread"
    kinds = frozenset({formats.JPEG, formats.TIFF, formats.PNG, formats.HEIF, formats.WEBP, formats.RAF,
                       formats.EMBEDDED_JPEG, None})

    def read(self, path: str, *, checked: bool = False, metadata: bytes | None = None) -> Tags:
        """The file's standard tags (see the package docstring); ``{}`` without EXIF.
        (``checked`` and ``metadata`` change nothing here: this reader walks the container
        and its directories itself, for the loops it must skip.)"""
        try:
            with open(path, "rb") as file:
                block = exif_tiff_block(file)
                if block is None:
                    return {}
                stream = file if block is file else io.BytesIO(block)
                tags = _tags_from_tiff(stream)
                tags[fields.CONTAINER_IS_RAW] = formats.is_raw_name(path)
                size = _container_size(file, tags)
                if size is not None:
                    tags[fields.CONTAINER_WIDTH], tags[fields.CONTAINER_HEIGHT] = size
                return tags
        except FileReadError:
            raise
        except Unreadable as err:
            raise FileReadError(path, str(err)) from None
        except OSError as err:
            raise FileReadError(path, os_error_reason(err)) from None
        except RecursionError:
            raise FileReadError(path, "damaged EXIF (directories point into each other)") from None
        except Exception as err:  # noqa: BLE001 - the boundary: nothing else may escape
            raise FileReadError(path, f"damaged EXIF ({type(err).__name__})") from None


def _container_size(file: BinaryIO, tags: Tags) -> tuple[int, int] | None:
    """The main image's own pixel size, as libexiv2 reports it: the container header, or for
    TIFF the first directory's ImageWidth/ImageLength (none for ISO BMFF, as there)."""
    file.seek(0)
    kind = formats.sniff_image_kind(file.read(64))
    if kind == formats.TIFF:
        width, height = tags.get("Exif.Image.ImageWidth"), tags.get("Exif.Image.ImageLength")
        return (width, height) if isinstance(width, int) and isinstance(height, int) else None
    size = image_size(file, kind)
    return size if size and size[0] > 0 and size[1] > 0 else None


def _exifread():
    """Import exifread on first use and keep its logger off stderr (and out of ours)."""
    global _exifread_module
    if _exifread_module is None:
        import exifread

        library_logger = logging.getLogger("exifread")
        library_logger.addHandler(logging.NullHandler())
        # Its messages describe damage we report ourselves as FileReadError.
        library_logger.setLevel(logging.CRITICAL)
        _exifread_module = exifread
    return _exifread_module


def _tags_from_tiff(stream: BinaryIO) -> Tags:
    exifread = _exifread()
    stream.seek(0, os.SEEK_END)
    size = stream.tell()
    stream.seek(0)
    byte_order = tiff_byte_order(stream.read(2))
    directories = check_directories(stream, size)
    if directories.looping_pointers:
        stream = _without_entries(stream, byte_order, directories.looping_pointers)
    stream.seek(0)
    raw = exifread.process_file(stream, details=False, extract_thumbnail=False)
    tags: Tags = {}
    for group in _KEPT_IFDS:
        prefix = group + " "
        for name, tag in raw.items():
            if not name.startswith(prefix) or not hasattr(tag, "field_type") or tag.tag in POINTER_TAGS:
                continue
            value = _plain_value(tag, stream, byte_order)
            if value is not None:
                key = fields.STANDARD_TAGS.get((group, tag.tag)) or f"{fields.IFD_GROUPS[group]}.{name[len(prefix):]}"
                tags[key] = value
    return tags


def _without_entries(stream: BinaryIO, byte_order: str, entry_offsets: tuple[int, ...]) -> BinaryIO:
    """A private copy of the block with the given directory entries blanked (never the file)."""
    stream.seek(0)
    data = bytearray(stream.read())
    for offset in entry_offsets:
        struct.pack_into(byte_order + "H", data, offset, _BLANK_TAG)
    return io.BytesIO(bytes(data))


def _plain_value(tag, stream: BinaryIO, byte_order: str) -> TagValue:
    field_type = int(tag.field_type)
    values = tag.values
    if field_type == 2:  # ASCII
        if isinstance(values, bytes):
            values = values.decode("utf-8", "replace")
        text = str(values).strip("\x00 \t\r\n")
        return text or None
    if field_type == 7:  # UNDEFINED: opaque bytes
        return bytes(v & 0xFF for v in values) if isinstance(values, list) else None
    if field_type in (5, 10):  # RATIONAL, SRATIONAL
        items = _raw_rationals(stream, byte_order, tag, signed=field_type == 10)
        converted = tuple(
            math.inf if field_type == 5 and numerator == _INFINITE_NUMERATOR
            else numerator / denominator if denominator else None
            for numerator, denominator in items)
    elif field_type in (11, 12):  # FLOAT, DOUBLE: exifread keeps each as a 1-tuple
        converted = tuple(float(v[0] if isinstance(v, tuple) else v) for v in values)
    else:
        converted = tuple(int(v) for v in values)
    if not converted:
        return None
    return converted[0] if len(converted) == 1 else converted


def _raw_rationals(stream: BinaryIO, byte_order: str, tag, *, signed: bool) -> list[tuple[int, int]]:
    """Re-read a rational tag's numerators and denominators as stored, not reduced."""
    count = len(tag.values)
    stream.seek(tag.field_offset)
    data = stream.read(8 * count)
    if len(data) < 8 * count:
        return []
    code = "i" if signed else "I"
    numbers = struct.unpack(f"{byte_order}{2 * count}{code}", data)
    return list(zip(numbers[0::2], numbers[1::2]))
