"""Build test images in memory: Pillow writes the pixels, piexif the EXIF block.

Makers and lenses are invented. Every builder returns bytes; ``conftest.written`` puts
them on disk and checks afterwards that reading never changed them.
"""

from __future__ import annotations

import io
import struct

import piexif
from PIL import Image

# CIPA DC-008 / EXIF 2.3 tag numbers (the piexif constants say the same).
INFINITY_NUMERATOR = 0xFFFFFFFF


def exif_block(
    *,
    f_number=(28, 10),
    focal_length=(50, 1),
    subject_distance=(32, 10),
    lens_model=b"Altamira Optical 24-70mm F2.8",
    lens_specification=((24, 1), (70, 1), (28, 10), (0, 0)),
    extra_exif: dict | None = None,
    extra_0th: dict | None = None,
) -> bytes:
    """An EXIF block (starting with ``Exif\\0\\0``) with the tags these tests check."""
    zeroth = {
        piexif.ImageIFD.Make: b"Korvath",
        piexif.ImageIFD.Model: b"Korvath KV-7",
    }
    exif = {
        piexif.ExifIFD.ExposureTime: (1, 250),
        piexif.ExifIFD.ISOSpeedRatings: 400,
        piexif.ExifIFD.DateTimeOriginal: b"2026:05:17 14:03:22",
        piexif.ExifIFD.SubSecTimeOriginal: b"05",
        piexif.ExifIFD.OffsetTimeOriginal: b"+05:30",
        piexif.ExifIFD.LensMake: b"Altamira Optical",
        piexif.ExifIFD.BodySerialNumber: b"KV7-000123",
        piexif.ExifIFD.LensSerialNumber: b"AO-98765",
        piexif.ExifIFD.FocalLengthIn35mmFilm: 50,
        piexif.ExifIFD.SubjectDistanceRange: 2,
        piexif.ExifIFD.PixelXDimension: 6000,
        piexif.ExifIFD.PixelYDimension: 4000,
        # 6000 px across a 36 mm wide focal plane: 6000 / (36 / 25.4) px per inch.
        piexif.ExifIFD.FocalPlaneXResolution: (4233333, 1000),
        piexif.ExifIFD.FocalPlaneYResolution: (4233333, 1000),
        piexif.ExifIFD.FocalPlaneResolutionUnit: 2,
    }
    for tag, value in (
        (piexif.ExifIFD.FNumber, f_number),
        (piexif.ExifIFD.FocalLength, focal_length),
        (piexif.ExifIFD.SubjectDistance, subject_distance),
        (piexif.ExifIFD.LensModel, lens_model),
        (piexif.ExifIFD.LensSpecification, lens_specification),
    ):
        if value is not None:
            exif[tag] = value
    exif.update(extra_exif or {})
    zeroth.update(extra_0th or {})
    return piexif.dump({"0th": zeroth, "Exif": exif})


def tiff_block(exif: bytes) -> bytes:
    """The TIFF structure inside an EXIF block (without the ``Exif\\0\\0`` prefix)."""
    assert exif.startswith(b"Exif\x00\x00")
    return exif[6:]


def pillow_image(image_format: str, exif: bytes | None = None, size=(16, 12)) -> bytes:
    buffer = io.BytesIO()
    image = Image.new("RGB", size, (120, 90, 60))
    if exif is None:
        image.save(buffer, image_format)
    else:
        image.save(buffer, image_format, exif=exif)
    return buffer.getvalue()


def jpeg(exif: bytes | None = None) -> bytes:
    return pillow_image("JPEG", exif)


def insert_segments_before_app1(jpeg_bytes: bytes, total_bytes: int) -> bytes:
    """Put APP2 segments worth ``total_bytes`` right after SOI, ahead of the EXIF APP1.

    ISO/IEC 10918-1: a marker segment is FF xx, a 2-byte big-endian length that counts
    itself, then the payload; APPn segments may come in any order.
    """
    segments = b""
    remaining = total_bytes
    while remaining > 0:
        payload = b"KORVATH-NOTES\x00" + b"n" * min(remaining, 60000)
        segments += b"\xff\xe2" + struct.pack(">H", len(payload) + 2) + payload
        remaining -= len(payload) + 4
    return jpeg_bytes[:2] + segments + jpeg_bytes[2:]


def _box(kind: bytes, payload: bytes) -> bytes:
    return struct.pack(">I", 8 + len(payload)) + kind + payload


def _full_box(kind: bytes, version: int, payload: bytes) -> bytes:
    return _box(kind, struct.pack(">I", version << 24) + payload)


def heif(exif: bytes, *, brand: bytes = b"heic", with_item_info: bool = True) -> bytes:
    """A minimal HEIF file (ISO/IEC 23008-12) holding only an ``Exif`` item, no pixels.

    ftyp; meta { hdlr 'pict', iinf { infe v2 'Exif' }, iloc v0 }; mdat with the item:
    a 4-byte offset to the TIFF header, then ``Exif\\0\\0`` and the TIFF structure.
    ``with_item_info=False`` renames iinf to 'free', so the file declares no items.
    """
    item = struct.pack(">I", 6) + exif
    ftyp = _box(b"ftyp", brand + struct.pack(">I", 0) + b"mif1" + brand)

    def meta(item_offset: int) -> bytes:
        hdlr = _full_box(b"hdlr", 0, b"\x00" * 4 + b"pict" + b"\x00" * 12 + b"\x00")
        infe = _full_box(b"infe", 2, struct.pack(">HH", 1, 0) + b"Exif" + b"\x00")
        iinf = _full_box(b"iinf" if with_item_info else b"free", 0, struct.pack(">H", 1) + infe)
        # offset_size 4, length_size 4, base_offset_size 0; one item, one extent.
        iloc = _full_box(b"iloc", 0, bytes([0x44, 0x00]) + struct.pack(">HHHHII", 1, 1, 0, 1, item_offset, len(item)))
        return _full_box(b"meta", 0, hdlr + iinf + iloc)

    item_offset = len(ftyp) + len(meta(0)) + 8
    return ftyp + meta(item_offset) + _box(b"mdat", item)


def without_app0(jpeg_bytes: bytes) -> bytes:
    """Drop a leading APP0 (JFIF) segment, so SOI is followed directly by the EXIF APP1, as in
    the previews cameras embed."""
    assert jpeg_bytes[2:4] == b"\xff\xe0"
    (length,) = struct.unpack(">H", jpeg_bytes[4:6])
    return jpeg_bytes[:2] + jpeg_bytes[4 + length :]


def raw_with_embedded_jpeg(jpeg_bytes: bytes) -> bytes:
    """An invented raw container: a header, a table, the preview JPEG (with the EXIF), sensor data."""
    jpeg_bytes = without_app0(jpeg_bytes)
    header = b"KORVATH-RAW-0100" + struct.pack(">II", 256, len(jpeg_bytes))
    return header.ljust(256, b"\x00") + jpeg_bytes + bytes(range(256)) * 16


def tiff_with_ifd_loop() -> bytes:
    """A little-endian TIFF whose IFD0 and IFD1 point at each other (TIFF 6.0: next-IFD offset)."""
    def ifd(next_offset: int) -> bytes:
        entry = struct.pack("<HHII", 0x010F, 2, 4, int.from_bytes(b"Kor\x00", "little"))
        return struct.pack("<H", 1) + entry + struct.pack("<I", next_offset)

    first, second = 8, 8 + 18
    return b"II*\x00" + struct.pack("<I", first) + ifd(second) + ifd(first)


def mutation_strategies() -> dict:
    """hypothesis strategies for ``mutated``: up to 12 bytes overwritten, maybe a cut."""
    from hypothesis import strategies as st

    return {
        "changes": st.lists(st.tuples(st.floats(0, 1, exclude_max=True), st.integers(0, 255)), max_size=12),
        "keep": st.one_of(st.none(), st.floats(0, 1)),
    }


def mutated(data: bytes, changes, keep) -> bytes:
    """``data`` with bytes overwritten at relative positions, then cut to a share of it."""
    result = bytearray(data)
    for where, byte in changes:
        result[int(where * len(result))] = byte
    if keep is not None:
        result = result[: int(keep * len(result))]
    return bytes(result)
