"""The estimator on ideal edges, where Zhuo and Sim's derivation gives the answer exactly
(S. Zhuo and T. Sim, "Defocus map estimation from a single image", Pattern Recognition 44
(2011) 1852–1858, section 2): a step edge blurred by a Gaussian of σ, re-blurred by σ0, has a
gradient ratio R = √(σ² + σ0²)/σ at the edge, so σ = σ0/√(R² − 1) whatever σ0 is."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.ndimage import gaussian_filter

from sharpzone.measure.defocus import (
    MIN_EDGES, REBLUR_SIGMA_PX, disk_diameter_px, edge_sigmas, grey_levels, measure_blur, noise_level,
)


def _gaussian_step(sigma: float, size: int = 96) -> np.ndarray:
    """A vertical step of 200 grey levels blurred by a Gaussian of ``sigma`` px, sampled by
    pixel area (the step's profile is the normal CDF; a pixel averages it over its width)."""
    edges = np.arange(size + 1) - size / 2
    cdf = np.array([0.5 * (1 + math.erf(x / (sigma * math.sqrt(2)))) for x in edges])
    # The mean of the CDF over each pixel from its integral (x·Φ + σ²·φ).
    pdf = np.exp(-edges ** 2 / (2 * sigma ** 2)) / (sigma * math.sqrt(2 * math.pi))
    integral = edges * cdf + sigma ** 2 * pdf
    profile = 28 + 200 * np.diff(integral)
    return np.repeat(profile[None, :], 24, axis=0).astype(np.float32)


def _sigma_at_the_edge(picture: np.ndarray, reblur_sigma: float) -> float:
    sigmas = edge_sigmas(picture, reblur_sigma)
    centre = np.abs(sigmas.cols - picture.shape[1] / 2) <= 1
    return float(np.median(sigmas.diameter_px[centre]))


@pytest.mark.parametrize("sigma", [1.5, 2.0, 3.0, 4.0, 6.0])
def test_gaussian_edge_gives_its_sigma_back(sigma):
    # The one-sided difference adds about half a pixel's spread of its own (a pixel box has
    # a variance of 1/12 px², the difference another): compare in quadrature.
    read = _sigma_at_the_edge(_gaussian_step(sigma), REBLUR_SIGMA_PX)
    assert read == pytest.approx(sigma, rel=0.12)


@pytest.mark.parametrize("reblur", [1.0, 1.5, 2.0, 3.0])
def test_the_answer_does_not_depend_on_the_reblur_sigma(reblur):
    # σ0 = 1 is the paper's own choice (from memory); the derivation holds for any σ0.
    assert _sigma_at_the_edge(_gaussian_step(3.0), reblur) == pytest.approx(
        _sigma_at_the_edge(_gaussian_step(3.0), 1.0), rel=0.08)


def test_disk_conversion_is_monotonic_and_reads_large_disks_near_half_their_diameter():
    sigmas = np.array([0.8, 1.0, 1.5, 2.0, 3.0, 5.0, 8.0])
    diameters = disk_diameter_px(sigmas)
    assert (np.diff(diameters) > 0).all()
    # For a disk much wider than σ0 the ratio reads the curvature of the edge's peak, a
    # semicircle of radius r: σ ≈ r = d/2 (our derivation, see measure/defocus.py).
    assert diameters[-1] == pytest.approx(2 * 8.0, rel=0.1)
    assert np.isinf(disk_diameter_px(np.array([np.inf]))[0])


def test_plain_picture_is_not_measurable():
    flat = np.full((200, 300), 120.0) + np.random.default_rng(3).normal(0, 1.5, (200, 300))
    measurement = measure_blur(flat, focus_point=(0.5, 0.5, 0.0, 0.0))
    assert measurement.regions_measured == 0
    assert measurement.focus_blur_px is None and measurement.best_blur_px is None
    assert measurement.focus_edges is not None and measurement.focus_edges < MIN_EDGES


def test_noise_level_of_white_noise():
    noise = np.random.default_rng(5).normal(100, 4.0, (300, 300))
    assert noise_level(noise) == pytest.approx(4.0, rel=0.05)


def test_grey_levels_use_bt601_weights():
    # ITU-R BT.601 luma: 0.299 R + 0.587 G + 0.114 B.
    rgb = np.zeros((1, 3, 3), dtype=np.uint8)
    rgb[0, 0, 0] = rgb[0, 1, 1] = rgb[0, 2, 2] = 200
    assert grey_levels(rgb)[0].tolist() == pytest.approx([59.8, 117.4, 22.8], abs=1e-3)


def test_too_small_a_picture_is_refused():
    with pytest.raises(ValueError):
        measure_blur(np.zeros((5, 5)))


def test_grid_positions_and_sharpest_region():
    rng = np.random.default_rng(11)
    picture = np.kron(rng.integers(0, 2, (24, 36)) * 160.0 + 40, np.ones((10, 10)))  # 240 × 360 checks
    blurred = gaussian_filter(picture, 3.0)
    blurred[:80, :120] = picture[:80, :120]  # the upper-left sixth stays sharp
    measurement = measure_blur(blurred)
    assert measurement.regions_total == 24 and len(measurement.grid) == 4 and len(measurement.grid[0]) == 6
    assert measurement.best_x < 1 / 3 and measurement.best_y < 1 / 3
    assert measurement.best_blur_px < measurement.median_blur_px


def test_the_estimator_is_pure():
    """Measuring a picture loads no database, terminal, picture or metadata library."""
    import subprocess
    import sys

    code = ("import sys, numpy as np; from sharpzone.measure.defocus import measure_blur; "
            "measure_blur(np.zeros((40, 40))); "
            "print(','.join(m for m in ('sqlalchemy', 'pandas', 'rich', 'PIL', 'exiv2', 'typer') if m in sys.modules))")
    loaded = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.strip()
    assert loaded == ""


def test_a_busy_picture_sampled_for_speed_reads_as_its_unsampled_crop():
    from sharpzone.measure.defocus import MAX_EDGE_CANDIDATES, edge_blur, region_blur

    rng = np.random.default_rng(2)
    picture = gaussian_filter(np.kron(rng.integers(0, 2, (107, 160)) * 150.0 + 50, np.ones((10, 10))), 1.5)
    whole = edge_blur(picture)
    crop = edge_blur(picture[:300, :300])
    assert len(whole.rows) < MAX_EDGE_CANDIDATES < int((np.abs(np.diff(picture, axis=1)) >= 4).sum())
    read_whole, _ = region_blur(whole, 0, whole.height, 0, whole.width)
    read_crop, _ = region_blur(crop, 0, crop.height, 0, crop.width)
    assert read_whole == pytest.approx(read_crop, rel=0.1)


def test_reblur_at_edge_pixels_matches_scipys_whole_picture_filter():
    """The re-blurred gradient computed from each pixel's own patch is the gradient of the
    whole picture filtered by scipy.ndimage.gaussian_filter (truncate 3, a general-purpose
    reference), at every pixel far enough from the border."""
    from sharpzone.measure.defocus import _border, _gradient_squared, _reblurred_gradient_squared_at

    rng = np.random.default_rng(7)
    picture = gaussian_filter(rng.normal(120, 40, (60, 80)), 1.0).astype(np.float32)
    for reblur in (1.0, 1.5, 3.0):
        border = _border(reblur)
        rows, cols = np.mgrid[border:60 - border, border:80 - border]
        rows, cols = rows.ravel(), cols.ravel()
        expected = _gradient_squared(gaussian_filter(picture, reblur, mode="nearest", truncate=3.0))[rows, cols]
        got = _reblurred_gradient_squared_at(picture, rows, cols, reblur)
        assert got == pytest.approx(expected, rel=1e-4, abs=1e-3)


def test_edge_candidates_are_every_pixel_with_a_large_one_sided_difference():
    from sharpzone.measure.defocus import _candidates

    rng = np.random.default_rng(8)
    picture = rng.normal(100, 10, (150, 90)).astype(np.float32)
    least = 12.0 / np.sqrt(2.0)
    across = np.abs(np.diff(picture, axis=1)) >= least
    down = np.abs(np.diff(picture, axis=0)) >= least
    mask = np.zeros(picture.shape, dtype=bool)
    mask[:, 1:] |= across
    mask[:, :-1] |= across
    mask[1:] |= down
    mask[:-1] |= down
    mask[:5] = mask[-5:] = False
    mask[:, :5] = mask[:, -5:] = False
    assert np.array_equal(_candidates(picture, 12.0, 5, picture.size), np.flatnonzero(mask))
    # Capped: a fixed share of them, about as many as asked.
    capped = _candidates(picture, 12.0, 5, int(mask.sum()) // 4)
    assert np.isin(capped, np.flatnonzero(mask)).all()
    assert len(capped) == pytest.approx(mask.sum() / 4, rel=0.15)


def test_region_percentile_is_numpys():
    from sharpzone.measure.defocus import _percentile_of_sorted

    rng = np.random.default_rng(9)
    for size in (1, 2, 24, 101):
        values = np.sort(rng.random(size))
        for percent in (0, 50, 63, 99, 100):
            assert _percentile_of_sorted(values, percent) == pytest.approx(np.percentile(values, percent))


@pytest.mark.parametrize("sigma", [1.5, 2.0, 3.0, 4.0, 6.0])
def test_second_derivative_extrema_of_a_gaussian_edge_are_2_root_sigma2_plus_s2_apart(sigma):
    """The spacing reading on the Gaussian edge, against the relation of J. H. Elder and
    S. W. Zucker, "Local scale control for edge detection and blur estimation", IEEE Trans.
    PAMI 20 (1998) 699–716 (from memory; it follows from the step's second derivative under
    a Gaussian filter of s being the derivative of a Gaussian of √(σ² + s²)). The pixel box
    and the second difference add a little spread of their own: within 7 %."""
    from sharpzone.measure.defocus import SPACING_SIGMA_PX, _readings, _spacing_px

    picture = _gaussian_step(sigma, size=128)
    read = _readings(picture, REBLUR_SIGMA_PX)
    spacing = _spacing_px(picture, read.rows, read.cols, read.across)
    at_edge = np.abs(read.cols - 64) <= 1
    assert float(np.nanmedian(spacing[at_edge])) == pytest.approx(
        2 * math.sqrt(sigma ** 2 + SPACING_SIGMA_PX ** 2), rel=0.07)


@pytest.mark.parametrize("diameter", [6.0, 12.0, 20.0])
def test_both_readings_give_a_large_ideal_disk_edge_back(diameter):
    """A consistency check of the spacing's table: the ideal disk edge the tables are made
    from, read through the region figure (wholly the spacing's reading from 10 px), comes back
    as its diameter (the check against blurs made outside the estimator is the silhouette in
    test_validation.py)."""
    from sharpzone.measure.defocus import _disk_edge_profile, edge_blur, region_blur

    profile = np.pad(_disk_edge_profile(diameter), 24, mode="edge")
    picture = np.repeat(profile[None, :], 64, axis=0) * 0.8 + 20
    edges = edge_blur(picture)
    read, _ = region_blur(edges, 0, edges.height, 0, edges.width)
    assert np.isfinite(edges.spacing_diameter_px).any()
    assert read == pytest.approx(diameter, rel=0.08)


@pytest.mark.parametrize("diameter", [6, 8, 12])
@pytest.mark.parametrize("line_px", [1, 2, 20])
def test_a_line_narrower_or_wider_than_the_blur_has_its_blur_circle_read_by_the_spacing(diameter, line_px):
    """A bright line on a plain ground blurred by a uniform disk (geometric optics' blur circle,
    applied by convolution outside the estimator): where the line is narrower than the blur its
    two edges share one blurred hump and the plain extrema spacing reads the line's width
    (25–60 % low for 1–2 px lines under 6–12 px disks, or not found); the bar's geometry gives
    the disk back. A line wider than the blur is two separate edges, each read as it is.
    Within 8 %."""
    from sharpzone.measure.defocus import edge_blur
    from tests.measure.pictures import disk_blur

    picture = np.full((64, 96), 40.0)
    picture[:, 48 - line_px // 2:48 - line_px // 2 + line_px] = 200.0
    edges = edge_blur(disk_blur(picture, diameter))
    spacing = edges.spacing_at(np.arange(len(edges.rows)))
    assert float(np.nanmedian(spacing)) == pytest.approx(diameter, rel=0.08)
