"""Find the EXIF TIFF structure in any container, and check its directories before a reader
decodes them: strictly read-only, shared by every reader.

The walkers follow the containers' own specifications (JPEG ISO/IEC 10918-1 marker segments,
PNG 1.2 with the 2017 eXIf chunk, HEIF ISO/IEC 23008-12 items, TIFF 6.0 directories), so a
reader never has to trust a library's container code with a hostile file. The directory
check is the work budget every reader runs under (see ``check_directories``).
"""

from __future__ import annotations

import io
import os
import struct
from dataclasses import dataclass
from typing import BinaryIO, NamedTuple

from sharpzone.ingest import formats
from sharpzone.ingest.records import FileReadError, os_error_reason

# A HEIF meta box or EXIF item beyond this is not metadata but damage.
_MAX_METADATA_BYTES = 16 << 20
HEAD_BYTES = 4096
# More IFDs than this (main image, thumbnail, EXIF, GPS, interoperability, raw previews...)
# are not followed further.
_MAX_DIRECTORIES = 64
# Offsets to the EXIF, GPS and interoperability IFDs: structure, not information.
POINTER_TAGS = frozenset({0x8769, 0x8825, 0xA005})
# TIFF 6.0 field types → bytes per value (1 BYTE, 2 ASCII, 3 SHORT, 4 LONG, 5 RATIONAL,
# 6 SBYTE, 7 UNDEFINED, 8 SSHORT, 9 SLONG, 10 SRATIONAL, 11 FLOAT, 12 DOUBLE, 13 IFD).
_TYPE_SIZES = {1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4, 12: 8, 13: 4}
# The work budget: values stored outside the directories do not overlap in a sound file, so
# together they cannot claim more bytes than the block holds. Twice that, plus slack for
# writers that share one value between tags, is still far below what a crafted directory
# claims (2,100 entries of 999 rationals each claim 16.8 MB from a 33 kB block).
_CLAIM_FACTOR = 2
_CLAIM_SLACK_BYTES = 1 << 16


class Unreadable(Exception):
    """The file is damaged in a way we can name; the message is the short reason."""


@dataclass(frozen=True)
class Directories:
    """What ``check_directories`` found: the file offsets of pointer entries that lead back
    to a directory already read (each directory is read once)."""

    looping_pointers: tuple[int, ...]


def tiff_byte_order(head: bytes) -> str:
    return "<" if head[:2] == b"II" else ">"


def exif_tiff_block(file: BinaryIO, head: bytes | None = None) -> bytes | None | BinaryIO:
    """The EXIF TIFF structure of an open image: the file itself for a TIFF-based file,
    the block's bytes for JPEG, PNG, HEIF and raw files with an embedded EXIF JPEG, ``None``
    for an image without EXIF. Raises ``Unreadable`` for what is not an image or is damaged.
    ``head``: the file's first ``HEAD_BYTES`` bytes, when the caller has them already.
    """
    if head is None:
        file.seek(0)
        head = file.read(HEAD_BYTES)
    if not head:
        raise Unreadable("empty file")
    kind = formats.sniff_image_kind(head)
    if kind == formats.TIFF:
        check_tiff_header(head, os.fstat(file.fileno()).st_size)
        return file
    if kind == formats.JPEG:
        tiff = _jpeg_exif_block(file, start=0)
    elif kind == formats.PNG:
        tiff = _png_exif_block(file)
    elif kind == formats.HEIF:
        tiff = _heif_exif_block(file)
    elif kind == formats.WEBP:
        tiff = _webp_exif_block(file)
    else:
        file.seek(0)
        start = formats.find_embedded_exif_jpeg(file.read(formats.EMBEDDED_SEARCH_BYTES))
        if start is None:
            raise Unreadable("not an image")
        tiff = _jpeg_exif_block(file, start=start)
    if tiff is None:
        return None
    check_tiff_header(tiff, len(tiff))
    return tiff


def directory_damage(file: BinaryIO, head: bytes | None = None) -> str | None:
    """The shared directory check (``check_directories``) on an open image's EXIF block:
    the reason when its directories are damaged ("damaged EXIF (...)"), else ``None``;
    other trouble walking the container is left to the reader, which names it. ``head`` as
    for ``exif_tiff_block``."""
    try:
        block = exif_tiff_block(file, head)
        if block is None:
            return None
        if block is file:
            file.seek(0, os.SEEK_END)
            check_directories(file, file.tell())
        else:
            check_directories(io.BytesIO(block), len(block))
    except Unreadable as err:
        return _final_damage(err)
    return None


def _final_damage(err: Unreadable) -> str | None:
    """The reason of a damaged-directory verdict (final for every reader), else ``None``:
    other trouble walking a container is left to the reader, which names it."""
    return str(err) if str(err).startswith("damaged EXIF") else None


def _block_damage(block: bytes | None) -> str | None:
    """``directory_damage`` for an EXIF TIFF block already in hand."""
    if block is None:
        return None
    try:
        check_tiff_header(block, len(block))
        check_directories(io.BytesIO(block), len(block))
    except Unreadable as err:
        return _final_damage(err)
    return None


def check_tiff_header(head: bytes, size: int) -> None:
    if len(head) < 8 or head[:4] not in formats.TIFF_SIGNATURES:
        raise Unreadable("broken TIFF header")
    (first_ifd,) = struct.unpack(tiff_byte_order(head) + "I", head[4:8])
    if not 8 <= first_ifd <= size - 2:
        raise Unreadable("broken TIFF header")


def check_directories(stream: BinaryIO, size: int) -> Directories:
    """Walk the IFDs of a TIFF structure (TIFF 6.0: 2-byte count, 12-byte entries) once each,
    within the work budget, before any reader decodes them.

    Refuses a directory that runs past the end (a reader would walk it entry by entry through
    garbage) and directories whose values claim more bytes than the block can hold (a crafted
    directory of thousands of long entries sharing one value). A directory reached a second
    time is not read again; the pointers that lead back are returned so a reader can skip them.
    """
    stream.seek(0)
    byte_order = tiff_byte_order(stream.read(2))
    # (offset, in the main chain?): only the IFD0 chain links on through next-IFD offsets;
    # sub-IFDs (EXIF, GPS...) need not end with one, and readers do not follow it there.
    pending = [(_read_uint(stream, byte_order, 4, 4) or 0, True, None)]
    seen: set[int] = set()
    looping: list[int] = []
    claimed = 0
    budget = _CLAIM_FACTOR * size + _CLAIM_SLACK_BYTES
    entry_format, sizes = byte_order + "HHII", _TYPE_SIZES
    while pending and len(seen) < _MAX_DIRECTORIES:
        offset, in_chain, pointer_at = pending.pop()
        if offset == 0:
            continue
        if offset in seen:
            if pointer_at is not None:
                looping.append(pointer_at)
            continue
        seen.add(offset)
        entries = _read_uint(stream, byte_order, offset, 2)
        if entries is None or offset + 2 + 12 * entries > size:
            raise Unreadable("damaged EXIF (a directory runs past the end)")
        stream.seek(offset + 2)
        table = stream.read(12 * entries)
        entry_at = offset + 2
        for tag, field_type, count, value in struct.iter_unpack(entry_format, table):
            length = sizes.get(field_type, 0) * count
            if length > 4:
                claimed += length
            if tag in POINTER_TAGS:
                pending.append((value, False, entry_at))
            entry_at += 12
        if claimed > budget:
            raise Unreadable("damaged EXIF (its directories claim more data than the file holds)")
        if in_chain:
            pending.append((_read_uint(stream, byte_order, offset + 2 + 12 * entries, 4) or 0, True, None))
    return Directories(tuple(looping))


def _read_uint(stream: BinaryIO, byte_order: str, offset: int, width: int) -> int | None:
    stream.seek(offset)
    data = stream.read(width)
    if len(data) < width:
        return None
    return int.from_bytes(data, "little" if byte_order == "<" else "big")


# --- containers -------------------------------------------------------------------------

def _jpeg_exif_block(file: BinaryIO, start: int) -> bytes | None:
    """Walk the JPEG's marker segments up to the image data; return the EXIF TIFF block."""
    file.seek(start)
    if file.read(2) != formats.JPEG_SOI:
        raise Unreadable("not a JPEG")
    while True:
        marker = _next_jpeg_marker(file)
        if marker in (0xDA, 0xD9):  # start of scan, end of image: no EXIF before the data
            return None
        if 0xD0 <= marker <= 0xD7 or marker == 0x01:  # markers without a length
            continue
        length_bytes = file.read(2)
        if len(length_bytes) < 2:
            raise Unreadable("truncated JPEG")
        (length,) = struct.unpack(">H", length_bytes)
        if length < 2:
            raise Unreadable("damaged JPEG segment")
        if marker == 0xE1:
            payload = file.read(length - 2)
            if len(payload) < length - 2:
                raise Unreadable("truncated JPEG")
            if payload.startswith(b"Exif\x00\x00"):
                return payload[6:]
        else:
            file.seek(length - 2, os.SEEK_CUR)


def _next_jpeg_marker(file: BinaryIO) -> int:
    byte = file.read(1)
    if not byte:
        raise Unreadable("truncated JPEG")
    if byte != b"\xff":
        raise Unreadable("damaged JPEG (no marker where one belongs)")
    while byte == b"\xff":  # any number of 0xFF fill bytes may precede a marker
        byte = file.read(1)
    if not byte:
        raise Unreadable("truncated JPEG")
    return byte[0]


def _png_exif_block(file: BinaryIO) -> bytes | None:
    """Walk the PNG chunks (PNG 1.2 + eXIf extension, 2017); return the eXIf payload."""
    file.seek(len(formats.PNG_SIGNATURE))
    while True:
        header = file.read(8)
        if len(header) < 8:
            raise Unreadable("truncated PNG")
        length, chunk_type = struct.unpack(">I4s", header)
        if length > 0x7FFFFFFF:
            raise Unreadable("damaged PNG chunk")
        if chunk_type == b"eXIf":
            payload = file.read(length)
            if len(payload) < length:
                raise Unreadable("truncated PNG")
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
        raise Unreadable("damaged HEIF (Exif item has no location)")
    method, extents = locations[exif_ids[0]]
    if method == 0:
        item = _read_file_extents(file, extents, size)
    elif method == 1:
        idat = children.get(b"idat", b"")
        item = b"".join(idat[offset : offset + length] for offset, length in extents)
    else:
        raise Unreadable("HEIF Exif item stored in an unsupported way")
    if len(item) < 4:
        raise Unreadable("damaged HEIF Exif item")
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
                raise Unreadable("truncated HEIF")
            (box_size,) = struct.unpack(">Q", large)
            header_size = 16
        elif box_size == 0:  # runs to the end of the file
            box_size = size - position
        if box_size < header_size:
            raise Unreadable("damaged HEIF box")
        if box_type == wanted:
            if box_size > _MAX_METADATA_BYTES:
                raise Unreadable("damaged HEIF (meta box too large)")
            payload = file.read(box_size - header_size)
            if len(payload) < box_size - header_size:
                raise Unreadable("truncated HEIF")
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
            raise Unreadable("damaged HEIF box")
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
        raise Unreadable("HEIF item locations in an unknown version")
    offset_size, length_size = iloc[4] >> 4, iloc[4] & 0x0F
    base_offset_size, index_size = iloc[5] >> 4, iloc[5] & 0x0F
    position = 6

    def number(width: int) -> int:
        nonlocal position
        if width not in (0, 4, 8) and width != 2:
            raise Unreadable("damaged HEIF item locations")
        value = int.from_bytes(iloc[position : position + width], "big") if width else 0
        if position + width > len(iloc):
            raise Unreadable("damaged HEIF item locations")
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
        raise Unreadable("damaged HEIF (Exif item too large)")
    parts = []
    for offset, length in extents:
        if offset + length > size:
            raise Unreadable("truncated HEIF")
        file.seek(offset)
        part = file.read(length)
        if len(part) < length:
            raise Unreadable("truncated HEIF")
        parts.append(part)
    return b"".join(parts)


def _webp_exif_block(file: BinaryIO) -> bytes | None:
    """The ``EXIF`` chunk of a WebP file (RIFF container: 4-byte id, little-endian size, data
    padded to an even length)."""
    size = os.fstat(file.fileno()).st_size
    position = 12
    while position + 8 <= size:
        file.seek(position)
        chunk_id, length = struct.unpack("<4sI", file.read(8))
        if chunk_id == b"EXIF":
            if length > _MAX_METADATA_BYTES or position + 8 + length > size:
                raise Unreadable("damaged WebP EXIF chunk")
            payload = file.read(length)
            return payload[6:] if payload.startswith(b"Exif\x00\x00") else payload
        position += 8 + length + (length & 1)
    return None


class Sniffed(NamedTuple):
    """What ``sniff_and_check`` told of a file: its ``formats`` kind (``None``: not an
    image), and for a JPEG whose metadata segments end within ``METADATA_PREFIX_BYTES``, its
    bytes up to the start of the image data (``metadata``), which hold everything a reader
    decodes; else ``None``."""

    kind: str | None
    metadata: bytes | None = None


# A JPEG whose marker segments before the image data (EXIF, maker notes, XMP, ICC profile)
# take more than this is read from the file, not from memory.
METADATA_PREFIX_BYTES = 256 << 10


def sniff_and_check(path: str) -> Sniffed:
    """The ``formats`` kind of a file by its first bytes, and the shared directory check on
    the same open file (one open for both); a JPEG's metadata segments come back with it
    (``Sniffed.metadata``), read on that open, so a reader need not open the file again.

    Raises ``FileReadError`` for an empty or unreadable file, and for damaged directories.
    """
    try:
        descriptor = os.open(path, os.O_RDONLY | getattr(os, "O_CLOEXEC", 0))
    except OSError as err:
        raise FileReadError(path, os_error_reason(err)) from None
    try:
        head = os.read(descriptor, HEAD_BYTES)
        if not head:
            raise FileReadError(path, "empty file")
        kind = formats.sniff_image_kind(head[:64])
        if kind == formats.JPEG:
            metadata = _jpeg_metadata(descriptor, head)
            if metadata is not None:
                damage = _block_damage(metadata[0])
                if damage is not None:
                    raise FileReadError(path, damage)
                return Sniffed(kind, metadata[1])
        # Anything else, or a JPEG off the common shape: walked on the file, as readers see it.
        with open(descriptor, "rb", closefd=False) as file:
            damage = directory_damage(file, head) if kind is not None else None
    except OSError as err:
        raise FileReadError(path, os_error_reason(err)) from None
    finally:
        os.close(descriptor)
    if damage is not None:
        raise FileReadError(path, damage)
    return Sniffed(kind)


def _jpeg_metadata(descriptor: int, head: bytes) -> tuple[bytes | None, bytes] | None:
    """A JPEG's EXIF TIFF block (or ``None``) and its bytes up to the end of the start-of-scan
    marker, read on from ``head`` as the segment lengths lead; ``None`` for anything off the
    common shape (fill bytes, markers without a length, the end of the data before the scan,
    a short file, more than ``METADATA_PREFIX_BYTES``), which the file-based walk then names."""
    data = bytearray(head)
    position, block = 2, None
    while True:
        if position + 4 > len(data) and not _read_up_to(descriptor, data, position + 4):
            return None
        if data[position] != 0xFF:
            return None
        marker = data[position + 1]
        if marker == 0xDA:  # start of scan: the metadata is all before it
            return block, bytes(data[:position + 2])
        if marker == 0xFF or marker == 0xD9 or 0xD0 <= marker <= 0xD7 or marker == 0x01:
            return None
        length = (data[position + 2] << 8) | data[position + 3]
        if length < 2:
            return None
        end = position + 2 + length
        if marker == 0xE1 and block is None:
            if end > len(data) and not _read_up_to(descriptor, data, end):
                return None
            if data.startswith(b"Exif\x00\x00", position + 4):
                block = bytes(data[position + 10:end])
        position = end


def _read_up_to(descriptor: int, data: bytearray, size: int) -> bool:
    """Read on until ``data`` holds ``size`` bytes; ``False`` past the prefix limit or the
    end of the file."""
    if size > METADATA_PREFIX_BYTES:
        return False
    while len(data) < size:
        more = os.read(descriptor, max(size - len(data), HEAD_BYTES))
        if not more:
            return False
        data += more
    return True


# JPEG start-of-frame markers (ISO/IEC 10918-1 B.1.1.3): C0-CF except DHT C4, JPG C8, DAC CC.
_SOF_MARKERS = frozenset(range(0xC0, 0xD0)) - {0xC4, 0xC8, 0xCC}


def image_size(file: BinaryIO, kind: str | None) -> tuple[int, int] | None:
    """The pixel size of the main image as its container's own header says (JPEG frame
    header, PNG IHDR, extended WebP VP8X), or ``None``; the TIFF size is a tag."""
    try:
        if kind == formats.JPEG:
            return _jpeg_frame_size(file)
        if kind == formats.PNG:
            file.seek(16)
            width, height = struct.unpack(">II", file.read(8))
            return width, height
        if kind == formats.WEBP:
            return _webp_size(file)
    except (struct.error, Unreadable):
        return None
    return None


def _jpeg_frame_size(file: BinaryIO) -> tuple[int, int] | None:
    file.seek(2)
    while True:
        marker = _next_jpeg_marker(file)
        if marker in (0xDA, 0xD9):
            return None
        if 0xD0 <= marker <= 0xD7 or marker == 0x01:
            continue
        (length,) = struct.unpack(">H", file.read(2))
        if marker in _SOF_MARKERS:
            _precision, height, width = struct.unpack(">BHH", file.read(5))
            return width, height
        if length < 2:
            return None
        file.seek(length - 2, os.SEEK_CUR)


def _webp_size(file: BinaryIO) -> tuple[int, int] | None:
    """The canvas size of an extended WebP (the VP8X chunk: flags, 3 reserved bytes, then
    width - 1 and height - 1 in 24 bits each). A WebP with an EXIF chunk is always extended."""
    file.seek(12)
    chunk_id, _length = struct.unpack("<4sI", file.read(8))
    if chunk_id != b"VP8X":
        return None
    data = file.read(10)
    return int.from_bytes(data[4:7], "little") + 1, int.from_bytes(data[7:10], "little") + 1
