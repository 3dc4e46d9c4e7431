"""The blur measurement validated against known blurs applied to sharp pictures from a
general-purpose library's sample data (scikit-image's bundled pictures: objects, scenes and
textures, no people). Each test prints its table (run with ``-s`` to see it; docs/measured-blur.md
quotes the figures).

The truth is the kernel applied, a uniform disk of known diameter (geometric optics' blur
circle) or a Gaussian of known σ. A photograph is not perfectly sharp itself: its own blur and
the applied one add in quadrature (variances of independent blurs add), so up to 4 px the
expected value is the kernel combined with the picture's own reading; from 6 px on, where
the picture's own blur moves the truth by under 3 % (by 15 % on the cat picture, whose fur
reads 3.4 px of its own), the reading is also held to the kernel alone; and the horse
silhouette (a binary mask: edges as sharp as the pixel grid allows) is held to the kernel
alone at every size.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from sharpzone.analysis.blur_checks import blur_flags
from sharpzone.measure.defocus import (
    BLUR_PERCENTILE, STRONG_EDGE_SHARE, edge_blur, edge_sigmas, measure_blur, region_blur,
)
from tests.measure.pictures import OBJECTS, TEXTURES, camera_like, disk_blur, sample

pytest.importorskip("skimage")

DIAMETERS = (1, 2, 3, 4, 6, 8, 10, 12)
GAUSSIAN_SIGMAS = (1.0, 1.5, 2.0, 3.0)


def whole_picture_blur(grey) -> float:
    edges = edge_blur(grey)
    value, _ = region_blur(edges, 0, edges.height, 0, edges.width)
    return value


def whole_picture_sigma(grey) -> float:
    """Zhuo–Sim's σ over the whole picture, with the region statistic the measurement uses."""
    sigmas = edge_sigmas(grey)
    strong = sigmas.strength >= STRONG_EDGE_SHARE * np.percentile(sigmas.strength, 99)
    return float(np.percentile(sigmas.diameter_px[strong], BLUR_PERCENTILE))


def silhouette() -> np.ndarray:
    """scikit-image's horse silhouette as grey levels 28..228: a binary mask, so its edges are
    steps between neighbouring pixels, with no blur of their own."""
    from skimage import data

    return np.where(data.horse(), 28.0, 228.0)


@pytest.fixture(scope="module")
def disk_table():
    rows = []
    for name in OBJECTS + TEXTURES:
        picture = sample(name)
        own = whole_picture_blur(picture)
        for diameter in DIAMETERS:
            read = whole_picture_blur(disk_blur(picture, diameter))
            expected = math.hypot(diameter, own)
            rows.append({"picture": name, "kind": "object" if name in OBJECTS else "texture", "own_px": own,
                         "disk_px": diameter, "read_px": read, "error_vs_disk": read / diameter - 1,
                         "error_vs_combined": read / expected - 1})
    table = pd.DataFrame(rows)
    with pd.option_context("display.width", 200, "display.max_rows", 200):
        print("\nDisk blur of known diameter: read vs applied (px)")
        print(table.pivot(index="picture", columns="disk_px", values="read_px").round(1))
        print("Error against the disk combined with the picture's own blur")
        print(table.pivot(index="picture", columns="disk_px", values="error_vs_combined").map(lambda v: f"{v:+.0%}"))
    return table


def test_disk_blur_of_2_to_12_px_is_read_within_20_percent_on_pictures_of_objects(disk_table):
    objects = disk_table[(disk_table["kind"] == "object") & disk_table["disk_px"].between(2, 12)]
    errors = objects["error_vs_combined"].abs()
    worst = objects.loc[errors.idxmax()]
    print(f"objects, 2–12 px: mean |error| {errors.mean():.0%}, within 20 % in {(errors <= 0.2).mean():.0%} of cases, "
          f"worst {worst['error_vs_combined']:+.0%} ({worst['picture']}, {worst['disk_px']} px); by size: "
          + ", ".join(f"{size} px {rows['error_vs_combined'].min():+.0%}…{rows['error_vs_combined'].max():+.0%}"
                      for size, rows in objects.groupby("disk_px")))
    assert (errors <= 0.20).all()
    assert errors.mean() <= 0.10
    # From 6 px on the picture's own blur hardly matters: the kernel alone is the truth.
    large = objects[objects["disk_px"] >= 6]
    assert (large["error_vs_disk"].abs() <= 0.20).all()


def test_disk_and_gaussian_blur_of_a_sharp_silhouette_are_read_as_applied():
    """The horse silhouette has no blur of its own: every reading is held to the kernel alone.
    A Gaussian σ is also read as a disk diameter: the sharp-edge equivalence is d = 2√2 σ (the
    Gaussian whose σ is the disk's spread parameter r/√2; M. Subbarao, "Parallel depth recovery
    by changing camera parameters", ICCV 1988, from memory)."""
    from scipy.ndimage import gaussian_filter

    picture = silhouette()
    rows = []
    for diameter in DIAMETERS[1:]:
        read = whole_picture_blur(disk_blur(picture, diameter))
        rows.append({"kernel": f"disk {diameter} px", "truth_px": diameter, "read_px": read})
    for sigma in GAUSSIAN_SIGMAS:
        blurred = gaussian_filter(picture, sigma)
        rows.append({"kernel": f"Gaussian σ {sigma} px (σ read)", "truth_px": sigma, "read_px": whole_picture_sigma(blurred)})
        rows.append({"kernel": f"Gaussian σ {sigma} px (as a disk, 2√2 σ)", "truth_px": 2 * math.sqrt(2) * sigma,
                     "read_px": whole_picture_blur(blurred)})
    table = pd.DataFrame(rows)
    table["error"] = table["read_px"] / table["truth_px"] - 1
    print("\nThe horse silhouette (no blur of its own), read vs applied")
    print(table.to_string(index=False, formatters={"error": "{:+.0%}".format, "read_px": "{:.2f}".format,
                                                   "truth_px": "{:.2f}".format}))
    assert (table["error"].abs() <= 0.20).all()


def test_disk_blur_of_2_to_12_px_on_fine_textures_is_read_within_20_percent(disk_table):
    """Brick, gravel and grass: edges closer than the blur's extent, and lines narrower than it
    (brick's mortar; method version 3 read brick blurred by 6 and 8 px 20.5 % low)."""
    textures = disk_table[(disk_table["kind"] == "texture") & disk_table["disk_px"].between(2, 12)]
    errors = textures["error_vs_combined"].abs()
    worst = textures.loc[errors.idxmax()]
    print(f"textures, 2–12 px: mean |error| {errors.mean():.0%}, within 20 % in {(errors <= 0.2).mean():.0%} of "
          f"cases, worst {worst['error_vs_combined']:+.1%} ({worst['picture']}, {worst['disk_px']} px)")
    assert (errors <= 0.20).all()
    assert errors.mean() <= 0.10
    # Gravel and grass, whose own blur is small, are within 20 % of the kernel alone from 6 px.
    large = textures[(textures["disk_px"] >= 6) & (textures["picture"] != "brick")]
    assert (large["error_vs_disk"].abs() <= 0.20).all()


def test_reading_grows_with_the_blur(disk_table):
    for _name, rows in disk_table[disk_table["disk_px"] >= 2].groupby("picture"):
        read = rows.sort_values("disk_px")["read_px"].to_numpy()
        assert (np.diff(read) > 0).all()


def test_gaussian_blur_reads_as_its_sigma_in_the_papers_model():
    """Zhuo and Sim's model is a Gaussian blur; its σ comes back from the gradient ratio."""
    rows = []
    for name in OBJECTS:
        picture = sample(name)
        own = whole_picture_sigma(picture)
        from scipy.ndimage import gaussian_filter

        for sigma in GAUSSIAN_SIGMAS:
            read = whole_picture_sigma(gaussian_filter(picture, sigma))
            rows.append({"picture": name, "sigma_px": sigma, "read": read,
                         "error": read / math.hypot(sigma, own) - 1})
    table = pd.DataFrame(rows)
    print("\nGaussian blur of known σ: σ read by the gradient ratio (error vs σ combined with the picture's own)")
    print(table.pivot(index="picture", columns="sigma_px", values="error").map(lambda v: f"{v:+.0%}"))
    worst = table.loc[table["error"].abs().idxmax()]
    print(f"worst {worst['error']:+.0%} ({worst['picture']}, σ {worst['sigma_px']} px), "
          f"mean |error| {table['error'].abs().mean():.0%}")
    # The rocket's launch tower (parallel structure under the Gaussian's long tails) reads
    # highest, near 20 % at σ 3 px.
    assert (table["error"].abs() <= 0.20).all()
    assert table["error"].abs().mean() <= 0.10


def _verdicts(measurement, *, coc_mm=0.03, exposure_s=1 / 250, focal_mm=50.0):
    """The blur verdicts of one measurement on a 36 × 24 mm frame."""
    row = {
        "blur_analysed_long_px": measurement.analysed_long_px, "blur_focus_px": measurement.focus_blur_px,
        "blur_best_px": measurement.best_blur_px, "blur_best_x": measurement.best_x, "blur_best_y": measurement.best_y,
        "blur_median_px": measurement.median_blur_px, "blur_regions_measured": measurement.regions_measured,
        "format_width_mm": 36.0, "format_height_mm": 24.0, "coc_mm": coc_mm, "exposure_s": exposure_s,
        "focal_mm": focal_mm, "focal_35mm_mm": np.nan, "focus_mm": np.nan, "focus_point_x": 0.5,
    }
    frames = pd.DataFrame([row])
    flags = blur_flags(frames)
    return {flag for flag, rows in flags.items() if rows[0]}, frames.iloc[0]


# (brick reads 3.5 px when sharp, above the preview floor: too near the limit for this test;
# the rocket picture has plain sky where the focus point is: not measurable, rightly;
# chelsea's fur reads 3.4 px when sharp, above the floor: left out for the same reason)
@pytest.mark.parametrize("name", ["coffee", "gravel", "grass", "motorcycle", "coins"])
def test_half_blurred_picture_finds_the_sharp_half_and_a_focus_point_on_the_blurred_half_missed(name):
    picture = sample(name)
    half = picture.shape[1] // 2
    blurred = picture.copy()
    blurred[:, half:] = disk_blur(picture, 10)[:, half:]
    measurement = measure_blur(blurred, focus_point=(0.8, 0.5, 0.1, 0.1))
    assert measurement.best_x < 0.5
    flags, row = _verdicts(measurement)
    assert flags == {"focus-missed"}
    assert "right" not in row["blur_where"]
    # A focus point on the sharp half is sharp.
    flags, _ = _verdicts(measure_blur(blurred, focus_point=(0.2, 0.5, 0.1, 0.1)))
    assert flags == {"sharp-at-focus"}


def test_noise_and_jpeg_at_camera_levels_do_not_make_sharp_pictures_soft_all_over():
    """Previews of camera JPEGs: noise of 1–4 grey levels (an 8-bit preview after the
    camera's noise reduction, from low to high ISO; our assumption) and JPEG quality 75–95
    (common practice for embedded previews)."""
    trials = alarms = 0
    lines = []
    for index, name in enumerate(OBJECTS + TEXTURES):
        picture = sample(name)
        for noise in (1.0, 2.5, 4.0):
            for quality in (75, 85, 95):
                measurement = measure_blur(camera_like(picture, noise, quality, seed=index * 1000 + quality))
                flags, _ = _verdicts(measurement)
                trials += 1
                alarms += "soft-all-over" in flags
                lines.append(f"{name} noise {noise} q{quality}: best {measurement.best_blur_px:.1f} px")
    print(f"\nfalse 'soft-all-over' on sharp pictures: {alarms} of {trials} ({alarms / trials:.1%})")
    assert alarms / trials < 0.05


def test_blurred_pictures_with_camera_noise_are_soft_all_over():
    caught = trials = 0
    for index, name in enumerate(OBJECTS + TEXTURES):
        blurred = disk_blur(sample(name), 10)
        for noise in (1.0, 2.5):
            flags, _ = _verdicts(measure_blur(camera_like(blurred, noise, 85, seed=index)))
            trials += 1
            caught += "soft-all-over" in flags
    print(f"\n10 px disk blur with noise caught as soft-all-over: {caught} of {trials}")
    assert caught / trials >= 0.9
