"""``ingest.preview.load_preview``: the picture the blur measure and the report page see."""

from __future__ import annotations

import io

import piexif
from PIL import Image

from sharpzone.ingest.preview import load_preview


def _jpeg_with_small_thumbnail(size=(2000, 1500)) -> bytes:
    thumbnail = io.BytesIO()
    Image.new("RGB", (160, 120), (10, 20, 30)).save(thumbnail, "JPEG")
    # A camera-like EXIF block with the 160 × 120 thumbnail cameras write (EXIF IFD1).
    exif = piexif.dump({"0th": {piexif.ImageIFD.Make: b"Korvath"}, "1st": {}, "thumbnail": thumbnail.getvalue()})
    data = io.BytesIO()
    Image.new("RGB", size, (120, 130, 140)).save(data, "JPEG", exif=exif)
    return data.getvalue()


def test_a_jpeg_with_only_a_small_thumbnail_is_decoded_itself_at_the_size_asked(tmp_path):
    path = tmp_path / "frame.jpg"
    path.write_bytes(_jpeg_with_small_thumbnail())
    preview = load_preview(path, 800)
    # 2000 × 1500 scaled to an 800-pixel long side (Pillow's thumbnail keeps the aspect).
    assert preview.image.size == (800, 600) and preview.source == "the image itself"


def test_a_picture_smaller_than_asked_is_not_enlarged(tmp_path):
    path = tmp_path / "small.jpg"
    path.write_bytes(_jpeg_with_small_thumbnail(size=(640, 480)))
    assert load_preview(path, 800).image.size == (640, 480)
