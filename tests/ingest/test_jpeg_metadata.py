"""A JPEG read from its metadata segments: the sniff reads them on its one open, and
libexiv2 decodes those bytes instead of opening the file again.

The reference is libexiv2 itself reading the whole file by its path: every tag, the pixel
size and the container kind must be the same. JPEG structure is ISO/IEC 10918-1 (B.1.1:
a marker segment is FF xx, a two-byte length that counts itself, then the payload; the
metadata segments come before the start-of-scan marker FF DA). Maker-note fields are
written by libexiv2 for the EXIF Make strings that choose their layout.
"""

from __future__ import annotations

import io
import os

import pytest
from PIL import Image

from sharpzone.ingest.readers import read_tags, sniff_file
from sharpzone.ingest.readers.containers import METADATA_PREFIX_BYTES
from sharpzone.ingest.readers.exifread_reader import ExifreadReader
from sharpzone.ingest.readers.exiv2_reader import Exiv2Reader
from sharpzone.ingest.records import FileReadError

from . import images, makernotes

START_OF_SCAN = b"\xff\xda"


def _photo(size=(800, 600), **options) -> bytes:
    """A JPEG with real image data (a gradient), as a downsized copy would be."""
    image = Image.linear_gradient("L").resize(size).convert("RGB")
    buffer = io.BytesIO()
    image.save(buffer, "JPEG", exif=images.exif_block(subject_distance=(2500, 1000)), quality=85, **options)
    return buffer.getvalue()


def _with_icc_and_xmp() -> bytes:
    """An ICC profile (APP2, written by Pillow from littleCMS's sRGB) and an XMP packet
    (APP1, written by Pillow), as raw converters' exports carry them."""
    from PIL import ImageCms

    profile = ImageCms.ImageCmsProfile(ImageCms.createProfile("sRGB")).tobytes()
    xmp = b"<x:xmpmeta xmlns:x='adobe:ns:meta/'><rdf:RDF xmlns:rdf='http://www.w3.org/1999/02/22-rdf-syntax-ns#'/></x:xmpmeta>"
    return _photo(icc_profile=profile, xmp=xmp)


REAL_SHAPES = {
    "canon.JPG": lambda: makernotes.makernote_jpeg(makernotes.CANON, {
        "Exif.CanonFi.FocusDistanceUpper": "250", "Exif.CanonFi.FocusDistanceLower": "240"}),
    "nikon.JPG": lambda: makernotes.makernote_jpeg(makernotes.NIKON, makernotes.nikon_lens_data("0204", 80)),
    "downsized.jpg": _photo,
    "progressive.jpg": lambda: _photo(progressive=True),
    "icc-and-xmp.jpg": _with_icc_and_xmp,
    # EXIF beyond the first read (a camera's APP1 with maker notes and thumbnail: tens of kB).
    "late-exif.jpg": lambda: images.insert_segments_before_app1(_photo(), 70_000),
    "no-exif.jpg": lambda: images.pillow_image("JPEG", size=(64, 48)),
}


@pytest.mark.parametrize("name", sorted(REAL_SHAPES))
def test_tags_from_the_metadata_segments_equal_libexiv2_reading_the_file(written, name):
    data = REAL_SHAPES[name]()
    path = written(name, data)
    sniffed = sniff_file(path)
    assert sniffed.kind == "jpeg"
    assert sniffed.metadata is not None
    assert data.startswith(sniffed.metadata) and sniffed.metadata.endswith(START_OF_SCAN)
    assert sniffed.metadata.count(START_OF_SCAN) >= 1 and len(sniffed.metadata) < len(data)
    from_memory = Exiv2Reader().read(path, checked=True, metadata=sniffed.metadata)
    assert from_memory == Exiv2Reader().read(path)  # libexiv2 opening the file itself
    assert read_tags(path) == from_memory


def test_the_maker_bracket_survives_reading_from_memory(written):
    # libexiv2 prints the Canon bracket 2.40 m to 2.50 m from the file; the same from memory.
    path = written("canon.JPG", REAL_SHAPES["canon.JPG"]())
    tags = read_tags(path)
    assert (tags["Exif.CanonFi.FocusDistanceLower"], tags["Exif.CanonFi.FocusDistanceUpper"]) == (240, 250)


def test_read_from_memory_the_file_is_not_opened_again(written, tmp_path):
    path = written("frame.jpg", _photo())
    sniffed = sniff_file(path)
    moved = str(tmp_path / "gone.jpg")
    os.rename(path, moved)  # libexiv2 would fail on the path now; from memory it needs none
    assert Exiv2Reader().read(path, checked=True, metadata=sniffed.metadata) == Exiv2Reader().read(moved)


def _fill_bytes_before_app1(data: bytes) -> bytes:
    return data[:2] + b"\xff" + data[2:]  # ISO/IEC 10918-1 B.1.1.2: FF fill bytes may precede a marker


OFF_SHAPE = {
    "fill bytes": lambda: _fill_bytes_before_app1(_photo()),
    "metadata past the limit": lambda: images.insert_segments_before_app1(_photo(), METADATA_PREFIX_BYTES + 1),
    "end of image before any scan": lambda: b"\xff\xd8\xff\xd9",
}


@pytest.mark.parametrize("shape", sorted(OFF_SHAPE))
def test_a_jpeg_off_the_common_shape_is_read_from_the_file_as_before(written, shape):
    path = written("odd.jpg", OFF_SHAPE[shape]())
    sniffed = sniff_file(path)
    assert (sniffed.kind, sniffed.metadata) == ("jpeg", None)
    assert read_tags(path) == Exiv2Reader().read(path)


@pytest.mark.parametrize("cut", ["inside the EXIF segment", "before the scan"])
def test_a_cut_jpeg_is_walked_on_the_file_and_named_as_before(written, cut):
    data = _photo()
    end = data.index(b"Exif") + 40 if cut == "inside the EXIF segment" else data.index(START_OF_SCAN) - 3
    path = written("cut.jpg", data[:end])
    sniffed = sniff_file(path)
    assert sniffed.metadata is None
    # libexiv2 refuses the cut file, so the fallback reader has its turn and names the damage.
    expected = _outcome(lambda: Exiv2Reader().read(path))
    if isinstance(expected, str):
        expected = _outcome(lambda: ExifreadReader().read(path))
    assert _outcome(lambda: read_tags(path)) == expected


def _outcome(read) -> dict | str:
    """The tags read, or the reason the read was refused."""
    try:
        return read()
    except FileReadError as err:
        return err.reason


def test_a_damaged_directory_is_refused_on_the_memory_walk_too(written):
    # 2,100 entries of 999 rationals claim 16.8 MB from a block of 25 kB: the work budget.
    from .test_readers import CRAFTED_REASON, _jpeg_with_tiff
    from . import tiffbuild

    path = written("crafted.jpg", _jpeg_with_tiff(tiffbuild.crafted_directory_tiff()))
    with pytest.raises(FileReadError) as raised:
        sniff_file(path)
    assert raised.value.reason == CRAFTED_REASON
