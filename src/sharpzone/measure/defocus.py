"""Defocus blur of a picture from its edges: pure functions over numpy arrays, no I/O.

Method: the edge re-blur gradient ratio of S. Zhuo and T. Sim, "Defocus map estimation from
a single image", Pattern Recognition 44 (2011) 1852–1858. An edge blurred by a Gaussian of
standard deviation σ is re-blurred with a known Gaussian σ0; the ratio R of the gradient
magnitudes at the edge, before and after, is √(σ² + σ0²)/σ, so σ = σ0/√(R² − 1). Each edge
gives one estimate; a region's blur is a robust
upper percentile over its strongest edges.

Gaussian σ and disk diameter. Defocus through a lens is a uniform disk (the blur circle of
geometric optics, the same disk the circle of confusion bounds), not a Gaussian. A disk of
diameter d has a per-axis standard deviation of d/4, but the gradient ratio responds to the
shape of the edge's peak, not to its variance: on an ideal edge a disk of diameter d reads as
σ ≈ d/2 for d much larger than σ0, and as less than d/4 near one pixel. So σ is converted to a
diameter with the disk's own edge model: the ratio this implementation gives on an ideal
straight edge blurred by a disk of each diameter (a table made once, ``disk_diameter_px``).

Our choices beyond the paper: the gradient magnitude is the larger of the two one-sided
differences on each axis (a sharp step keeps its full height, so blurs of 2 px still give
R well above 1); edges are local maxima of the central-difference gradient along its direction
(no separate edge detector); the picture's noise level sets an edge threshold and its power
is taken out of both gradients (noise would otherwise pass for sharpness); edges must keep a
gradient through the re-blur; only edges at least half as strong as the region's strongest
are used, and a region's blur is the 80th percentile of their readings; blur is reported as
a disk diameter in pixels of the analysed picture.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

METHOD = "zhuo-sim-2011-edge-reblur"
METHOD_VERSION = 1
# The re-blur σ0 in pixels (the paper re-blurs with a σ0 of about one pixel; 1.5 gave the
# smallest error over 2–12 px disks on the validation images, see docs/measured-blur.md).
REBLUR_SIGMA_PX = 1.5
# Edges kept in a region: at least this share of the region's strongest edge.
STRONG_EDGE_SHARE = 0.5
# A region's blur is this percentile of its strong edges' estimates, not the median: a
# neighbouring edge can only lower an edge's estimate (it steepens the re-blurred copy's
# loss), so the estimates of natural pictures are biased low and the upper part of their
# spread is the better figure (chosen on the validation images, see docs/measured-blur.md).
BLUR_PERCENTILE = 80
# An edge must step by at least this many grey levels (of 255) per pixel to count: below
# it, sensor noise and JPEG blocks dominate.
MIN_EDGE_STEP = 6.0
# ... and by at least this many times the picture's noise level, and keep at least this
# gradient (grey levels per pixel) after the re-blur.
MIN_REBLURRED_STEP = 3.0
NOISE_STEPS = 6.0
# At most about this many candidate edge pixels are examined in one picture (a sample of
# them beyond): a 24-region grid needs a few thousand per region at most.
MAX_EDGE_CANDIDATES = 100_000
# A region needs this many edge pixels to be measured; fewer is "not measurable".
MIN_EDGES = 24
# The grid over the picture (cells along the long and the short side).
GRID_LONG, GRID_SHORT = 6, 4
# An AF box is small; the region measured around a focus point is at least this share of
# the picture's long side on each side.
MIN_FOCUS_REGION = 0.16
_BORDER = 4
_MAX_DIAMETER_PX = 40.0


@dataclass(frozen=True)
class EdgeBlur:
    """Every measured edge pixel of a picture: row, column, strength (grey levels per pixel)
    and blur as a disk diameter in pixels (``inf`` where the edge showed no blur limit)."""

    rows: np.ndarray
    cols: np.ndarray
    strength: np.ndarray
    diameter_px: np.ndarray
    height: int
    width: int


@dataclass(frozen=True)
class BlurMeasurement:
    """The blur of one picture (disk diameters in pixels of the analysed picture, whose long
    side is ``analysed_long_px``); positions are region centres as fractions 0..1 from the top
    left. ``None`` where a region had too few edges. ``grid`` holds the region blurs row by
    row (top to bottom)."""

    analysed_long_px: int
    focus_blur_px: float | None
    focus_edges: int | None
    focus_x: float | None
    focus_y: float | None
    best_blur_px: float | None
    best_x: float | None
    best_y: float | None
    median_blur_px: float | None
    regions_measured: int
    regions_total: int
    grid: tuple[tuple[float | None, ...], ...]


def grey_levels(rgb: np.ndarray) -> np.ndarray:
    """Luma (ITU-R BT.601 weights) of an RGB array as float32 grey levels 0..255."""
    rgb = np.asarray(rgb)
    if rgb.ndim == 2:
        return rgb.astype(np.float32)
    return (rgb[..., 0] * np.float32(0.299) + rgb[..., 1] * np.float32(0.587)
            + rgb[..., 2] * np.float32(0.114)).astype(np.float32)


def _gradient_squared(image: np.ndarray) -> np.ndarray:
    """Squared gradient magnitude from the larger one-sided difference on each axis."""
    out = np.zeros_like(image)
    step = np.abs(np.diff(image, axis=1))
    larger = np.maximum(step[:, 1:], step[:, :-1])
    out[:, 1:-1] = larger * larger
    step = np.abs(np.diff(image, axis=0))
    larger = np.maximum(step[1:], step[:-1])
    out[1:-1] += larger * larger
    return out


def _candidates(image: np.ndarray, step: float) -> np.ndarray:
    """Flat indices (away from the border) of every pixel whose ``_gradient_squared`` may
    reach ``step``²: one of its one-sided differences is at least ``step``/√2 (a superset,
    found with a few cheap passes instead of the whole gradient)."""
    least = np.float32(step / np.sqrt(2.0))
    across = np.abs(np.diff(image, axis=1)) >= least
    down = np.abs(np.diff(image, axis=0)) >= least
    mask = np.zeros(image.shape, dtype=bool)
    mask[:, 1:] |= across
    mask[:, :-1] |= across
    mask[1:] |= down
    mask[:-1] |= down
    mask[:_BORDER] = mask[-_BORDER:] = False
    mask[:, :_BORDER] = mask[:, -_BORDER:] = False
    return np.flatnonzero(mask)


def _edge_pixels(image: np.ndarray, index: np.ndarray) -> np.ndarray:
    """Those of the flat ``index`` that are local maxima of the central-difference gradient
    along its direction."""
    flat = image.ravel()
    width = image.shape[1]

    def central(at: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        return flat[at + 1] - flat[at - 1], flat[at + width] - flat[at - width]

    gx, gy = central(index)
    ax, ay = np.abs(gx), np.abs(gy)
    # Direction in four bins (0°, 45°, 90°, 135°): step to the neighbour across the edge.
    horizontal = ay < np.float32(0.4142) * ax  # tan 22.5°
    vertical = ay > np.float32(2.4142) * ax  # tan 67.5°
    step = np.where(horizontal, 1, np.where(vertical, width, np.where(gx * gy > 0, width + 1, width - 1)))
    centre = gx * gx + gy * gy
    ahead_x, ahead_y = central(index + step)
    behind_x, behind_y = central(index - step)
    keep = (centre >= ahead_x * ahead_x + ahead_y * ahead_y) & (centre > behind_x * behind_x + behind_y * behind_y)
    return index[keep]


def _gradient_squared_at(image: np.ndarray, index: np.ndarray) -> np.ndarray:
    """``_gradient_squared`` at the flat ``index`` only (away from the border)."""
    flat = image.ravel()
    width = image.shape[1]
    here = flat[index]
    dx = np.maximum(np.abs(flat[index + 1] - here), np.abs(here - flat[index - 1]))
    dy = np.maximum(np.abs(flat[index + width] - here), np.abs(here - flat[index - width]))
    return dx * dx + dy * dy


def edge_sigmas(grey: np.ndarray, reblur_sigma_px: float = REBLUR_SIGMA_PX) -> EdgeBlur:
    """Zhuo–Sim's Gaussian σ (px) at every edge pixel of ``grey``, before the conversion to a
    disk diameter (``EdgeBlur.diameter_px`` holds σ here)."""
    from scipy.ndimage import gaussian_filter

    grey = np.ascontiguousarray(grey, dtype=np.float32)
    noise = noise_level(grey)
    sharp_noise, reblurred_noise = _noise_power(reblur_sigma_px)
    step = max(MIN_EDGE_STEP, NOISE_STEPS * noise)
    index = _candidates(grey, step)
    sharp_at = _gradient_squared_at(grey, index)
    index = index[sharp_at >= step * step]
    if len(index) > MAX_EDGE_CANDIDATES:
        # A busy picture has far more edge pixels than its region statistics need: keep a
        # fixed random share (not a stride, which could skip whole columns).
        keep = np.random.default_rng(len(index)).random(len(index)) < MAX_EDGE_CANDIDATES / len(index)
        index = index[keep]
    index = _edge_pixels(grey, index)
    sharp_at = _gradient_squared_at(grey, index).astype(np.float64)
    reblurred_at = _gradient_squared_at(gaussian_filter(grey, reblur_sigma_px, mode="nearest", truncate=3.0),
                                        index).astype(np.float64)
    # A real edge keeps a gradient through the re-blur; noise mostly does not.
    keep_reblurred = reblurred_at >= MIN_REBLURRED_STEP * MIN_REBLURRED_STEP
    index, reblurred_at = index[keep_reblurred], reblurred_at[keep_reblurred]
    rows, cols = np.divmod(index, grey.shape[1])
    sharp_at = sharp_at[keep_reblurred]
    # Noise adds its own power to both gradients (far more to the sharp one): take out what
    # it adds on average, so noise does not pass for sharpness.
    signal = sharp_at - sharp_noise * noise * noise
    ratio_squared = signal / np.maximum(reblurred_at - reblurred_noise * noise * noise, 1e-6)
    # Edges are ranked by their re-blurred gradient, which noise hardly touches.
    strength = np.sqrt(reblurred_at)
    with np.errstate(invalid="ignore", divide="ignore"):
        sigma = np.where(ratio_squared > 1.0, reblur_sigma_px / np.sqrt(ratio_squared - 1.0), np.inf)
    return EdgeBlur(rows, cols, strength, sigma.astype(np.float64), grey.shape[0], grey.shape[1])


def noise_level(grey: np.ndarray) -> float:
    """The standard deviation of the picture's noise in grey levels, from the median absolute
    finest-scale diagonal (Haar HH) coefficient / 0.6745 (D. L. Donoho, "De-noising by
    soft-thresholding", IEEE Trans. Inf. Theory 41 (1995) 613–627); texture raises it a little."""
    height, width = (grey.shape[0] // 2) * 2, (grey.shape[1] // 2) * 2
    g = grey[:height, :width]
    diagonal = (g[0::2, 0::2] - g[0::2, 1::2] - g[1::2, 0::2] + g[1::2, 1::2]) / 2
    # A quarter of the coefficients (every other block each way) gives the median to well
    # under a percent on a preview, at a quarter of the cost.
    sample = np.abs(diagonal[::2, ::2]).ravel() if diagonal.size > 40_000 else np.abs(diagonal).ravel()
    return float(np.median(sample) / 0.6745)


@functools.cache
def _noise_power(reblur_sigma_px: float) -> tuple[float, float]:
    """The mean squared gradient (sharp, re-blurred) that unit white noise gives."""
    from scipy.ndimage import gaussian_filter

    noise = np.random.default_rng(20110601).normal(0.0, 1.0, (256, 256)).astype(np.float32)
    inner = (slice(8, -8), slice(8, -8))
    sharp = float(_gradient_squared(noise)[inner].mean())
    reblurred = float(_gradient_squared(gaussian_filter(noise, reblur_sigma_px, mode="nearest", truncate=3.0))[inner].mean())
    return sharp, reblurred


@functools.cache
def _disk_table(reblur_sigma_px: float) -> tuple[np.ndarray, np.ndarray]:
    """(σ read, disk diameter) on an ideal straight edge blurred by disks of 0.25–40 px."""
    diameters = np.arange(0.25, _MAX_DIAMETER_PX + 0.01, 0.25)
    sigmas = []
    for diameter in diameters:
        edge = np.repeat(_disk_edge_profile(diameter)[None, :], 2 * _BORDER + 4, axis=0)
        measured = edge_sigmas(edge, reblur_sigma_px)
        centre = measured.cols == edge.shape[1] // 2
        centre = centre if centre.any() else np.ones_like(centre)
        sigmas.append(float(np.median(measured.diameter_px[centre])))
    # Below about two pixels the ratio saturates: keep the table monotonic for inversion.
    return np.maximum.accumulate(np.asarray(sigmas)), diameters


def _disk_edge_profile(diameter_px: float, length: int = 200, supersample: int = 32) -> np.ndarray:
    """A step of 255 grey levels blurred by a uniform disk of ``diameter_px``, sampled by
    pixel area: the disk's line spread function is a semicircle, 2√(r² − x²)/(π r²)."""
    radius = diameter_px / 2
    fine = (np.arange(length * supersample) + 0.5) / supersample - length / 2
    # The step convolved with the semicircle: the area of the disk left of x, normalised.
    u = np.clip(fine / radius, -1.0, 1.0)
    covered = 0.5 + (u * np.sqrt(1 - u * u) + np.arcsin(u)) / np.pi
    return (255.0 * covered).reshape(length, supersample).mean(axis=1).astype(np.float32)


def disk_diameter_px(sigma_px: np.ndarray, reblur_sigma_px: float = REBLUR_SIGMA_PX) -> np.ndarray:
    """The disk diameter whose ideal edge gives Zhuo–Sim's ``sigma_px`` (``inf`` stays inf)."""
    table_sigma, table_diameter = _disk_table(reblur_sigma_px)
    sigma_px = np.asarray(sigma_px, dtype=float)
    diameters = np.interp(sigma_px, table_sigma, table_diameter, right=np.inf)
    return np.where(np.isfinite(sigma_px), diameters, np.inf)


def edge_blur(grey: np.ndarray, reblur_sigma_px: float = REBLUR_SIGMA_PX) -> EdgeBlur:
    """Every edge pixel of ``grey`` (2-D grey levels 0..255) with its blur as a disk diameter."""
    grey = np.asarray(grey)
    if grey.ndim != 2 or min(grey.shape) < 2 * _BORDER + 3:
        raise ValueError(f"expected a 2-D picture of at least {2 * _BORDER + 3} px a side, got {grey.shape}")
    sigmas = edge_sigmas(grey, reblur_sigma_px)
    return EdgeBlur(sigmas.rows, sigmas.cols, sigmas.strength, disk_diameter_px(sigmas.diameter_px, reblur_sigma_px),
                    sigmas.height, sigmas.width)


def region_blur(edges: EdgeBlur, top: int, bottom: int, left: int, right: int) -> tuple[float | None, int]:
    """The blur of the region rows ``top:bottom``, columns ``left:right`` (disk diameter in
    px, the 80th percentile over its strong edges; ``None`` with too few edges) and its edge count."""
    inside = (edges.rows >= top) & (edges.rows < bottom) & (edges.cols >= left) & (edges.cols < right)
    return _robust_blur(edges.strength[inside], edges.diameter_px[inside])


def _robust_blur(strength: np.ndarray, diameter: np.ndarray) -> tuple[float | None, int]:
    if len(strength) < MIN_EDGES:
        return None, int(len(strength))
    strong = strength >= STRONG_EDGE_SHARE * np.percentile(strength, 99)
    if strong.sum() < MIN_EDGES:
        strong = strength >= np.sort(strength)[-MIN_EDGES]
    value = float(np.percentile(diameter[strong], BLUR_PERCENTILE))
    return min(value, _MAX_DIAMETER_PX), int(strong.sum())


def measure_blur(grey: np.ndarray, focus_point: tuple[float, float, float, float] | None = None,
                 reblur_sigma_px: float = REBLUR_SIGMA_PX) -> BlurMeasurement:
    """The blur of a picture: at the focus point (``(cx, cy, w, h)`` as fractions of the
    picture from the top left, or ``None``), over a grid of regions, the sharpest region and
    the median of the regions; disk diameters in pixels of ``grey``."""
    edges = edge_blur(grey, reblur_sigma_px)
    height, width = edges.height, edges.width
    across, down = (GRID_LONG, GRID_SHORT) if width >= height else (GRID_SHORT, GRID_LONG)
    row_edges = np.linspace(0, height, down + 1).round().astype(int)
    col_edges = np.linspace(0, width, across + 1).round().astype(int)
    # One pass: each edge pixel's grid cell, then the robust statistic per cell.
    cell_row = np.searchsorted(row_edges, edges.rows, side="right") - 1
    cell_col = np.searchsorted(col_edges, edges.cols, side="right") - 1
    cell = (cell_row * across + cell_col).astype(np.int16)
    order = np.argsort(cell, kind="stable")  # a radix sort for 16-bit integers
    bounds = np.searchsorted(cell[order], np.arange(down * across + 1))
    grid: list[list[float | None]] = []
    best = (None, None, None)
    measured: list[float] = []
    for r in range(down):
        line = []
        for c in range(across):
            chosen = order[bounds[r * across + c]:bounds[r * across + c + 1]]
            value, _count = _robust_blur(edges.strength[chosen], edges.diameter_px[chosen])
            line.append(None if value is None else round(value, 2))
            if value is not None:
                measured.append(value)
                if best[0] is None or value < best[0]:
                    best = (value, (col_edges[c] + col_edges[c + 1]) / 2 / width,
                            (row_edges[r] + row_edges[r + 1]) / 2 / height)
        grid.append(line)
    focus_blur = focus_edges = focus_x = focus_y = None
    if focus_point is not None:
        cx, cy, w, h = (float(v) for v in focus_point)
        side = MIN_FOCUS_REGION * max(width, height)
        half_w = max(w * width, side) / 2
        half_h = max(h * height, side) / 2
        top, bottom = int(max(0, cy * height - half_h)), int(min(height, cy * height + half_h))
        left, right = int(max(0, cx * width - half_w)), int(min(width, cx * width + half_w))
        focus_blur, focus_edges = region_blur(edges, top, bottom, left, right)
        focus_x, focus_y = min(max(cx, 0.0), 1.0), min(max(cy, 0.0), 1.0)
    return BlurMeasurement(
        analysed_long_px=int(max(width, height)), focus_blur_px=focus_blur, focus_edges=focus_edges,
        focus_x=focus_x, focus_y=focus_y, best_blur_px=best[0], best_x=best[1], best_y=best[2],
        median_blur_px=float(np.median(measured)) if measured else None,
        regions_measured=len(measured), regions_total=down * across,
        grid=tuple(tuple(line) for line in grid),
    )
