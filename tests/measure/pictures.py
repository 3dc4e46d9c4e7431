"""Sharp sample pictures from scikit-image's bundled data (shipped inside its wheel, no
download) and the known blurs applied to them in the validation."""

from __future__ import annotations

import io

import numpy as np
from scipy import ndimage

from sharpzone.measure.defocus import grey_levels

# Objects and scenes with distinct edges, and fine textures (no people).
OBJECTS = ("coins", "rocket", "coffee", "chelsea", "motorcycle")
TEXTURES = ("brick", "gravel", "grass")


def sample(name: str) -> np.ndarray:
    """A sharp sample picture as float grey levels 0..255."""
    from skimage import data

    picture = data.stereo_motorcycle()[0] if name == "motorcycle" else getattr(data, name)()
    return grey_levels(picture).astype(np.float64)


def disk_kernel(diameter_px: float, supersample: int = 16) -> np.ndarray:
    """A uniform disk of ``diameter_px``, integrated over each pixel (the defocus blur of
    geometric optics)."""
    radius = diameter_px / 2
    half = int(np.ceil(radius)) + 1
    size = 2 * half + 1
    centres = (np.arange(size * supersample) + 0.5) / supersample - (half + 0.5)
    y, x = np.meshgrid(centres, centres, indexing="ij")
    inside = (x * x + y * y <= radius * radius).astype(float)
    kernel = inside.reshape(size, supersample, size, supersample).sum(axis=(1, 3))
    return kernel / kernel.sum()


def disk_blur(picture: np.ndarray, diameter_px: float) -> np.ndarray:
    return ndimage.convolve(picture, disk_kernel(diameter_px), mode="reflect")


def motion_blur(picture: np.ndarray, length_px: int) -> np.ndarray:
    """A straight horizontal shake of ``length_px``."""
    kernel = np.ones((1, length_px)) / length_px
    return ndimage.convolve(picture, kernel, mode="reflect")


def camera_like(picture: np.ndarray, noise_levels: float, jpeg_quality: int, seed: int) -> np.ndarray:
    """``picture`` with Gaussian noise (standard deviation in grey levels) and JPEG-compressed
    by Pillow at ``jpeg_quality``, as a camera's preview would be."""
    from PIL import Image

    rng = np.random.default_rng(seed)
    noisy = np.clip(picture + rng.normal(0.0, noise_levels, picture.shape), 0, 255).astype(np.uint8)
    buffer = io.BytesIO()
    Image.fromarray(noisy).save(buffer, "JPEG", quality=jpeg_quality)
    return np.asarray(Image.open(io.BytesIO(buffer.getvalue())).convert("L"), dtype=np.float64)
