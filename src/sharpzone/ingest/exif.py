"""Read a file's EXIF tags into plain Python values, strictly read-only.

exifread (3.5.1) does the tag decoding, but it is only ever handed a TIFF block that we
located ourselves, because its own container readers have traps (measured, see the tests):

* a JPEG whose EXIF segment comes after more than about 4 kB of other segments reads as
  "no EXIF"; raw containers whose EXIF lives in an embedded JPEG read as "no EXIF";
* its HEIF reader keeps parsed boxes in class-level state, so one file's answer depends on
  the files read before it, and it ignores the ``heix``/``msf1`` brands;
* its PNG reader decodes chunk names eagerly and fails on non-ASCII ones;
* rationals are reduced fractions, so 0/0 raises on ``float()`` and the SubjectDistance
  infinity mark (numerator 0xFFFFFFFF) is lost unless the denominator is coprime with it:
  we re-read every rational's raw numerator and denominator;
* errors other than its own escape (IndexError, UnicodeDecodeError, ...),
  and its logger writes warnings to stderr.

Every failure leaves this module as a ``FileReadError`` with a short reason.
"""

from __future__ import annotations

import io
import logging
import os
import struct
from typing import BinaryIO

from sharpzone.ingest import formats
from sharpzone.ingest.records import FileReadError, os_error_reason

TagValue = int | float | str | bytes | tuple | None

# The IFDs whose tags describe the main image; thumbnails, maker notes and interoperability
# data are left out. Later groups win when a name repeats.
_KEPT_IFDS = ("Image", "GPS", "EXIF")
# Offsets to the EXIF, GPS and interoperability IFDs: structure, not information.
_POINTER_TAGS = frozenset({0x8769, 0x8825, 0xA005})
from sharpzone.vocabulary import SUBJECT_DISTANCE_INFINITY as _INFINITE_NUMERATOR  # noqa: E402
_SUBJECT_DISTANCE_TAG = 0x9206
# A HEIF meta box or EXIF item beyond this is not metadata but damage.
_MAX_METADATA_BYTES = 16 << 20
_HEAD_BYTES = 4096
# More IFDs than this (main image, thumbnail, EXIF, GPS, interoperability, raw previews...)
# are not checked further; exifread has its own loop guard.
_MAX_DIRECTORIES = 64

_exifread_module = None


class _Unreadable(Exception):
    """Internal: the file is damaged in a way we can name."""


def read_tags(path: str | bytes | os.PathLike) -> dict[str, TagValue]:
    """Read the EXIF tags of an image file as ``{tag name: plain value}``.

    Rationals become floats (0/0 becomes ``None``); a SubjectDistance with the infinity
    numerator becomes ``"inf"``; ASCII tags become stripped strings; several values become a
    tuple. A file without EXIF gives ``{}``. Raises ``FileReadError`` (a ``ReadError``) with a
    short reason for anything unreadable. Never writes to the file.
    """
    try:
        with open(path, "rb") as file:
            return _read_tags_from(file)
    except FileReadError:
        raise
    except _Unreadable as err:
        raise FileReadError(path, str(err)) from None
    except OSError as err:
        raise FileReadError(path, os_error_reason(err)) from None
    except RecursionError:
        raise FileReadError(path, "damaged EXIF (directories point into each other)") from None
    except Exception as err:  # noqa: BLE001 - the boundary: nothing else may escape
        raise FileReadError(path, f"damaged EXIF ({type(err).__name__})") from None


def _read_tags_from(file: BinaryIO) -> dict[str, TagValue]:
    head = file.read(_HEAD_BYTES)
    if not head:
        raise _Unreadable("empty file")
    kind = formats.sniff_image_kind(head)
    if kind == formats.TIFF:
        _check_tiff_header(head, os.fstat(file.fileno()).st_size)
        return _tags_from_tiff(file)
    if kind == formats.JPEG:
        tiff = _jpeg_exif_block(file, start=0)
    elif kind == formats.PNG:
        tiff = _png_exif_block(file)
    elif kind == formats.HEIF:
        tiff = _heif_exif_block(file)
    else:
        file.seek(0)
        start = formats.find_embedded_exif_jpeg(file.read(formats.EMBEDDED_SEARCH_BYTES))
        if start is None:
            raise _Unreadable("not an image")
        tiff = _jpeg_exif_block(file, start=start)
    if tiff is None:
        return {}
    _check_tiff_header(tiff, len(tiff))
    return _tags_from_tiff(io.BytesIO(tiff))


def _check_tiff_header(head: bytes, size: int) -> None:
    if len(head) < 8 or head[:4] not in formats.TIFF_SIGNATURES:
        raise _Unreadable("broken TIFF header")
    byte_order = "<" if head[:2] == b"II" else ">"
    (first_ifd,) = struct.unpack(byte_order + "I", head[4:8])
    if not 8 <= first_ifd <= size - 2:
        raise _Unreadable("broken TIFF header")


# --- containers -------------------------------------------------------------------------

def _jpeg_exif_block(file: BinaryIO, start: int) -> bytes | None:
    """Walk the JPEG's marker segments up to the image data; return the EXIF TIFF block."""
    file.seek(start)
    if file.read(2) != formats.JPEG_SOI:
        raise _Unreadable("not a JPEG")
    while True:
        marker = _next_jpeg_marker(file)
        if marker in (0xDA, 0xD9):  # start of scan, end of image: no EXIF before the data
            return None
        if 0xD0 <= marker <= 0xD7 or marker == 0x01:  # markers without a length
            continue
        length_bytes = file.read(2)
        if len(length_bytes) < 2:
            raise _Unreadable("truncated JPEG")
        (length,) = struct.unpack(">H", length_bytes)
        if length < 2:
            raise _Unreadable("damaged JPEG segment")
        if marker == 0xE1:
            payload = file.read(length - 2)
            if len(payload) < length - 2:
                raise _Unreadable("truncated JPEG")
            if payload.startswith(b"Exif\x00\x00"):
                return payload[6:]
        else:
            file.seek(length - 2, os.SEEK_CUR)


def _next_jpeg_marker(file: BinaryIO) -> int:
    byte = file.read(1)
    if not byte:
        raise _Unreadable("truncated JPEG")
    if byte != b"\xff":
        raise _Unreadable("damaged JPEG (no marker where one belongs)")
    while byte == b"\xff":  # any number of 0xFF fill bytes may precede a marker
        byte = file.read(1)
    if not byte:
        raise _Unreadable("truncated JPEG")
    return byte[0]


def _png_exif_block(file: BinaryIO) -> bytes | None:
    """Walk the PNG chunks (PNG 1.2 + eXIf extension, 2017); return the eXIf payload."""
    file.seek(len(formats.PNG_SIGNATURE))
    while True:
        header = file.read(8)
        if len(header) < 8:
            raise _Unreadable("truncated PNG")
        length, chunk_type = struct.unpack(">I4s", header)
        if length > 0x7FFFFFFF:
            raise _Unreadable("damaged PNG chunk")
        if chunk_type == b"eXIf":
            payload = file.read(length)
            if len(payload) < length:
                raise _Unreadable("truncated PNG")
            # Some writers keep the JPEG-style prefix; the extension says it starts at the TIFF header.
            return payload[6:] if payload.startswith(b"Exif\x00\x00") else payload
        if chunk_type == b"IEND":
            return None
        file.seek(length + 4, os.SEEK_CUR)  # data and CRC


def _heif_exif_block(file: BinaryIO) -> bytes | None:
    """Find the ``Exif`` item of a HEIF file (ISO/IEC 23008-12) through its meta box."""
    size = os.fstat(file.fileno()).st_size
    meta = _find_top_level_box(file, b"meta", size)
    if meta is None:
        return None
    children = dict(_child_boxes(meta, 4))  # meta is a full box: skip version and flags
    if b"iinf" not in children or b"iloc" not in children:
        return None
    exif_ids = _heif_exif_item_ids(children[b"iinf"])
    if not exif_ids:
        return None
    locations = _heif_item_locations(children[b"iloc"])
    if exif_ids[0] not in locations:
        raise _Unreadable("damaged HEIF (Exif item has no location)")
    method, extents = locations[exif_ids[0]]
    if method == 0:
        item = _read_file_extents(file, extents, size)
    elif method == 1:
        idat = children.get(b"idat", b"")
        item = b"".join(idat[offset : offset + length] for offset, length in extents)
    else:
        raise _Unreadable("HEIF Exif item stored in an unsupported way")
    if len(item) < 4:
        raise _Unreadable("damaged HEIF Exif item")
    (tiff_offset,) = struct.unpack(">I", item[:4])
    block = item[4 + tiff_offset :]
    return block[6:] if block.startswith(b"Exif\x00\x00") else block


def _find_top_level_box(file: BinaryIO, wanted: bytes, size: int) -> bytes | None:
    position = 0
    file.seek(0)
    while True:
        header = file.read(8)
        if len(header) < 8:
            return None
        box_size, box_type = struct.unpack(">I4s", header)
        header_size = 8
        if box_size == 1:
            large = file.read(8)
            if len(large) < 8:
                raise _Unreadable("truncated HEIF")
            (box_size,) = struct.unpack(">Q", large)
            header_size = 16
        elif box_size == 0:  # runs to the end of the file
            box_size = size - position
        if box_size < header_size:
            raise _Unreadable("damaged HEIF box")
        if box_type == wanted:
            if box_size > _MAX_METADATA_BYTES:
                raise _Unreadable("damaged HEIF (meta box too large)")
            payload = file.read(box_size - header_size)
            if len(payload) < box_size - header_size:
                raise _Unreadable("truncated HEIF")
            return payload
        position += box_size
        if position >= size:
            return None
        file.seek(position)


def _child_boxes(data: bytes, start: int):
    position = start
    while position + 8 <= len(data):
        box_size, box_type = struct.unpack_from(">I4s", data, position)
        header_size = 8
        if box_size == 1:
            (box_size,) = struct.unpack_from(">Q", data, position + 8)
            header_size = 16
        elif box_size == 0:
            box_size = len(data) - position
        if box_size < header_size or position + box_size > len(data):
            raise _Unreadable("damaged HEIF box")
        yield box_type, data[position + header_size : position + box_size]
        position += box_size


def _heif_exif_item_ids(iinf: bytes) -> list[int]:
    version = iinf[0]
    start = 6 if version == 0 else 8  # version/flags, then a 16- or 32-bit entry count
    ids = []
    for box_type, infe in _child_boxes(iinf, start):
        if box_type != b"infe" or infe[0] < 2:
            continue
        if infe[0] == 2:
            (item_id,) = struct.unpack_from(">H", infe, 4)
            item_type = infe[8:12]
        else:
            (item_id,) = struct.unpack_from(">I", infe, 4)
            item_type = infe[10:14]
        if item_type == b"Exif":
            ids.append(item_id)
    return ids


def _heif_item_locations(iloc: bytes) -> dict[int, tuple[int, list[tuple[int, int]]]]:
    """Item id → (construction method, [(offset, length), ...]) from an ``iloc`` box."""
    version = iloc[0]
    if version > 2:
        raise _Unreadable("HEIF item locations in an unknown version")
    offset_size, length_size = iloc[4] >> 4, iloc[4] & 0x0F
    base_offset_size, index_size = iloc[5] >> 4, iloc[5] & 0x0F
    position = 6

    def number(width: int) -> int:
        nonlocal position
        if width not in (0, 4, 8) and width != 2:
            raise _Unreadable("damaged HEIF item locations")
        value = int.from_bytes(iloc[position : position + width], "big") if width else 0
        if position + width > len(iloc):
            raise _Unreadable("damaged HEIF item locations")
        position += width
        return value

    item_count = number(2 if version < 2 else 4)
    locations = {}
    for _ in range(item_count):
        item_id = number(2 if version < 2 else 4)
        method = number(2) & 0x0F if version in (1, 2) else 0
        number(2)  # data reference index: 0 means this file
        base_offset = number(base_offset_size)
        extents = []
        for _ in range(number(2)):
            if version in (1, 2) and index_size:
                number(index_size)
            extent_offset = number(offset_size)
            extents.append((base_offset + extent_offset, number(length_size)))
        locations[item_id] = (method, extents)
    return locations


def _read_file_extents(file: BinaryIO, extents: list[tuple[int, int]], size: int) -> bytes:
    if sum(length for _, length in extents) > _MAX_METADATA_BYTES:
        raise _Unreadable("damaged HEIF (Exif item too large)")
    parts = []
    for offset, length in extents:
        if offset + length > size:
            raise _Unreadable("truncated HEIF")
        file.seek(offset)
        part = file.read(length)
        if len(part) < length:
            raise _Unreadable("truncated HEIF")
        parts.append(part)
    return b"".join(parts)


# --- tags -------------------------------------------------------------------------------

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


def _check_directories(stream: BinaryIO, byte_order: str, size: int) -> None:
    """Refuse a TIFF whose IFDs run past its end (TIFF 6.0: 2-byte count, 12-byte entries).

    exifread would walk such a directory entry by entry (up to 65535 of them, each with up
    to 999 values) through garbage: most of a second per damaged file, not a clear reason.
    """
    # (offset, in the main chain?): only the IFD0 chain links on through next-IFD offsets;
    # sub-IFDs (EXIF, GPS...) need not end with one, and exifread does not follow it there.
    pending = [(_read_uint(stream, byte_order, 4, 4) or 0, True)]
    seen: set[int] = set()
    while pending and len(seen) < _MAX_DIRECTORIES:
        offset, in_chain = pending.pop()
        if offset == 0 or offset in seen:
            continue
        seen.add(offset)
        entries = _read_uint(stream, byte_order, offset, 2)
        if entries is None or offset + 2 + 12 * entries > size:
            raise _Unreadable("damaged EXIF (a directory runs past the end)")
        stream.seek(offset + 2)
        table = stream.read(12 * entries)
        for index in range(entries):
            tag, _field_type, _count, value = struct.unpack_from(byte_order + "HHII", table, 12 * index)
            if tag in _POINTER_TAGS:
                pending.append((value, False))
        if in_chain:
            pending.append((_read_uint(stream, byte_order, offset + 2 + 12 * entries, 4) or 0, True))


def _read_uint(stream: BinaryIO, byte_order: str, offset: int, width: int) -> int | None:
    stream.seek(offset)
    data = stream.read(width)
    if len(data) < width:
        return None
    return int.from_bytes(data, "little" if byte_order == "<" else "big")


def _tags_from_tiff(stream: BinaryIO) -> dict[str, TagValue]:
    exifread = _exifread()
    stream.seek(0, os.SEEK_END)
    size = stream.tell()
    stream.seek(0)
    byte_order = "<" if stream.read(2) == b"II" else ">"
    _check_directories(stream, byte_order, size)
    raw = exifread.process_file(stream, details=False, extract_thumbnail=False)
    tags: dict[str, TagValue] = {}
    for group in _KEPT_IFDS:
        prefix = group + " "
        for key, tag in raw.items():
            if not key.startswith(prefix) or not hasattr(tag, "field_type") or tag.tag in _POINTER_TAGS:
                continue
            value = _plain_value(tag, stream, byte_order)
            if value is not None:
                tags[key[len(prefix) :]] = value
    return tags


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
        if tag.tag == _SUBJECT_DISTANCE_TAG and items and items[0][0] == _INFINITE_NUMERATOR:
            return "inf"
        converted = tuple(numerator / denominator if denominator else None for numerator, denominator in items)
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
