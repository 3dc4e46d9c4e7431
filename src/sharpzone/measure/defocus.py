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
1 + σ²/σ0² in σ), and where edges are closer than the blur's extent (fine texture: gravel,
grass, brick) each one's gradient hump is narrowed by its neighbours', so the ratio reads
large blurs low however the re-blur is scaled (the overlap is the same at any picture scale;
a second pass at half size, the previous version, still read 12-px disks on textures 40–48 %
low). Large blurs are therefore also read a second way, per edge, from the spacing of the
extrema of the second derivative across the edge, after J. H. Elder and S. W. Zucker, "Local
scale control for edge detection and blur estimation", IEEE Trans. PAMI 20 (1998) 699–716:
a step blurred by a Gaussian σ, under a second-derivative filter of scale s, has its two
extrema 2√(σ² + s²) apart (the second derivative of the step smoothed by both is the
derivative of a Gaussian of √(σ² + s²), extreme at ± that; the paper's relation, from
memory). Here s = ``SPACING_SIGMA_PX`` along the edge's gradient direction, each extremum
looked for up to where the second derivative changes sign beyond it, and the spacing
converted to a disk diameter with the disk's own edge response again (``spacing_diameter_px``;
a disk edge's second derivative peaks at its blur circle's rim, ±r). Neighbours cut the
extrema's search short only when their own lobes reach them, which leaves this reading far
less biased on texture than the curvature the ratio measures; but it cannot resolve blurs
under about 4 px (its table is flat there: the filter's own 2 s). So a region whose larger
reading is above ``SPACING_FROM_PX`` blends from the ratio's to the spacing's reading, wholly
the spacing's from ``SPACING_FULL_PX``.

Bars. A line narrower than the blur (mortar between bricks, a hair, a grass blade) is two
opposite edges whose blur circles overlap; neither edge has a rim of its own on the line's
side, so both readings see the line's width rather than the blur. Where an edge as strong as
the one read lies inside the second derivative's lobe on one side, the blur circle is read
from the geometry of the blurred bar instead (``_bar_diameter_px``).

Our choices beyond the paper: the gradient magnitude is the larger of the two one-sided
differences on each axis (a sharp step keeps its full height, so blurs of 2 px still give
R well above 1); edges are local maxima of the central-difference gradient along its direction
(no separate edge detector); the picture's noise level sets an edge threshold and its power
is taken out of both gradients (noise would otherwise pass for sharpness); edges must keep a
gradient through the re-blur; only edges at least half as strong as the region's strongest
are used, and a region's blur is the ``BLUR_PERCENTILE`` of their readings; blur is reported
as a disk diameter in pixels of the analysed picture.

Speed (a 1,600-px preview in about 25 ms of one core): the re-blur is computed only at the
edge pixels, from each one's own small patch, not over the whole picture; the spacing only
at the edges a region's figure uses; whole-picture passes go a strip of rows at a time; a
busy large picture is sampled (``MAX_EDGE_CANDIDATES``).
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
# 3: large blurs read by the second derivative's extrema spacing instead of at half size
# (2 read fine textures blurred by 6–12 px 24–48 % low; 3 reads them at most 21 % low).
# 4: at the edges of bars narrower than the blur the spacing is read from the bar's geometry,
# and the blend ends at 10 px (3 read brick blurred by 6 and 8 px 20.5 % low; 4 reads every
# texture and object within 17 %).
METHOD_VERSION = 4
# The re-blur σ0 in pixels (the paper re-blurs with a σ0 of about one pixel; 1.5 gave the
# smallest error over 2–12 px disks on the validation images, see docs/measured-blur.md).
REBLUR_SIGMA_PX = 1.5
# Edges kept in a region: at least this share of the region's strongest edge.
STRONG_EDGE_SHARE = 0.5
# A region's blur is this percentile of its strong edges' estimates. Neighbouring structure
# biases single estimates both ways: an opposite edge within a disk's reach lowers them, the
# long tails of a Gaussian-like blur over parallel structure raise them. On the validation
# pictures (tests/measure/test_validation.py, method version 2) every percentile from 60 to
# 65 kept every 2–12 px disk on objects and every Gaussian σ 1–3 px within 20 %: below 60
# noisy soft frames start to read sharp, above 65 Gaussian blur reads over 20 % high (80, the
# first version's, read it 31 % high). The spacing's reading takes the same percentile
# (method version 4: 60–63 keep every disk on objects and textures within 20 %, 64 and 65
# the cat picture's 6-px disk 20–22 % above the disk alone).
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
# A region whose larger reading (ratio or spacing) is above this many pixels blends over to
# the spacing's reading, wholly from the second figure (see ``_region_figure``). Below 4 px
# the spacing's ideal-edge table is flat (under 0.6 px of spacing per px of blur; the
# ratio's error factor 1 + σ²/σ0² is under 2 there). The end is where the ratio's error
# factor reaches 10 (σ 4.5 px, a 10-px disk; at 8 px it is about 6). Chosen on the
# validation pictures (method version 4): every end from 10 to 12 px, with a start from 3.5
# to 4.5 px, keeps every 2–12 px disk on objects and textures within 20 %; ending at 8 or 9
# reads the cat picture's 6-px disk over 20 % above the disk alone (its fur's hairs are
# read as bars), ending at 8 was version 3's (brick at 6 and 8 px 20.5 % low then).
SPACING_FROM_PX, SPACING_FULL_PX = 4.0, 10.0
_MAX_DIAMETER_PX = 40.0
_PATCH_BLOCK = 256
# Whole-picture passes go a strip of this many rows at a time (a strip of a 1,600-px picture
# fits in the processor's cache, which halves their time).
_STRIP_ROWS = 32


@dataclass(frozen=True)
class EdgeBlur:
    """Every measured edge pixel of a picture: row, column, strength (grey levels per pixel),
    blur as a disk diameter in pixels by the gradient ratio (``inf`` where the edge showed no
    blur limit) and by the spacing of the second derivative's extrema across the edge
    (``spacing_diameter_px``: ``nan`` where not found; read on demand, only for the edges a
    region's figure uses, see ``spacing_at``)."""

    rows: np.ndarray
    cols: np.ndarray
    strength: np.ndarray
    diameter_px: np.ndarray
    height: int
    width: int
    grey: np.ndarray
    across: np.ndarray
    spacing_diameter_px: np.ndarray
    spacing_read: np.ndarray

    def spacing_at(self, index: np.ndarray) -> np.ndarray:
        """The spacing's disk diameter of the edges ``index``, read now where not yet read."""
        unread = index[~self.spacing_read[index]]
        if len(unread):
            self.spacing_diameter_px[unread] = _bar_diameter_px(
                self.grey, self.rows[unread], self.cols[unread], self.across[unread])
            self.spacing_read[unread] = True
        return self.spacing_diameter_px[index]


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


def _edge_pixels(image: np.ndarray, index: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Those of the flat ``index`` that are local maxima of the central-difference gradient
    along its direction, and each one's flat step to its neighbour across the edge."""
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
    return index[keep], step[keep]


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
    across: np.ndarray


# The second-derivative filter's scale s (px) and how many steps from the edge each extremum
# is looked for (a disk's extremum lies at its rim, r + about s from the edge: 14 steps reach
# disks of about 25 px, the rest read by the ratio alone).
SPACING_SIGMA_PX = 1.0
SPACING_REACH = 14
# A bar narrower than the blur (a mortar line, a hair, a grass blade): its opposite edge must
# be about as strong as the edge read (a bar steps between the same two levels on both sides;
# within 10 %), and the second derivative must stay on its side all the way to it, at least
# this share of its extremum (a bar's crest stays curved: on ideal bars up to two thirds of
# the blur radius wide, blurred by disks up to the reach's 24 px, it keeps 0.15 or more; the
# flat top between two edges farther apart than the blur, disks of 8 px and more, drops it to
# 0–0.13; see ``_bar_diameter_px`` and docs/measured-blur.md for the ranges that work).
BAR_EDGE_SHARE = 0.9
BAR_CREST_SHARE = 0.15


@dataclass(frozen=True)
class _Extrema:
    """Across each edge pixel (px along its gradient direction): the distance to the second
    derivative's extremum on the lower and on the upper side of the edge (``nan`` where one of
    them is not found), and to an opposite edge inside that side's lobe or where it ends
    (``nan``: none, see ``BAR_EDGE_SHARE``); all from the edge's sub-pixel position."""

    lower: np.ndarray
    upper: np.ndarray
    opposite_lower: np.ndarray
    opposite_upper: np.ndarray


def _extrema_across(image: np.ndarray, rows: np.ndarray, cols: np.ndarray, across: np.ndarray,
                    smoothing_px: float = SPACING_SIGMA_PX, reach: int = SPACING_REACH) -> _Extrema:
    """The second derivative's extrema across each edge pixel, along its (binned) gradient
    direction, of the profile smoothed by a Gaussian of ``smoothing_px``; each extremum looked
    for only up to where the second derivative changes sign beyond it (another edge's lobe).
    ``nan`` where the profile leaves the picture or an extremum is not found within ``reach``
    steps."""
    height, width = image.shape
    flat = image.ravel()
    down = (across >= width - 1).astype(np.int64)
    right = across - down * width
    second = {False: _second_derivative_taps(smoothing_px), True: _second_derivative_taps(smoothing_px / np.sqrt(2.0))}
    extent = reach + 1 + len(second[False]) // 2
    # The path across the edge is straight: inside the picture if both its ends are.
    inside = ((rows - extent * down >= 0) & (rows + extent * down < height)
              & (cols - extent * np.abs(right) >= 0) & (cols + extent * np.abs(right) < width))
    found = [np.full(len(rows), np.nan) for _ in range(4)]
    offsets = np.arange(-extent, extent + 1)
    diagonal = (down != 0) & (right != 0)
    for is_diagonal, length in ((False, 1.0), (True, float(np.sqrt(2.0)))):
        chosen = np.flatnonzero((diagonal == is_diagonal) & inside)
        if not len(chosen):
            continue
        taps = second[is_diagonal]
        half = len(taps) // 2
        profile = flat[(rows[chosen] * width + cols[chosen])[:, None] + offsets[None, :] * across[chosen, None]]
        # Offsets −reach − 1 … reach + 1, rising edges made rising first: the second
        # derivative and the (central-difference) gradient.
        rising = np.where(profile[:, extent + 1] >= profile[:, extent - 1], np.float32(1), np.float32(-1))
        curve = np.lib.stride_tricks.sliding_window_view(profile, len(taps), axis=1)[:, extent - half - reach - 1:
                                                                                    extent - half + reach + 2] @ taps
        curve *= rising[:, None]
        near = profile[:, extent - reach - 2:extent + reach + 3] * rising[:, None]
        gradient = near[:, 2:] - near[:, :-2]
        own = gradient[:, reach + 1]
        # Where the edge lies within its pixel (the gradient's peak): each side's distances
        # are taken from there (their sum, the spacing, is the same from anywhere between).
        centre = _parabola_shift(gradient[:, reach], own, gradient[:, reach + 2])
        at = np.arange(len(chosen))
        both = np.ones(len(chosen), dtype=bool)
        sides = []
        # Below the edge the rising profile bends up (second derivative > 0), above it down.
        for sign, side, slope in ((1.0, curve[:, reach + 1::-1], gradient[:, reach + 1::-1]),
                                  (-1.0, curve[:, reach + 1:], gradient[:, reach + 1:])):
            # side[:, 0] is the edge pixel's own offset, side[:, k] k steps away from it.
            value = sign * side[:, 1:reach + 1]
            beyond = np.cumsum(value < 0, axis=1) > 0
            look = np.where(beyond, -np.inf, value)
            step = np.argmax(look, axis=1)
            peak = look[at, step]
            both &= (peak > 0) & (step < reach - 1)
            extremum = step + 1 + _parabola_shift(sign * side[at, step], peak, sign * side[at, step + 2])
            # The strongest opposite gradient inside the lobe or where it ends (a smooth bar's
            # far edge is its inflection), about as strong as the edge's own; the crest between.
            past = np.concatenate([np.zeros((len(chosen), 1), dtype=bool), beyond[:, :-1]], axis=1)
            opposite = np.where(past, -np.inf, -slope[:, 1:reach + 1])
            step = np.argmax(opposite, axis=1)
            crest = np.min(np.where(np.arange(reach)[None, :] < step[:, None], look, np.inf), axis=1)
            bar = ((opposite[at, step] >= BAR_EDGE_SHARE * own) & (crest >= BAR_CREST_SHARE * peak)
                   & (step >= 1) & (step < reach - 1))
            edge = step + 1 + _parabola_shift(-slope[at, step], opposite[at, step], -slope[at, step + 2])
            sides.append(((extremum + sign * centre) * length,
                          np.where(bar, (edge + sign * centre) * length, np.nan)))
        (lower, opposite_lower), (upper, opposite_upper) = sides
        for out, values in zip(found, (np.where(both, lower, np.nan), np.where(both, upper, np.nan),
                                       opposite_lower, opposite_upper)):
            out[chosen] = values
    return _Extrema(*found)


def _parabola_shift(before: np.ndarray, peak: np.ndarray, after: np.ndarray) -> np.ndarray:
    """The sub-step position of a peak from the parabola through it and its two neighbours."""
    with np.errstate(invalid="ignore", divide="ignore"):
        bend = before - 2 * peak + after
        return np.clip(np.where(bend < 0, 0.5 * (before - after) / bend, 0.0), -0.5, 0.5)


def _spacing_px(image: np.ndarray, rows: np.ndarray, cols: np.ndarray, across: np.ndarray,
                smoothing_px: float = SPACING_SIGMA_PX, reach: int = SPACING_REACH) -> np.ndarray:
    """The distance (px) between the two extrema of the second derivative across each edge
    pixel (``_extrema_across``; ``nan`` where one is not found)."""
    extrema = _extrema_across(image, rows, cols, across, smoothing_px, reach)
    return extrema.lower + extrema.upper


def _bar_diameter_px(image: np.ndarray, rows: np.ndarray, cols: np.ndarray, across: np.ndarray) -> np.ndarray:
    """The blur circle's diameter across each edge pixel from its second derivative's extrema
    (``spacing_diameter_px`` of their spacing), or, at the edge of a bar narrower than the blur
    (an opposite edge inside one side's lobe, ``BAR_EDGE_SHARE``), from the geometry of the bar.

    A bright bar of width w blurred by a disk of radius r > w/2 is the difference of two disk
    edge responses w apart: its second derivative has the rim extrema of both edges, at
    ±(r + w/2) and ±(r − w/2) from the bar's middle (our derivation from the pillbox's edge
    response). Where w ≤ 2r/3 the gradient peaks at the inner rims (each edge pixel sits at the
    other edge's rim): the extremum on the edge's free side lies w from it, the opposite edge
    2r − w, at least twice as far, and the blur circle spans the two, 2r. Where the opposite
    edge is nearer than twice the free side's extremum (wider bars, r ≤ w < 2r, and the band
    between) each edge pixel sits at its own step with its rims at ±r: the free side's extremum
    is r from it, the other side's is displaced by the opposite edge's rim, so the free side is
    read on both sides."""
    extrema = _extrema_across(image, rows, cols, across)
    diameter = spacing_diameter_px(extrema.lower + extrema.upper)
    for free, opposite, other in ((extrema.lower, extrema.opposite_upper, extrema.opposite_lower),
                                  (extrema.upper, extrema.opposite_lower, extrema.opposite_upper)):
        # A bar on this side only (a bar on both: a narrow ridge among others, read as found).
        bar = ~np.isnan(opposite) & np.isnan(other) & ~np.isnan(free)
        # The free side's rim: its extremum's distance as on an ideal edge (the table's half).
        rim = spacing_diameter_px(2 * free) / 2
        diameter = np.where(bar, np.where(opposite >= 2 * rim, rim + opposite, 2 * rim), diameter)
    return diameter


@functools.cache
def _second_derivative_taps(sigma_steps: float) -> np.ndarray:
    """The second difference of a sampled Gaussian of ``sigma_steps`` (normalised to sum 1,
    radius 3σ + 1): one correlation gives the second derivative of the smoothed profile."""
    radius = int(3.0 * sigma_steps + 0.5) + 1
    taps = np.exp(-0.5 * (np.arange(-radius, radius + 1) / sigma_steps) ** 2)
    return np.convolve(taps / taps.sum(), [1.0, -2.0, 1.0]).astype(np.float32)


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
    index, across = _edge_pixels(grey, index)
    rows, cols = np.divmod(index, grey.shape[1])
    sharp_at = _gradient_squared_at(grey, index)
    reblurred_at = _reblurred_gradient_squared_at(grey, rows, cols, reblur_sigma_px)
    # A real edge keeps a gradient through the re-blur; noise mostly does not.
    keep = reblurred_at >= MIN_REBLURRED_STEP * MIN_REBLURRED_STEP
    rows, cols, across = rows[keep], cols[keep], across[keep]
    sharp_at, reblurred_at = sharp_at[keep], reblurred_at[keep]
    # Noise adds its own power to both gradients (far more to the sharp one): take out what
    # it adds on average, so noise does not pass for sharpness.
    signal = sharp_at - np.float32(sharp_noise * noise * noise)
    ratio_squared = signal / np.maximum(reblurred_at - np.float32(reblurred_noise * noise * noise), np.float32(1e-6))
    # Edges are ranked by their re-blurred gradient, which noise hardly touches.
    strength = np.sqrt(reblurred_at)
    with np.errstate(invalid="ignore", divide="ignore"):
        sigma = np.where(ratio_squared > 1.0, reblur_sigma_px / np.sqrt(ratio_squared - 1.0), np.inf)
    return _Readings(rows, cols, strength, sigma.astype(np.float64), across)


def edge_sigmas(grey: np.ndarray, reblur_sigma_px: float = REBLUR_SIGMA_PX) -> EdgeBlur:
    """Zhuo–Sim's Gaussian σ (px) at every edge pixel of ``grey``, at the picture's own scale
    and before the conversion to a disk diameter (``EdgeBlur.diameter_px`` holds σ here)."""
    grey = np.ascontiguousarray(grey, dtype=np.float32)
    return _edge_set(grey, _readings(grey, reblur_sigma_px), None)


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


def _on_ideal_disk_edges(read, reblur_sigma_px: float) -> np.ndarray:
    """What ``read(picture) -> (columns, values)`` gives on an ideal straight edge blurred by a
    uniform disk of each of ``_table_diameters()``: the median at the edge, pooled over four
    sub-pixel positions of the edge (where the edge falls within a pixel changes the reading
    of small blurs). The edge is made tall enough for the re-blur's patch and padded by its
    plateaus for the spacing's profile."""
    rows = 2 * _border(reblur_sigma_px) + 6
    values = []
    for diameter in _table_diameters():
        found = []
        for phase in (0.0, 0.25, 0.5, 0.75):
            profile = np.pad(_disk_edge_profile(diameter, phase), 2 * SPACING_REACH, mode="edge")
            columns, read_here = read(np.repeat(profile[None, :], rows, axis=0))
            at = np.abs(columns - (len(profile) // 2 - phase)) <= 0.5
            found.append(read_here[at] if at.any() else read_here)
        pooled = np.concatenate(found)
        pooled = pooled[np.isfinite(pooled)]
        values.append(float(np.median(pooled)) if len(pooled) else np.nan)
    return np.asarray(values)


@functools.cache
def _disk_table(reblur_sigma_px: float) -> tuple[np.ndarray, np.ndarray]:
    """(σ read, disk diameter): Zhuo–Sim's σ as this implementation reads it on an ideal
    straight edge blurred by a uniform disk of each diameter (0.25–40 px)."""
    def read(picture: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        measured = _readings(picture, reblur_sigma_px)
        return measured.cols, measured.sigma

    # Below about two pixels the ratio saturates: keep the table monotonic for inversion.
    return np.maximum.accumulate(_on_ideal_disk_edges(read, reblur_sigma_px)), _table_diameters()


@functools.cache
def _spacing_table() -> tuple[np.ndarray, np.ndarray]:
    """(second-derivative extrema spacing read, disk diameter) on the same ideal disk edges,
    where the spacing is found (up to about 25 px)."""
    def read(picture: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        measured = _readings(picture, REBLUR_SIGMA_PX)
        return measured.cols, _spacing_px(picture, measured.rows, measured.cols, measured.across)

    spacing = _on_ideal_disk_edges(read, REBLUR_SIGMA_PX)
    found = np.isfinite(spacing)
    return np.maximum.accumulate(spacing[found]), _table_diameters()[found]


def spacing_diameter_px(spacing_px: np.ndarray) -> np.ndarray:
    """The disk diameter whose ideal edge gives the second-derivative extrema ``spacing_px``
    (``nan`` stays nan; beyond the table: ``inf``)."""
    table_spacing, table_diameter = _spacing_table()
    spacing_px = np.asarray(spacing_px, dtype=float)
    return np.where(np.isnan(spacing_px), np.nan, np.interp(spacing_px, table_spacing, table_diameter, right=np.inf))


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


def edge_blur(grey: np.ndarray, reblur_sigma_px: float = REBLUR_SIGMA_PX) -> EdgeBlur:
    """Every edge pixel of ``grey`` (2-D grey levels 0..255) with its blur as a disk diameter,
    read twice: by the gradient ratio and by the spacing of the second derivative's extrema
    across the edge (``EdgeBlur.spacing_diameter_px``, read on demand)."""
    grey = np.asarray(grey)
    if grey.ndim != 2 or min(grey.shape) < 2 * _BORDER + 3:
        raise ValueError(f"expected a 2-D picture of at least {2 * _BORDER + 3} px a side, got {grey.shape}")
    grey = np.ascontiguousarray(grey, dtype=np.float32)
    # Only a large picture is sampled: a small one costs little and needs every edge it has.
    most = MAX_EDGE_CANDIDATES if grey.size >= SAMPLE_FROM_PIXELS else None
    return _edge_set(grey, _readings(grey, reblur_sigma_px, most), reblur_sigma_px)


def _edge_set(grey: np.ndarray, read: _Readings, reblur_sigma_px: float | None) -> EdgeBlur:
    """The ``EdgeBlur`` of ``read``: ratio readings as disk diameters (as σ when
    ``reblur_sigma_px`` is ``None``), the spacing still to be read."""
    diameter = read.sigma if reblur_sigma_px is None else disk_diameter_px(read.sigma, reblur_sigma_px)
    return EdgeBlur(read.rows, read.cols, read.strength, diameter, grey.shape[0], grey.shape[1], grey,
                    read.across, np.full(len(read.rows), np.nan), np.zeros(len(read.rows), dtype=bool))


def region_blur(edges: EdgeBlur, top: int, bottom: int, left: int, right: int) -> tuple[float | None, int]:
    """The blur of the region rows ``top:bottom``, columns ``left:right`` (disk diameter in
    px; ``None`` with too few edges, see ``_region_figure``) and its edge count."""
    inside = np.flatnonzero((edges.rows >= top) & (edges.rows < bottom) & (edges.cols >= left) & (edges.cols < right))
    strong = _strong_edges(edges, inside)
    return _region_figure(edges, strong) if strong is not None else (None, len(inside))


def _strong_edges(edges: EdgeBlur, chosen: np.ndarray) -> np.ndarray | None:
    """Those of the edges ``chosen`` a region's figure uses: at least ``STRONG_EDGE_SHARE`` of
    the region's strongest (its 99th percentile), else its ``MIN_EDGES`` strongest; ``None``
    with fewer than ``MIN_EDGES`` edges."""
    if len(chosen) < MIN_EDGES:
        return None
    strength = edges.strength[chosen]
    ranked = np.sort(strength)
    strong = strength >= STRONG_EDGE_SHARE * _percentile_of_sorted(ranked, 99)
    if strong.sum() < MIN_EDGES:
        strong = strength >= ranked[-MIN_EDGES]
    return chosen[strong]


def _region_figure(edges: EdgeBlur, strong: np.ndarray | None) -> tuple[float | None, int]:
    """A region's blur from its strong edges: the gradient ratio's reading up to
    ``SPACING_FROM_PX``; above it blended with the spacing's reading, wholly the spacing's
    from ``SPACING_FULL_PX`` (by the larger of the two readings: both read crowded edges low,
    neither reads them high)."""
    if strong is None:
        return None, 0
    ratio = min(_percentile_of_sorted(np.sort(edges.diameter_px[strong]), BLUR_PERCENTILE), _MAX_DIAMETER_PX)
    spaced = edges.spacing_at(strong)
    spaced = spaced[~np.isnan(spaced)]
    if len(spaced) < MIN_EDGES:
        return ratio, len(strong)
    width = min(_percentile_of_sorted(np.sort(spaced), BLUR_PERCENTILE), _MAX_DIAMETER_PX)
    share = min(1.0, max(0.0, max(ratio, width) - SPACING_FROM_PX) / (SPACING_FULL_PX - SPACING_FROM_PX))
    return ratio + share * (width - ratio), len(strong)


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
    strong = [_strong_edges(edges, order[bounds[at]:bounds[at + 1]]) for at in range(down * across)]
    # The spacing of every region's strong edges in one pass.
    used = [part for part in strong if part is not None]
    if used:
        edges.spacing_at(np.concatenate(used))
    grid: list[list[float | None]] = []
    best = (None, None, None)
    measured: list[float] = []
    for r in range(down):
        line = []
        for c in range(across):
            value, _count = _region_figure(edges, strong[r * across + c])
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
