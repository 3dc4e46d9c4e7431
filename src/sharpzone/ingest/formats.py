"""Recognise image files by their extension and first bytes (and where a raw file hides its
EXIF JPEG). One list of extensions for the scan and the readers.

Every still-image container libexiv2 0.28 opens is here (its ``ImageType`` list: JPEG, TIFF
and the TIFF-based raws, CR2, CRW, MRW, ORF, RW2, RAF, PNG, WebP, and ISO BMFF: HEIF, AVIF,
CR3). X3F is listed for the exifread fallback only: libexiv2 0.28 has no X3F reader (checked
against its ``ImageType`` list), so such files are read only when they embed an EXIF JPEG.
"""

from __future__ import annotations

import re
import struct

JPEG = "jpeg"
TIFF = "tiff"
HEIF = "heif"
PNG = "png"
EMBEDDED_JPEG = "embedded-jpeg"
WEBP = "webp"
# Raw containers that are neither TIFF-based nor carry an embedded EXIF JPEG up front:
# Canon CR3 (ISO BMFF, EXIF in uuid boxes), Minolta MRW, Canon CRW (CIFF), Fujifilm RAF.
BMFF_RAW = "bmff-raw"
MRW = "mrw"
CIFF = "ciff"
RAF = "raf"

# Classic TIFF in both byte orders, plus the variants some raw formats use in place of
# the 42 magic (0x4F52 "RO", 0x5352 "RS", 0x0055 "U"); the IFD offset still follows at byte 4.
TIFF_SIGNATURES = (b"II*\x00", b"MM\x00*", b"IIRO", b"IIRS", b"MMOR", b"IIU\x00")
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
JPEG_SOI = b"\xff\xd8"
# ISO/IEC 23008-12 (HEIF) brands for still images and image sequences.
HEIF_BRANDS = frozenset({b"heic", b"heix", b"heim", b"heis", b"hevc", b"hevx", b"mif1", b"msf1",
                         b"avif", b"avis"})
# Canon CR3 is ISO BMFF with its own brand.
BMFF_RAW_BRANDS = frozenset({b"crx "})
# An embedded JPEG that carries EXIF starts with SOI directly followed by an APP1 "Exif".
_EMBEDDED_EXIF_JPEG = re.compile(rb"\xff\xd8\xff\xe1..Exif\x00\x00", re.DOTALL)

# How far into a file to look for an embedded EXIF JPEG: raw containers put it near the
# front, after a short header and directory (common practice, not a standard).
EMBEDDED_SEARCH_BYTES = 1 << 20

IMAGE_EXTENSIONS = {
    JPEG: frozenset({".jpg", ".jpeg", ".jpe", ".jfif"}),
    TIFF: frozenset({".tif", ".tiff", ".dng", ".nef", ".nrw", ".cr2", ".arw", ".srf", ".sr2",
                     ".pef", ".orf", ".ori", ".rw2", ".raw", ".rwl", ".3fr", ".fff", ".erf", ".kdc",
                     ".dcr", ".mef", ".mos", ".iiq", ".srw", ".gpr"}),
    HEIF: frozenset({".heic", ".heif", ".hif", ".avif"}),
    PNG: frozenset({".png"}),
    WEBP: frozenset({".webp"}),
    BMFF_RAW: frozenset({".cr3"}),
    EMBEDDED_JPEG: frozenset({".raf", ".crw", ".mrw", ".x3f"}),
}
ALL_IMAGE_EXTENSIONS = frozenset().union(*IMAGE_EXTENSIONS.values())
RAW_EXTENSIONS = (IMAGE_EXTENSIONS[TIFF] | IMAGE_EXTENSIONS[EMBEDDED_JPEG] | IMAGE_EXTENSIONS[BMFF_RAW]) - {".tif", ".tiff"}


def is_raw_name(path: str) -> bool:
    """Whether a file's extension names a raw container (DNG is TIFF inside, so the content
    alone does not tell)."""
    dot = path.rfind(".")
    return dot > max(path.rfind("/"), path.rfind("\\")) and path[dot:].lower() in RAW_EXTENSIONS


def sniff_image_kind(head: bytes) -> str | None:
    """The kind of image whose file starts with ``head`` (at least 32 bytes), or ``None``."""
    if head[:2] == JPEG_SOI and head[2:3] == b"\xff":
        return JPEG
    if head[:4] in TIFF_SIGNATURES:
        return TIFF
    if head[:8] == PNG_SIGNATURE:
        return PNG
    if head[:4] == b"RIFF" and head[8:12] == b"WEBP":
        return WEBP
    if head[4:8] == b"ftyp" and _has_brand(head, BMFF_RAW_BRANDS):
        return BMFF_RAW
    if head[4:8] == b"ftyp" and _has_brand(head, HEIF_BRANDS):
        return HEIF
    if head[:4] == b"\x00MRM":
        return MRW
    if head[:2] == b"II" and head[6:14] == b"HEAPCCDR":
        return CIFF
    if head[:16] == b"FUJIFILMCCD-RAW ":
        return RAF
    return None


def _has_brand(head: bytes, brands: frozenset[bytes]) -> bool:
    (box_size,) = struct.unpack(">I", head[:4]) if len(head) >= 4 else (0,)
    if head[8:12] in brands:
        return True
    # Compatible brands follow the major brand and minor version, 4 bytes each.
    end = min(box_size, len(head))
    return any(head[i : i + 4] in brands for i in range(16, end - 3, 4))


def find_embedded_exif_jpeg(data: bytes) -> int | None:
    """Offset of the first JPEG in ``data`` that starts with an EXIF segment, or ``None``."""
    match = _EMBEDDED_EXIF_JPEG.search(data)
    return match.start() if match else None
