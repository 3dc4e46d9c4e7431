"""A small shoot for the report-page tests: real JPEGs (Pillow pixels, piexif EXIF) on a
card, ingested into a fresh catalogue through the real pipeline.

The settings are those of ``tests/cli/test_frames_commands.py`` (50 mm on 36 × 24 mm, CoC
diagonal / 1500, required 2.5–4 m): f/8 at 3 m holds it, f/2.8 there does not, f/8 at
2.3 m misses by focus. Makers and lenses are invented; two names carry markup on purpose.
"""

from __future__ import annotations

import io
import os
from dataclasses import dataclass
from pathlib import Path

import piexif
from PIL import Image, ImageDraw

from tests.ingest.images import exif_block

HOSTILE_NAME = '<img src=x onerror=alert(1)> & "quoted".jpg'
HOSTILE_LENS = 'Zeno "50" <i>1.4</i>'
LENS_A_EXIF = "Altamira Optical 50mm F1.8"
LENS_B_EXIF = "Zeno Optics 50mm <script>"

# file: (body model, lens EXIF name, f-number, distance in m or None, orientation)
FRAMES = {
    "held-a.jpg": ("KV-7", LENS_A_EXIF, 8.0, 3.0, 1),
    "held-b.jpg": ("KV-9", LENS_B_EXIF, 11.0, 3.0, 6),
    "wide-a.jpg": ("KV-7", LENS_A_EXIF, 2.8, 3.0, 1),
    "wide-b.jpg": ("KV-9", LENS_B_EXIF, 2.8, 3.0, 1),
    "misfocused.jpg": ("KV-7", LENS_A_EXIF, 8.0, 2.3, 1),
    "unknown.jpg": ("KV-9", LENS_A_EXIF, 8.0, None, 1),
    HOSTILE_NAME: ("KV-7", LENS_B_EXIF, 8.0, 3.0, 1),
    "gone.jpg": ("KV-7", LENS_A_EXIF, 8.0, 3.0, 1),
}
# What ``check`` says of them (the planted verdicts above).
EXPECTED = {"held-a.jpg": [], "held-b.jpg": [], "wide-a.jpg": ["too-wide-open"], "wide-b.jpg": ["too-wide-open"],
            "misfocused.jpg": ["focus-misplaced"], "unknown.jpg": ["distance-unknown"], HOSTILE_NAME: [],
            "gone.jpg": []}
SHOOT = "Quay portraits"


@dataclass
class PageShoot:
    catalog_url: str
    card: Path
    paths: dict[str, str]  # file name → absolute path as catalogued


def _picture(seed: int, size=(640, 427)) -> Image.Image:
    image = Image.new("RGB", size, (70 + seed * 23 % 120, 90 + seed * 37 % 100, 120))
    draw = ImageDraw.Draw(image)
    for step in range(0, size[0], 40):
        draw.line((step, 0, size[0] - step, size[1]), fill=(230, 220, 200), width=3)
    draw.ellipse((200, 100, 440, 330), outline=(20, 20, 20), width=6)
    return image


def frame_jpeg(seed: int, model: str, lens: str, f_number: float, distance_m: float | None,
               orientation: int = 1) -> bytes:
    exif = exif_block(
        f_number=(int(round(f_number * 10)), 10), focal_length=(50, 1),
        subject_distance=None if distance_m is None else (int(round(distance_m * 100)), 100),
        lens_model=lens.encode(), lens_specification=((50, 1), (50, 1), (18, 10), (18, 10)),
        extra_0th={piexif.ImageIFD.Model: model.encode(), piexif.ImageIFD.Orientation: orientation},
    )
    buffer = io.BytesIO()
    _picture(seed).save(buffer, "JPEG", exif=exif, quality=85)
    return buffer.getvalue()


def make_page_shoot(tmp_path: Path) -> PageShoot:
    """Catalogue, card and ingest; ``gone.jpg`` is deleted afterwards (a frame whose file went)."""
    from sharpzone.catalog.engine import open_catalog, session_scope
    from sharpzone.catalog.location import sqlite_url
    from sharpzone.catalog.service import add_body, add_lens, add_shoot
    from sharpzone.ingest.pipeline import ingest_paths

    url = sqlite_url(tmp_path / "catalog.sqlite")
    card = tmp_path / "card"
    card.mkdir()
    with session_scope(url) as session:
        for model in ("KV-7", "KV-9"):
            add_body(session, f"Korvath {model}", exif_make="Korvath", exif_model=model, format_name="36x24",
                     pixel_width=6000, pixel_height=4000)
        add_lens(session, "Altamira 50/1.8", focal_min_mm=50, max_aperture_wide=1.8, min_aperture=22,
                 exif_names=[LENS_A_EXIF])
        add_lens(session, HOSTILE_LENS, focal_min_mm=50, max_aperture_wide=1.8, min_aperture=22,
                 exif_names=[LENS_B_EXIF])
        add_shoot(session, SHOOT, root_folder=card, near_mm=2500, far_mm=4000)
    for seed, (name, (model, lens, f_number, distance, orientation)) in enumerate(FRAMES.items()):
        (card / name).write_bytes(frame_jpeg(seed, model, lens, f_number, distance, orientation))
    with open_catalog(url) as catalog:
        summary = ingest_paths(catalog, [card], shoot=SHOOT, jobs=1)
    assert summary.added == len(FRAMES) and not summary.failed, summary
    os.remove(card / "gone.jpg")
    return PageShoot(url, card, {name: str((card / name).resolve()) for name in FRAMES})
