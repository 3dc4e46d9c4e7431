"""A small TIFF 6.0 writer for test files that no library writes: sub-IFDs of a raw file,
directories that point back at themselves, thousands of entries sharing one value.

Layout (TIFF 6.0 section 2): an 8-byte header, then every directory (2-byte entry count,
12-byte entries sorted by tag, 4-byte next-directory offset), then the values too long
to sit in an entry's 4 bytes. Little-endian ("II") throughout.
"""

from __future__ import annotations

import struct

BYTE, ASCII, SHORT, LONG, RATIONAL, UNDEFINED, SRATIONAL = 1, 2, 3, 4, 5, 7, 10
_SIZES = {BYTE: 1, ASCII: 1, SHORT: 2, LONG: 4, RATIONAL: 8, UNDEFINED: 1, SRATIONAL: 8}
# Pointer tags (TIFF 6.0 / TIFF-EP / CIPA DC-008): SubIFDs, Exif IFD, GPS IFD.
SUB_IFDS, EXIF_IFD, GPS_IFD = 0x014A, 0x8769, 0x8825


def ascii(text: str) -> tuple[int, int, bytes]:
    return ASCII, len(text) + 1, text.encode("ascii") + b"\x00"


def short(*values: int):
    return SHORT, len(values), struct.pack(f"<{len(values)}H", *values)


def long(*values: int):
    return LONG, len(values), struct.pack(f"<{len(values)}I", *values)


def rational(*pairs: tuple[int, int]):
    return RATIONAL, len(pairs), b"".join(struct.pack("<II", n, d) for n, d in pairs)


class Directory:
    """Entries {tag: (type, count, packed value)} plus pointers to other directories."""

    def __init__(self, entries: dict | None = None) -> None:
        self.entries = dict(entries or {})
        self.pointers: dict[int, list[Directory]] = {}

    def point(self, tag: int, *targets: Directory) -> Directory:
        self.pointers[tag] = list(targets)
        return self

    def size(self) -> int:
        return 2 + 12 * (len(self.entries) + len(self.pointers)) + 4


def tiff(root: Directory, extra_tail: bytes = b"") -> bytes:
    """The TIFF bytes of ``root`` and every directory it points to (each laid out once)."""
    order: list[Directory] = []

    def collect(directory: Directory) -> None:
        if any(directory is seen for seen in order):
            return
        order.append(directory)
        for targets in directory.pointers.values():
            for target in targets:
                collect(target)

    collect(root)
    offsets, position = {}, 8
    for directory in order:
        offsets[id(directory)] = position
        position += directory.size()
    data = bytearray()
    data_start = position
    out = bytearray(b"II*\x00" + struct.pack("<I", 8))
    for directory in order:
        rows = []
        for tag, (field_type, count, packed) in directory.entries.items():
            if len(packed) <= 4:
                value = packed.ljust(4, b"\x00")
            else:
                value = struct.pack("<I", data_start + len(data))
                data += packed + (b"\x00" if len(packed) % 2 else b"")
            rows.append(struct.pack("<HHI", tag, field_type, count) + value)
        for tag, targets in directory.pointers.items():
            if len(targets) == 1:
                value = struct.pack("<I", offsets[id(targets[0])])
            else:
                value = struct.pack("<I", data_start + len(data))
                data += b"".join(struct.pack("<I", offsets[id(t)]) for t in targets)
            rows.append(struct.pack("<HHI", tag, LONG, len(targets)) + value)
        rows.sort(key=lambda row: struct.unpack_from("<H", row)[0])
        out += struct.pack("<H", len(rows)) + b"".join(rows) + struct.pack("<I", 0)
    return bytes(out + data + extra_tail)


def crafted_directory_tiff(entries: int = 2100, values: int = 999) -> bytes:
    """The hostile structure of issue 10: one directory of ``entries`` entries of ``values``
    rationals each, all sharing one value block, with its Exif and GPS pointers leading
    back to itself. About 33 kB; its entries claim entries × values × 8 bytes (16.8 MB)."""
    count = entries + 2
    directory_size = 2 + 12 * count + 4
    value_offset = 8 + directory_size
    rows = [struct.pack("<HHII", EXIF_IFD, LONG, 1, 8), struct.pack("<HHII", GPS_IFD, LONG, 1, 8)]
    rows += [struct.pack("<HHII", 0x9000 + index, RATIONAL, values, value_offset) for index in range(entries)]
    directory = struct.pack("<H", count) + b"".join(rows) + struct.pack("<I", 0)
    return b"II*\x00" + struct.pack("<I", 8) + directory + struct.pack("<II", 1, 1) * values


def self_pointing_tiff() -> bytes:
    """IFD0 with a Make and an Exif pointer leading back to IFD0 itself: a small loop."""
    make = ascii("Korvath")
    rows = [struct.pack("<HHI", 0x010F, make[0], make[1]) + struct.pack("<I", 8 + 2 + 24 + 4),
            struct.pack("<HHII", EXIF_IFD, LONG, 1, 8)]
    return b"II*\x00" + struct.pack("<I", 8) + struct.pack("<H", 2) + b"".join(rows) + struct.pack("<I", 0) + make[2]
