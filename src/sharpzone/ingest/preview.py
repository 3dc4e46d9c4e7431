"""A frame's picture at reduced size, for measuring blur and for thumbnails: read-only.

Raw files and most camera JPEGs carry embedded previews; the largest one that is at least
the wanted size is decoded (exiv2 finds them in every container it reads). A JPEG without a
usable preview is decoded itself in Pillow's draft mode, which lets the JPEG decoder skip
detail it would throw away (a 1/2, 1/4 or 1/8 scale), so a 24-megapixel file decodes in a
fraction of the full time. Nothing is ever written beside the user's files.
"""

from __future__ import annotations

import io
import os
from dataclasses import dataclass

from sharpzone.ingest.records import FileReadError, os_error_reason

# Pillow refuses images above this many pixels (a decompression bomb is damage, not a frame).
MAX_DECODED_PIXELS = 120_000_000
# Previews bigger than this many bytes are not metadata but damage.
_MAX_PREVIEW_BYTES = 64 << 20
_DIRECT_EXTENSIONS = frozenset({".jpg", ".jpeg", ".jpe", ".png", ".tif", ".tiff", ".webp"})
# The kinds whose decoder can skip detail (draft mode), so decoding the file itself is cheap.
_DRAFT_EXTENSIONS = frozenset({".jpg", ".jpeg", ".jpe"})


@dataclass(frozen=True)
class Preview:
    """A decoded picture of a frame (a Pillow image in RGB), scaled so its long side is at
    most what was asked for, and where it came from ("embedded preview WxH" or "the image
    itself")."""

    image: object  # PIL.Image.Image, not imported at module load
    source: str

    @property
    def long_side_px(self) -> int:
        return max(self.image.size)


def load_preview(path: str | os.PathLike, long_side_px: int) -> Preview:
    """The frame at ``path`` decoded with its long side at most ``long_side_px`` pixels.

    Tries the embedded previews first (the smallest that is at least ``long_side_px`` on its
    long side, else the largest), then the file itself for the kinds Pillow decodes. A JPEG
    whose only previews are smaller than asked (cameras write a 160 × 120 thumbnail) is
    decoded itself in draft mode, which gives the sharper picture at little cost.
    Raises ``FileReadError`` with a short reason when neither gives a picture.
    """
    from PIL import Image

    Image.MAX_IMAGE_PIXELS = MAX_DECODED_PIXELS
    path = os.fspath(path)
    data, source, preview_long = _embedded_preview(path, long_side_px)
    extension = os.path.splitext(path)[1].lower()
    if data is not None and preview_long < long_side_px * 0.9 and extension in _DRAFT_EXTENSIONS:
        data = None  # too small a preview: the JPEG itself, decoded at reduced size
    try:
        if data is not None:
            image = Image.open(io.BytesIO(data))
        elif extension in _DIRECT_EXTENSIONS:
            image = Image.open(path)
            source = "the image itself"
        else:
            raise FileReadError(path, "no embedded preview to measure or show")
        if image.format == "JPEG":
            image.draft("RGB", (long_side_px, long_side_px))
        image = image.convert("RGB")
        image.thumbnail((long_side_px, long_side_px), Image.Resampling.LANCZOS)
    except FileReadError:
        raise
    except OSError as err:
        reason = os_error_reason(err) if getattr(err, "errno", None) else f"cannot decode the picture ({err})"
        raise FileReadError(path, reason) from None
    except (Image.DecompressionBombError, ValueError, SyntaxError) as err:
        raise FileReadError(path, f"cannot decode the picture ({type(err).__name__})") from None
    return Preview(image=image, source=source)


def _embedded_preview(path: str, long_side_px: int) -> tuple[bytes | None, str, int]:
    """The bytes of the embedded preview that best fits, where it came from and its long
    side in pixels, or (None, '', 0) when there is none."""
    try:
        import exiv2
    except ImportError:  # the metadata reader is optional for this step: fall back to Pillow
        return None, "", 0
    from sharpzone.ingest.exiv2_quiet import silence_exiv2

    silence_exiv2()
    try:
        image = exiv2.ImageFactory.open(path)
        image.readMetadata()
        manager = exiv2.PreviewManager(image)
        candidates = [p for p in manager.getPreviewProperties() if 0 < p.size_ <= _MAX_PREVIEW_BYTES]
        if not candidates:
            return None, "", 0
        big_enough = [p for p in candidates if max(p.width_, p.height_) >= long_side_px]
        chosen = min(big_enough, key=lambda p: p.size_) if big_enough else max(candidates, key=lambda p: p.size_)
        preview = manager.getPreviewImage(chosen)
        # A view of the preview object's own bytes, copied out while it is alive.
        return (bytes(preview.data()), f"embedded preview {chosen.width_}×{chosen.height_}",
                max(chosen.width_, chosen.height_))
    except exiv2.Exiv2Error:
        return None, "", 0
