"""Defocus blur of a picture from its edges: pure functions over numpy arrays, no I/O.

Method: the edge re-blur gradient ratio of S. Zhuo and T. Sim, "Defocus map estimation from
a single image", Pattern Recognition 44 (2011) 1852–1858. An edge blurred by a Gaussian of
standard deviation σ is re-blurred with a known Gaussian σ0; the ratio R of the gradient
magnitudes at the edge, before and after, is √(σ² + σ0²)/σ, so σ = σ0/√(R² − 1). Each edge
gives one estimate; a region's blur is a robust percentile over its strongest edges.

Gaussian σ and disk diameter. Defocus through a lens is a uniform disk (the blur circle of
geometric optics, the same disk the circle of confusion bounds), not a Gaussian. The disk's
second moment (per-axis standard deviation d/4) is not what the ratio measures: it responds
to the curvature of the edge's gradient peak. A disk's line spread function is a semicircle
c√(1 − x²/r²) ≈ c(1 − x²/2r²) near its top, which a Gaussian σ0 ≪ r lowers by the factor
1 − σ0²/2r²; so R² − 1 ≈ σ0²/r² and σ → r = d/2 for large disks (our derivation), and less
than d/4 near one pixel, where the pixel grid dominates. σ is therefore converted to a
diameter with the disk's own edge model: what this implementation reads on an ideal straight
edge blurred by a disk of each diameter (``disk_diameter_px``, a table made once, pooled over
four sub-pixel positions of the edge). On the sharp-edged validation silhouette a Gaussian σ
then reads as a disk of about 2√2 σ, the spread-parameter equivalence σ = r/√2 of the
depth-from-defocus literature (M. Subbarao, ICCV 1988; from memory).

Range. The ratio's sensitivity falls as σ outgrows σ0 (an error in R is multiplied by
1 + σ²/σ0² in σ), and neighbouring edges start to overlap the re-blur: with σ0 = 1.5 px,
12-px disks read up to a quarter low. So each picture is also measured reduced by half (2 × 2
pixel means, pixel-area sampling again, so the same table holds), where the same σ0 reaches
twice as far: a region whose own reading is above ``COARSE_FROM_PX`` takes the half-size
reading, wholly from ``COARSE_FULL_PX``, blended linearly between.

Our choices beyond the paper: the gradient magnitude is the larger of the two one-sided
differences on each axis (a sharp step keeps its full height, so blurs of 2 px still give
R well above 1); edges are local maxima of the central-difference gradient along its direction
(no separate edge detector); the picture's noise level sets an edge threshold and its power
is taken out of both gradients (noise would otherwise pass for sharpness); edges must keep a
gradient through the re-blur; only edges at least half as strong as the region's strongest
are used, and a region's blur is the ``BLUR_PERCENTILE`` of their readings; blur is reported
as a disk diameter in pixels of the analysed picture.

Speed (a 1,600-px preview in about 25 ms of one core): the re-blur is computed only at the
edge pixels, from each one's own small patch, not over the whole picture; whole-picture passes
go a strip of rows at a time; a busy large picture is sampled (``MAX_EDGE_CANDIDATES``).
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

# The estimator's public functions: ``measure_blur`` is what the service runs; the others
# give its steps alone (the σ of every edge pixel, their disk diameters, one region's figure)
# for anyone who wants to study a picture's blur map.
__all__ = ["BlurMeasurement", "EdgeBlur", "disk_diameter_px", "edge_blur", "edge_sigmas", "grey_levels",
           "measure_blur", "noise_level", "region_blur"]

METHOD = "zhuo-sim-2011-edge-reblur"
# 2: large blurs read again at half size, the disk table pooled over sub-pixel positions,
# the 63rd percentile (1 read 2–12 px disks within 25 %, Gaussian blur up to 31 % high).
METHOD_VERSION = 2
# The re-blur σ0 in pixels (the paper re-blurs with a σ0 of about one pixel; 1.5 gave the
# smallest error over 2–12 px disks on the validation images, see docs/measured-blur.md).
REBLUR_SIGMA_PX = 1.5
# Edges kept in a region: at least this share of the region's strongest edge.
STRONG_EDGE_SHARE = 0.5
# A region's blur is this percentile of its strong edges' estimates. Neighbouring structure
# biases single estimates both ways: an opposite edge within a disk's reach lowers them, the
# long tails of a Gaussian-like blur over parallel structure raise them. With large blurs
# read at half size (``COARSE_FROM_PX``) the low bias is small. On the validation pictures
# (tests/measure/test_validation.py) every percentile from 60 to 65 keeps every 2–12 px disk
# and every Gaussian σ 1–3 px within 20 %: below 60 noisy soft frames start to read sharp,
# above 65 Gaussian blur reads over 20 % high (80, the first version's, read it 31 % high).
BLUR_PERCENTILE = 63
# An edge must step by at least this many grey levels (of 255) per pixel to count: below
# it, sensor noise and JPEG blocks dominate.
MIN_EDGE_STEP = 6.0
# ... and by at least this many times the picture's noise level, and keep at least this
# gradient (grey levels per pixel) after the re-blur.
MIN_REBLURRED_STEP = 3.0
NOISE_STEPS = 6.0
# At most about this many candidate edge pixels are examined in one picture (a sample of
# them beyond): after thinning to the edges' crests that leaves some 600 edge pixels in each
# region of the 24-region grid, a few hundred of them strong, plenty for a percentile.
MAX_EDGE_CANDIDATES = 50_000
# ... in a picture of at least this many pixels (a 1,600-px preview has 1.7 million).
SAMPLE_FROM_PIXELS = 500_000
# A region needs this many edge pixels to be measured; fewer is "not measurable".
MIN_EDGES = 24
# The grid over the picture (cells along the long and the short side).
GRID_LONG, GRID_SHORT = 6, 4
# An AF box is small; the region measured around a focus point is at least this share of
# the picture's long side on each side.
MIN_FOCUS_REGION = 0.16
_BORDER = 4
# A region whose own reading is above this many pixels is read again on the picture reduced
# by half, and wholly from there above the second figure (see ``_two_scale_blur``). Below
# 4 px the half-size picture is near its own floor (a blur of one of its pixels is two of the
# picture's); from 8 px (σ about 4 px) an error in the full-size ratio is multiplied by
# 1 + σ²/σ0² ≈ 8, and 2–12 px disks on the validation pictures read lowest there.
COARSE_FROM_PX, COARSE_FULL_PX = 4.0, 8.0
_MAX_DIAMETER_PX = 40.0
_PATCH_BLOCK = 256
# Whole-picture passes go a strip of this many rows at a time (a strip of a 1,600-px picture
# fits in the processor's cache, which halves their time).
_STRIP_ROWS = 32


@dataclass(frozen=True)
class EdgeBlur:
    """Every measured edge pixel of a picture: row, column, strength (grey levels per pixel
    of the scale it was measured at), blur as a disk diameter in pixels (``inf`` where the
    edge showed no blur limit) and whether it was measured on the picture reduced by half
    (``coarse``; its row, column and diameter are given in the full picture's pixels)."""

    rows: np.ndarray
    cols: np.ndarray
    strength: np.ndarray
    diameter_px: np.ndarray
    height: int
    width: int
    coarse: np.ndarray


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
    grey = np.empty(rgb.shape[:2], dtype=np.float32)
    for top in range(0, rgb.shape[0], _STRIP_ROWS):
        part, out = rgb[top:top + _STRIP_ROWS], grey[top:top + _STRIP_ROWS]
        np.multiply(part[..., 0], np.float32(0.299), out=out, casting="unsafe")
        out += part[..., 1] * np.float32(0.587)
        out += part[..., 2] * np.float32(0.114)
    return grey


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


def _candidates(image: np.ndarray, step: float, border: int, most: int) -> np.ndarray:
    """Flat indices (away from the border) of every pixel whose ``_gradient_squared`` may
    reach ``step``²: one of its one-sided differences is at least ``step``/√2 (a superset,
    found with a few cheap passes instead of the whole gradient); about ``most`` of them
    when there are more."""
    least = np.float32(step / np.sqrt(2.0))
    height, width = image.shape
    mask = np.zeros(image.shape, dtype=bool)
    difference = np.empty((_STRIP_ROWS + 2, width - 1), dtype=np.float32)
    for top in range(0, height, _STRIP_ROWS):
        # Strips that overlap by a row: every difference is seen, each strip's work stays in
        # the processor's cache.
        low, high = max(top - 1, 0), min(top + _STRIP_ROWS + 1, height)
        part, marks = image[low:high], mask[low:high]
        across = np.subtract(part[:, 1:], part[:, :-1], out=difference[:high - low])
        across = np.abs(across, out=across) >= least
        marks[:, 1:] |= across
        marks[:, :-1] |= across
        down = np.abs(part[1:] - part[:-1]) >= least
        marks[1:] |= down
        marks[:-1] |= down
    mask[:border] = mask[-border:] = False
    mask[:, :border] = mask[:, -border:] = False
    found = int(np.count_nonzero(mask))
    if found > most:
        # A busy picture has far more edge pixels than its region statistics need: keep a
        # fixed random share (not a stride, which could skip whole columns).
        mask &= _random_levels(image.shape) < round(_LEVELS * most / found)
    return np.flatnonzero(mask)


_LEVELS = 1 << 16


@functools.lru_cache(maxsize=4)
def _random_levels(shape: tuple[int, int]) -> np.ndarray:
    """A fixed pseudo-random level 0..65535 for each pixel of a picture of ``shape`` (made
    once per size: comparing with it keeps a given share of any set of pixels)."""
    return np.random.default_rng(20110601).integers(0, _LEVELS, size=shape, dtype=np.uint16)


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


def _reblur_kernel(reblur_sigma_px: float) -> np.ndarray:
    """The sampled Gaussian of σ0 that scipy.ndimage.gaussian_filter uses with truncate=3
    (radius int(3σ0 + 0.5), normalised to sum 1), as float32."""
    radius = int(3.0 * reblur_sigma_px + 0.5)
    taps = np.exp(-0.5 * (np.arange(-radius, radius + 1) / reblur_sigma_px) ** 2)
    return (taps / taps.sum()).astype(np.float32)


def _reblurred_gradient_squared_at(image: np.ndarray, rows: np.ndarray, cols: np.ndarray,
                                   reblur_sigma_px: float) -> np.ndarray:
    """``_gradient_squared`` of ``image`` re-blurred by a Gaussian of σ0, at the given pixels
    only (each at least the kernel's radius + 1 from the border): the separable re-blur is
    evaluated on each pixel's own (2·radius + 3)² patch, which gives the whole-picture filter's
    numbers at a fraction of its cost when the edges are a few per cent of the pixels."""
    from numpy.lib.stride_tricks import sliding_window_view

    taps = _reblur_kernel(reblur_sigma_px)
    radius = len(taps) // 2
    size = 2 * radius + 3
    windows = sliding_window_view(image, (size, size))
    # Along each patch row: the re-blurred values at the columns left of, at and right of the
    # pixel (one matrix product over the patch rows), then down those three columns.
    across = np.zeros((size, 3), dtype=np.float32)
    for column in range(3):
        across[column:column + 2 * radius + 1, column] = taps
    out = np.empty(len(rows), dtype=np.float32)
    # A block of pixels at a time: the patches stay in the processor's cache, and each
    # product is small enough for the BLAS library to compute on the calling thread (measuring
    # runs in a worker pool per core already; the library's own threads would only contend
    # with it for the same cores).
    for start in range(0, len(rows), _PATCH_BLOCK):
        block = slice(start, start + _PATCH_BLOCK)
        patches = windows[rows[block] - radius - 1, cols[block] - radius - 1]
        count = len(patches)
        rowwise = (patches.reshape(-1, size) @ across).reshape(count, size, 3).transpose(0, 2, 1).copy()
        above_at_below = rowwise[:, 1, :] @ across
        at = above_at_below[:, 1]
        left = rowwise[:, 0, 1:2 * radius + 2] @ taps
        right = rowwise[:, 2, 1:2 * radius + 2] @ taps
        dx = np.maximum(np.abs(right - at), np.abs(at - left))
        dy = np.maximum(np.abs(above_at_below[:, 2] - at), np.abs(at - above_at_below[:, 0]))
        out[block] = dx * dx + dy * dy
    return out


def _border(reblur_sigma_px: float) -> int:
    """Pixels this near the border are not measured: the re-blur's patch must fit."""
    return max(_BORDER, int(3.0 * reblur_sigma_px + 0.5) + 2)


@dataclass(frozen=True)
class _Readings:
    """Zhuo–Sim's σ (px) at each edge pixel of one picture."""

    rows: np.ndarray
    cols: np.ndarray
    strength: np.ndarray
    sigma: np.ndarray


def _readings(grey: np.ndarray, reblur_sigma_px: float, max_candidates: int | None = None) -> _Readings:
    """Zhuo–Sim's σ at every edge pixel of ``grey``, at the picture's own scale. At most about
    ``max_candidates`` candidate edge pixels are examined (a fixed random share of them
    beyond); ``None``: all."""
    grey = np.ascontiguousarray(grey, dtype=np.float32)
    noise = noise_level(grey)
    sharp_noise, reblurred_noise = _noise_power(reblur_sigma_px)
    step = max(MIN_EDGE_STEP, NOISE_STEPS * noise)
    index = _candidates(grey, step, _border(reblur_sigma_px), max_candidates or grey.size)
    sharp_at = _gradient_squared_at(grey, index)
    index = index[sharp_at >= step * step]
    index = _edge_pixels(grey, index)
    rows, cols = np.divmod(index, grey.shape[1])
    sharp_at = _gradient_squared_at(grey, index)
    reblurred_at = _reblurred_gradient_squared_at(grey, rows, cols, reblur_sigma_px)
    # A real edge keeps a gradient through the re-blur; noise mostly does not.
    keep = reblurred_at >= MIN_REBLURRED_STEP * MIN_REBLURRED_STEP
    rows, cols = rows[keep], cols[keep]
    sharp_at, reblurred_at = sharp_at[keep], reblurred_at[keep]
    # Noise adds its own power to both gradients (far more to the sharp one): take out what
    # it adds on average, so noise does not pass for sharpness.
    signal = sharp_at - np.float32(sharp_noise * noise * noise)
    ratio_squared = signal / np.maximum(reblurred_at - np.float32(reblurred_noise * noise * noise), np.float32(1e-6))
    # Edges are ranked by their re-blurred gradient, which noise hardly touches.
    strength = np.sqrt(reblurred_at)
    with np.errstate(invalid="ignore", divide="ignore"):
        sigma = np.where(ratio_squared > 1.0, reblur_sigma_px / np.sqrt(ratio_squared - 1.0), np.inf)
    return _Readings(rows, cols, strength, sigma.astype(np.float64))


def edge_sigmas(grey: np.ndarray, reblur_sigma_px: float = REBLUR_SIGMA_PX) -> EdgeBlur:
    """Zhuo–Sim's Gaussian σ (px) at every edge pixel of ``grey``, at the picture's own scale
    and before the conversion to a disk diameter (``EdgeBlur.diameter_px`` holds σ here)."""
    read = _readings(grey, reblur_sigma_px)
    return EdgeBlur(read.rows, read.cols, read.strength, read.sigma, grey.shape[0], grey.shape[1],
                    np.zeros(len(read.rows), dtype=bool))


def noise_level(grey: np.ndarray) -> float:
    """The standard deviation of the picture's noise in grey levels, from the median absolute
    finest-scale diagonal (Haar HH) coefficient / 0.6745 (D. L. Donoho, "De-noising by
    soft-thresholding", IEEE Trans. Inf. Theory 41 (1995) 613–627); texture raises it a little."""
    height, width = (grey.shape[0] // 2) * 2, (grey.shape[1] // 2) * 2
    g = grey[:height, :width]
    # A quarter of the coefficients (every other block each way) gives the median to well
    # under a percent on a preview, at a quarter of the cost.
    stride = 4 if height * width > 160_000 else 2
    diagonal = (g[0::stride, 0::stride] - g[0::stride, 1::stride] - g[1::stride, 0::stride]
                + g[1::stride, 1::stride]) / 2
    sample = np.abs(diagonal).ravel()
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


def _table_diameters() -> np.ndarray:
    return np.concatenate([np.arange(0.25, 12.0, 0.25), np.arange(12.0, 20.0, 0.5),
                           np.arange(20.0, _MAX_DIAMETER_PX + 0.01, 1.0)])


@functools.cache
def _disk_table(reblur_sigma_px: float) -> tuple[np.ndarray, np.ndarray]:
    """(σ read, disk diameter): Zhuo–Sim's σ as this implementation reads it on an ideal
    straight edge blurred by a uniform disk of each diameter (0.25–40 px)."""
    diameters = _table_diameters()
    rows = 2 * _border(reblur_sigma_px) + 6
    sigmas = []
    for diameter in diameters:
        # Where the edge falls within a pixel changes the reading of small blurs: the edge is
        # made at four sub-pixel positions and the readings pooled.
        read = []
        for phase in (0.0, 0.25, 0.5, 0.75):
            profile = _disk_edge_profile(diameter, phase)
            measured = _readings(np.repeat(profile[None, :], rows, axis=0), reblur_sigma_px)
            at = np.abs(measured.cols - (len(profile) // 2 - phase)) <= 0.5
            read.append(measured.sigma[at] if at.any() else measured.sigma)
        sigmas.append(float(np.median(np.concatenate(read))))
    # Below about two pixels the ratio saturates: keep the table monotonic for inversion.
    return np.maximum.accumulate(np.asarray(sigmas)), diameters


def _disk_edge_profile(diameter_px: float, phase_px: float = 0.0, supersample: int = 64) -> np.ndarray:
    """A step of 255 grey levels blurred by a uniform disk of ``diameter_px`` and sampled by
    pixel area, the step ``phase_px`` before the centre of the middle pixel.

    The disk's line spread function is a semicircle, 2√(r² − x²)/(π r²), so the step becomes
    the share of the disk on one side of a chord: ½ + (u√(1 − u²) + arcsin u)/π with u = x/r
    (the pillbox's edge response; geometric optics' blur circle, e.g. W. J. Smith, Modern
    Optical Engineering, on the geometric blur spot, from memory)."""
    length = int(np.ceil(diameter_px)) + 2 * 12 + 8
    fine = (np.arange(length * supersample) + 0.5) / supersample - length // 2 - 0.5 + phase_px
    u = np.clip(fine / (diameter_px / 2), -1.0, 1.0)
    covered = 0.5 + (u * np.sqrt(1 - u * u) + np.arcsin(u)) / np.pi
    return (255.0 * covered).reshape(length, supersample).mean(axis=1).astype(np.float32)


def disk_diameter_px(sigma_px: np.ndarray, reblur_sigma_px: float = REBLUR_SIGMA_PX) -> np.ndarray:
    """The disk diameter whose ideal edge gives Zhuo–Sim's ``sigma_px`` (``inf`` stays inf)."""
    table_sigma, table_diameter = _disk_table(reblur_sigma_px)
    sigma_px = np.asarray(sigma_px, dtype=float)
    diameters = np.interp(sigma_px, table_sigma, table_diameter, right=np.inf)
    return np.where(np.isfinite(sigma_px), diameters, np.inf)


def _reduce_half(grey: np.ndarray) -> np.ndarray:
    """The picture reduced by half each way, each pixel the mean of a 2 × 2 block (pixel-area
    sampling again, so the disk table holds at this scale too)."""
    g = grey[:(grey.shape[0] // 2) * 2, :(grey.shape[1] // 2) * 2]
    return (g[0::2, 0::2] + g[0::2, 1::2] + g[1::2, 0::2] + g[1::2, 1::2]) * np.float32(0.25)


def edge_blur(grey: np.ndarray, reblur_sigma_px: float = REBLUR_SIGMA_PX) -> EdgeBlur:
    """Every edge pixel of ``grey`` (2-D grey levels 0..255) with its blur as a disk diameter,
    measured at two scales: the picture itself and the picture reduced by half, where the same
    re-blur reaches twice the blur (``EdgeBlur.coarse``)."""
    grey = np.asarray(grey)
    if grey.ndim != 2 or min(grey.shape) < 2 * _BORDER + 3:
        raise ValueError(f"expected a 2-D picture of at least {2 * _BORDER + 3} px a side, got {grey.shape}")
    grey = np.ascontiguousarray(grey, dtype=np.float32)
    # Only a large picture is sampled: a small one costs little and needs every edge it has.
    most = MAX_EDGE_CANDIDATES if grey.size >= SAMPLE_FROM_PIXELS else None
    fine = _readings(grey, reblur_sigma_px, most)
    parts = [(fine.rows, fine.cols, fine.strength, disk_diameter_px(fine.sigma, reblur_sigma_px),
              np.zeros(len(fine.rows), dtype=bool))]
    if min(grey.shape) >= 2 * (2 * _border(reblur_sigma_px) + 3):
        # The same density of candidates as at full size: a quarter as many.
        coarse = _readings(_reduce_half(grey), reblur_sigma_px, most and most // 4)
        parts.append((2 * coarse.rows, 2 * coarse.cols, coarse.strength,
                      2 * disk_diameter_px(coarse.sigma, reblur_sigma_px),
                      np.ones(len(coarse.rows), dtype=bool)))
    rows, cols, strength, diameter, is_coarse = (np.concatenate(column) for column in zip(*parts))
    return EdgeBlur(rows, cols, strength, diameter, grey.shape[0], grey.shape[1], is_coarse)


def region_blur(edges: EdgeBlur, top: int, bottom: int, left: int, right: int) -> tuple[float | None, int]:
    """The blur of the region rows ``top:bottom``, columns ``left:right`` (disk diameter in
    px; ``None`` with too few edges, see ``_two_scale_blur``) and its edge count."""
    inside = (edges.rows >= top) & (edges.rows < bottom) & (edges.cols >= left) & (edges.cols < right)
    return _two_scale_blur(edges.strength[inside], edges.diameter_px[inside], edges.coarse[inside])


def _two_scale_blur(strength: np.ndarray, diameter: np.ndarray, coarse: np.ndarray) -> tuple[float | None, int]:
    """A region's blur from its edges at both scales: the picture's own reading up to
    ``COARSE_FROM_PX``, the half-size picture's from ``COARSE_FULL_PX`` on, a linear blend
    between (by the picture's own reading); either alone when the other has too few edges."""
    fine, fine_count = _robust_blur(strength[~coarse], diameter[~coarse])
    if fine is not None and fine <= COARSE_FROM_PX:
        return fine, fine_count
    rough, rough_count = _robust_blur(strength[coarse], diameter[coarse])
    if rough is None:
        return fine, fine_count
    if fine is None:
        return rough, rough_count
    share = min(1.0, (fine - COARSE_FROM_PX) / (COARSE_FULL_PX - COARSE_FROM_PX))
    return fine + share * (rough - fine), rough_count if 2 * share >= 1 else fine_count


def _robust_blur(strength: np.ndarray, diameter: np.ndarray) -> tuple[float | None, int]:
    if len(strength) < MIN_EDGES:
        return None, int(len(strength))
    ranked = np.sort(strength)
    strong = strength >= STRONG_EDGE_SHARE * _percentile_of_sorted(ranked, 99)
    if strong.sum() < MIN_EDGES:
        strong = strength >= ranked[-MIN_EDGES]
    value = _percentile_of_sorted(np.sort(diameter[strong]), BLUR_PERCENTILE)
    return min(value, _MAX_DIAMETER_PX), int(strong.sum())


def _percentile_of_sorted(ranked: np.ndarray, percent: float) -> float:
    """numpy's default (linear) percentile of an array already sorted, without its overhead
    (this runs for every region of every frame)."""
    position = (len(ranked) - 1) * percent / 100
    below = int(position)
    above = min(below + 1, len(ranked) - 1)
    low, high = float(ranked[below]), float(ranked[above])
    return low + (high - low) * (position - below) if np.isfinite(high - low) else (low if position == below else high)


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
            value, _count = _two_scale_blur(edges.strength[chosen], edges.diameter_px[chosen], edges.coarse[chosen])
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
