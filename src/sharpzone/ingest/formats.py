"""Recognise image files by their first bytes (and where a raw file hides its EXIF JPEG)."""

from __future__ import annotations

import re
import struct

JPEG = "jpeg"
TIFF = "tiff"
HEIF = "heif"
PNG = "png"
EMBEDDED_JPEG = "embedded-jpeg"

# Classic TIFF in both byte orders, plus the variants some raw formats use in place of
# the 42 magic (0x4F52 "RO", 0x5352 "RS", 0x0055 "U"); the IFD offset still follows at byte 4.
TIFF_SIGNATURES = (b"II*\x00", b"MM\x00*", b"IIRO", b"IIRS", b"MMOR", b"IIU\x00")
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
JPEG_SOI = b"\xff\xd8"
# ISO/IEC 23008-12 (HEIF) brands for still images and image sequences.
HEIF_BRANDS = frozenset({b"heic", b"heix", b"mif1", b"msf1"})
# An embedded JPEG that carries EXIF starts with SOI directly followed by an APP1 "Exif".
_EMBEDDED_EXIF_JPEG = re.compile(rb"\xff\xd8\xff\xe1..Exif\x00\x00", re.DOTALL)

# How far into a file to look for an embedded EXIF JPEG: raw containers put it near the
# front, after a short header and directory (common practice, not a standard).
EMBEDDED_SEARCH_BYTES = 1 << 20

IMAGE_EXTENSIONS = {
    JPEG: frozenset({".jpg", ".jpeg", ".jpe", ".jfif"}),
    TIFF: frozenset({".tif", ".tiff", ".dng", ".nef", ".nrw", ".cr2", ".arw", ".srf", ".sr2",
                     ".pef", ".orf", ".rw2", ".raw", ".rwl", ".3fr", ".erf", ".kdc", ".dcr",
                     ".mef", ".mos", ".iiq", ".srw"}),
    HEIF: frozenset({".heic", ".heif", ".hif"}),
    PNG: frozenset({".png"}),
    EMBEDDED_JPEG: frozenset({".raf", ".crw", ".mrw", ".x3f"}),
}
ALL_IMAGE_EXTENSIONS = frozenset().union(*IMAGE_EXTENSIONS.values())
RAW_EXTENSIONS = (IMAGE_EXTENSIONS[TIFF] | IMAGE_EXTENSIONS[EMBEDDED_JPEG]) - {".tif", ".tiff"}


def sniff_image_kind(head: bytes) -> str | None:
    """The kind of image whose file starts with ``head`` (at least 32 bytes), or ``None``."""
    if head[:2] == JPEG_SOI and head[2:3] == b"\xff":
        return JPEG
    if head[:4] in TIFF_SIGNATURES:
        return TIFF
    if head[:8] == PNG_SIGNATURE:
        return PNG
    if head[4:8] == b"ftyp" and _has_heif_brand(head):
        return HEIF
    return None


def _has_heif_brand(head: bytes) -> bool:
    (box_size,) = struct.unpack(">I", head[:4]) if len(head) >= 4 else (0,)
    if head[8:12] in HEIF_BRANDS:
        return True
    # Compatible brands follow the major brand and minor version, 4 bytes each.
    end = min(box_size, len(head))
    return any(head[i : i + 4] in HEIF_BRANDS for i in range(16, end - 3, 4))


def find_embedded_exif_jpeg(data: bytes) -> int | None:
    """Offset of the first JPEG in ``data`` that starts with an EXIF segment, or ``None``."""
    match = _EMBEDDED_EXIF_JPEG.search(data)
    return match.start() if match else None
