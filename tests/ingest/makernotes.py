"""Test files whose maker notes libexiv2 itself writes (the reference writer for them).

The EXIF Make value selects the maker-note layout a reader expects, so these builders must
use the makers' real Make strings; they stay inside this module (never in the demo, the
examples, the docs or any label). Every builder returns bytes; ``conftest.written`` puts
them on disk and checks afterwards that reading never changed them.
"""

from __future__ import annotations

import contextlib
import os
import struct
import tempfile

import exiv2

from sharpzone.ingest.exiv2_quiet import silence_exiv2

from . import images, tiffbuild

CANON = ("Canon", "Canon EOS 5D")
CANON_COMPACT = ("Canon", "Canon PowerShot G9")
NIKON = ("NIKON CORPORATION", "NIKON D700")
NIKON_COMPACT = ("NIKON", "COOLPIX P7000")
OLYMPUS = ("OLYMPUS IMAGING CORP.", "E-M5")
CASIO = ("CASIO COMPUTER CO.,LTD.", "EX-Z750")
SONY = ("SONY", "ILCE-7")
PENTAX = ("PENTAX Corporation", "PENTAX K10D")
MINOLTA = ("Minolta Co., Ltd.", "DiMAGE A1")
FUJIFILM = ("FUJIFILM", "X-T2")
PANASONIC = ("Panasonic", "DMC-GH4")

# Nikon lens-data versions (the first 4 bytes of the block, ASCII digits) and the libexiv2
# group that decodes each: 0100 has no focus distance, 0201-0203 and 0204 are encrypted
# with the body serial number and shutter count (libexiv2 encrypts on write, decrypts on read).
NIKON_LENS_DATA = {
    "0101": "NikonLd2",
    "0201": "NikonLd2",
    "0204": "NikonLd3",
    "0800": "NikonLd4",
}


def with_exiv2(base: bytes, suffix: str, make_model: tuple[str, str] | None, tags: dict) -> bytes:
    """``base`` (an image file's bytes) with ``tags`` written by libexiv2 (values in its
    string form, e.g. ``"250"`` or ``"2500/1"``, or an ``exiv2`` value object)."""
    with _opened(base, suffix) as (path, image):
        data = image.exifData()
        if make_model is not None:
            data["Exif.Image.Make"], data["Exif.Image.Model"] = make_model
        for key, value in tags.items():
            data[key] = value
        image.writeMetadata()
        with open(path, "rb") as file:
            return file.read()


@contextlib.contextmanager
def _opened(data: bytes, suffix: str):
    """(path, libexiv2 image with its metadata read) of ``data`` in a temporary file."""
    silence_exiv2()
    descriptor, path = tempfile.mkstemp(suffix=suffix)
    try:
        with os.fdopen(descriptor, "wb") as file:
            file.write(data)
        image = exiv2.ImageFactory.open(path)
        image.readMetadata()
        yield path, image
    finally:
        os.unlink(path)


def makernote_jpeg(make_model: tuple[str, str], tags: dict, exif: bytes | None = None) -> bytes:
    """A small JPEG with the given maker-note (and any other) tags, written by libexiv2.

    ``exif`` is an optional piexif block with the standard tags (written first by Pillow);
    by default the frame has no SubjectDistance, as real cameras' files seldom do.
    """
    if exif is None:
        exif = images.exif_block(subject_distance=None, lens_model=None, lens_specification=None)
    return with_exiv2(images.jpeg(exif), ".jpg", make_model, tags)


def nikon_lens_data(version: str, focus_code: int) -> dict[str, str]:
    """The tags of a Nikon lens-data block of ``version`` holding a focus-distance step code
    (with the serial number and shutter count the encrypted versions are keyed with)."""
    group = NIKON_LENS_DATA[version]
    digits = " ".join(str(ord(char)) for char in version)
    return {
        "Exif.Nikon3.Version": "48 50 49 48",
        "Exif.Nikon3.SerialNumber": "3001234",
        "Exif.Nikon3.ShutterCount": "4321",
        f"Exif.{group}.Version": digits,
        f"Exif.{group}.FocusDistance": str(focus_code),
    }


def printed(data: bytes, suffix: str, key: str) -> str | None:
    """libexiv2's printed (calibrated) value of ``key`` in a file: the reference value."""
    with _opened(data, suffix) as (_path, image):
        exif_data = image.exifData()
        datum = exif_data.findKey(exiv2.ExifKey(key))
        return None if datum == exif_data.end() else datum.print(exif_data)


# Canon's uuid box in a CR3 file (ISO BMFF): it holds the CMT1 (IFD0), CMT2 (Exif IFD) and
# CMT3 (Canon maker note) TIFF structures, which libexiv2 reads.
_CANON_CR3_UUID = bytes.fromhex("85c0b687820f11e08111f4ce462b6a48")


def _box(kind: bytes, payload: bytes) -> bytes:
    return struct.pack(">I", 8 + len(payload)) + kind + payload


def cr3(focus_upper_cm: int, focus_lower_cm: int) -> bytes:
    """A minimal CR3 (no pixel data): ftyp 'crx ', moov with Canon's uuid box: CMT1 with
    Make/Model, CMT2 with FNumber 56/10 and FocalLength 35/1, CMT3 with a file-info array
    (tag 0x0093, 16-bit; element 0 its size in bytes, 20 and 21 the upper and lower focus
    distance, as libexiv2 decodes it)."""
    cmt1 = tiffbuild.tiff(tiffbuild.Directory({0x010F: tiffbuild.ascii(CANON[0]),
                                              0x0110: tiffbuild.ascii("Canon EOS R5")}))
    cmt2 = tiffbuild.tiff(tiffbuild.Directory({0x829D: tiffbuild.rational((56, 10)),
                                              0x920A: tiffbuild.rational((35, 1))}))
    file_info = [44] + [0] * 19 + [focus_upper_cm & 0xFFFF, focus_lower_cm]
    cmt3 = tiffbuild.tiff(tiffbuild.Directory({0x0093: tiffbuild.short(*file_info)}))
    canon = _box(b"uuid", _CANON_CR3_UUID + _box(b"CNCV", b"CanonCR3_001/01.09.00/00.00.00")
                 + _box(b"CMT1", cmt1) + _box(b"CMT2", cmt2) + _box(b"CMT3", cmt3))
    return _box(b"ftyp", b"crx " + struct.pack(">I", 1) + b"crx isom") + _box(b"moov", canon)
