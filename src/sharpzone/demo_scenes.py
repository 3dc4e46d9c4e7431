"""The demo's invented pictures: procedural scenes with edges (no real images), rendered so
that the blur measurement has something to find.

Each scene is a harbour-like background of boxes, posts and ropes behind a subject in the
middle (a figure in a checked coat). ``sharp`` renders both sharp; ``focus-on-background``
blurs the subject by a disk, as a lens focused behind it would; ``shaken`` smears the whole
frame along a short sweep, as a hand-held camera moving during a slow exposure does.
"""

from __future__ import annotations

import numpy as np

SCENES = ("sharp", "focus-on-background", "shaken")
WIDTH, HEIGHT = 480, 320
# Where the subject stands (fractions of the picture: centre x, y, width, height); the demo
# writes it as EXIF SubjectArea.
SUBJECT = (0.5, 0.5, 0.25, 0.55)
# The subject's blur circle when the focus landed on the background (px of the picture).
MISSED_FOCUS_DISK_PX = 11.0
# The shake: a path of this length in px.
SHAKE_PATH_PX = 16


def render_scene(kind: str, seed: int) -> np.ndarray:
    """An RGB picture (uint8, ``HEIGHT`` × ``WIDTH``) of the scene ``kind``."""
    from scipy.ndimage import convolve

    if kind not in SCENES:
        raise ValueError(f"unknown demo scene {kind!r}: expected one of {', '.join(SCENES)}")
    rng = np.random.default_rng(seed)
    background = _background(rng)
    subject, mask = _subject(rng)
    if kind == "focus-on-background":
        kernel = _disk(MISSED_FOCUS_DISK_PX)
        subject = np.stack([convolve(subject[..., c], kernel, mode="nearest") for c in range(3)], axis=-1)
        mask = convolve(mask, kernel, mode="nearest")
    picture = background * (1 - mask[..., None]) + subject * mask[..., None]
    if kind == "shaken":
        kernel = _shake_path(SHAKE_PATH_PX)
        picture = np.stack([convolve(picture[..., c], kernel, mode="nearest") for c in range(3)], axis=-1)
    return np.clip(picture, 0, 255).astype(np.uint8)


def _background(rng) -> np.ndarray:
    picture = np.empty((HEIGHT, WIDTH, 3))
    sky = np.linspace(0, 1, HEIGHT)[:, None, None]
    picture[:] = (150 + 60 * sky) * np.array([0.75, 0.85, 1.0])
    picture[int(HEIGHT * 0.55):] = np.array([60.0, 80.0, 95.0])  # water
    for _ in range(70):  # boxes, boats and sheds
        w, h = rng.integers(12, 70), rng.integers(8, 50)
        x, y = rng.integers(0, WIDTH - w), rng.integers(int(HEIGHT * 0.2), HEIGHT - h)
        picture[y:y + h, x:x + w] = rng.uniform(20, 235, 3)
    for _ in range(16):  # posts
        x, w = rng.integers(0, WIDTH - 14), rng.integers(8, 14)
        top = rng.integers(0, HEIGHT // 2)
        picture[top:, x:x + w] = rng.uniform(10, 90)
    for _ in range(6):  # ropes
        y = rng.integers(10, HEIGHT - 10)
        picture[y:y + 8] = rng.uniform(180, 250)
    return picture


def _subject(rng) -> tuple[np.ndarray, np.ndarray]:
    cx, cy, w, h = SUBJECT
    yy, xx = np.mgrid[0:HEIGHT, 0:WIDTH]
    left, right = (cx - w / 2) * WIDTH, (cx + w / 2) * WIDTH
    top, bottom = (cy - h / 2) * HEIGHT, (cy + h / 2) * HEIGHT
    head_r = 0.35 * w * WIDTH / 2
    head = (xx - cx * WIDTH) ** 2 + (yy - top - head_r) ** 2 <= head_r ** 2
    coat = (xx >= left) & (xx < right) & (yy >= top + 2 * head_r) & (yy < bottom)
    mask = (head | coat).astype(float)
    checks = ((xx // 16 + yy // 16) % 2).astype(float)
    colour_a, colour_b = rng.uniform(20, 80, 3), rng.uniform(170, 240, 3)
    subject = colour_a * checks[..., None] + colour_b * (1 - checks[..., None])
    subject[head] = np.array([205.0, 160.0, 130.0])
    eyes = head & (np.abs(yy - (top + head_r * 0.9)) < 3) & (np.abs(np.abs(xx - cx * WIDTH) - head_r * 0.4) < 4)
    subject[eyes] = 25.0
    return subject, mask


def _disk(diameter_px: float) -> np.ndarray:
    radius = diameter_px / 2
    half = int(np.ceil(radius))
    yy, xx = np.mgrid[-half:half + 1, -half:half + 1]
    kernel = (xx * xx + yy * yy <= radius * radius).astype(float)
    return kernel / kernel.sum()


def _shake_path(length_px: int) -> np.ndarray:
    """A straight sweep at 35° to the horizontal, so both upright and level edges smear."""
    angle = np.radians(35.0)
    steps = np.linspace(0.0, length_px, 8 * length_px)
    xs, ys = steps * np.cos(angle), steps * np.sin(angle)
    size = int(np.ceil(max(xs.max(), ys.max()))) + 1
    kernel = np.zeros((size, size))
    np.add.at(kernel, (np.round(ys).astype(int), np.round(xs).astype(int)), 1.0)
    return kernel / kernel.sum()
