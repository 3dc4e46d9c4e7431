"""Every frame's sharp zone, computed at query time in one vectorised pass.

Input: the frames DataFrame (one row per frame, see ``FRAME_COLUMNS``) as the catalogue
query returns it. Output: the same rows with the CoC used (and where it came from), near
and far limits, hyperfocal distance, total depth, magnification, effective f-number and
Airy disk. Because nothing computed is stored, a changed CoC policy or a corrected lens
applies to every frame at once.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from sharpzone.optics.coc import CocPolicy, parse_coc_policy
from sharpzone.optics.diffraction import airy_disk_diameter_mm, diffraction_limited_f_number
from sharpzone.optics.dof import MIN_F_NUMBER, sharp_zone
from sharpzone.optics.limits import DIAGONAL_DIVISOR
from sharpzone.optics.formats import SensorFormat, pixel_pitch_mm
from sharpzone.optics.macro import effective_focal_rows

if TYPE_CHECKING:
    import pandas as pd

# The columns the zone computation reads; the catalogue query provides them.
FRAME_COLUMNS = (
    "path", "shoot", "body", "lens", "focal_mm", "f_number", "focus_mm", "focus_source",
    "format_name", "format_width_mm", "format_height_mm", "format_coc_divisor", "pixel_width",
    "pupil_magnification", "shoot_coc_policy",
)
# Read when present: a lens's close focus and maximum magnification (``optics.macro``).
FOCUSING_COLUMNS = ("lens_close_focus_mm", "lens_max_magnification")

ZONE_COLUMNS = (
    "coc_mm", "coc_policy", "coc_from", "near_mm", "far_mm", "hyperfocal_mm", "total_mm",
    "magnification", "effective_f_number", "airy_disk_mm", "diffraction_limited_f_number",
    "effective_focal_mm",
)


def _policy_for_rows(frames: pd.DataFrame, override: CocPolicy | None) -> tuple[list[str], list[str]]:
    """Per row: the policy's text form and where it came from (command, shoot or format)."""
    if override is not None:
        return [override.spec] * len(frames), ["command"] * len(frames)
    shoot_policy = frames["shoot_coc_policy"].where(frames["shoot_coc_policy"].notna(), None)
    specs, origins = [], []
    for spec in shoot_policy:
        if spec:
            specs.append(str(spec))
            origins.append("shoot")
        else:
            specs.append("diagonal")
            origins.append("format")
    return specs, origins


def _count(value) -> int | None:
    return int(value) if value == value and value else None


def circles_of_confusion(frames: pd.DataFrame, override: CocPolicy | None = None) -> tuple[np.ndarray, list[str], list[str]]:
    """The CoC (mm) of each frame: NaN where the format is unknown or the policy can't apply.

    Computed once per distinct (policy, format, pixel width) combination, not per row.
    """
    import pandas as pd

    specs, origins = _policy_for_rows(frames, override)
    keys = pd.DataFrame({
        "spec": specs,
        "name": frames["format_name"].to_numpy(),
        "width": frames["format_width_mm"].to_numpy(dtype=float),
        "height": frames["format_height_mm"].to_numpy(dtype=float),
        "divisor": frames["format_coc_divisor"].to_numpy(dtype=float),
        "pixels": pd.to_numeric(frames["pixel_width"], errors="coerce").to_numpy(dtype=float),
        "pixels_high": pd.to_numeric(frames.get("pixel_height", pd.Series(np.nan, index=frames.index)),
                                     errors="coerce").to_numpy(dtype=float),
    })
    coc = np.full(len(frames), np.nan)
    for (spec, name, width, height, divisor, pixels, pixels_high), index in keys.groupby(
        ["spec", "name", "width", "height", "divisor", "pixels", "pixels_high"], dropna=False, sort=False
    ).indices.items():
        if not isinstance(name, str) or not (width > 0 and height > 0):
            continue
        fmt = SensorFormat(name, float(width), float(height), float(divisor) if divisor > 0 else DIAGONAL_DIVISOR)
        pitch = pixel_pitch_mm(fmt, _count(pixels), _count(pixels_high))
        policy = parse_coc_policy(spec)  # a policy it cannot read is an error, never an unknown CoC
        try:
            coc[index] = policy.coc_mm(fmt, pitch)
        except ValueError:
            continue  # e.g. a pixel-pitch policy on a body whose pixel width is unknown
    return coc, specs, origins


_MISSING_WORDS = ("body unknown", "sensor format unknown", "focal length unknown", "f-number unknown")


def _settings_missing(frames: pd.DataFrame, focal: np.ndarray, f_number: np.ndarray) -> list[str | None]:
    """Per frame, what keeps its zone from being computed, in words ("sensor format unknown"
    for a body registered without one, until ``body edit --format`` sets it); ``None`` if nothing."""
    import pandas as pd

    body_known = (frames["body"].notna() if "body" in frames else pd.Series(False, index=frames.index)).to_numpy()
    format_known = frames["format_name"].notna().to_numpy()
    flags = np.column_stack([~body_known, body_known & ~format_known, ~(focal > 0), ~(f_number > 0)])
    codes = flags.astype(np.int64) @ (1 << np.arange(len(_MISSING_WORDS), dtype=np.int64)) if len(frames) else []
    words = {int(code): ", ".join(w for i, w in enumerate(_MISSING_WORDS) if code >> i & 1) or None
             for code in np.unique(codes)}
    return [words[int(code)] for code in codes]


def add_zones(frames: pd.DataFrame, coc_policy: CocPolicy | None = None) -> pd.DataFrame:
    """``frames`` with the ``ZONE_COLUMNS`` added (mm, from the sensor plane).

    Rows whose focal length, f-number or format is unknown get NaN everywhere and say which
    in ``settings_missing`` (e.g. "sensor format unknown"); rows with an unknown focus
    distance still get CoC, hyperfocal distance and Airy disk.
    ``effective_focal_mm`` is the focal length the zone was computed with.
    """
    result = frames.copy()
    count = len(result)
    coc, specs, origins = circles_of_confusion(result, coc_policy)
    f_number = result["f_number"].to_numpy(dtype=float)
    focus = result["focus_mm"].to_numpy(dtype=float)
    # The focal length the lens had at the recorded focus: the nominal one unless the lens
    # records a maximum magnification (then shorter close up, as internal focusing makes it).
    focal = effective_focal_rows(*(result[c].to_numpy(dtype=float) if c in result else np.full(count, np.nan)
                                   for c in ("focal_mm", *FOCUSING_COLUMNS)), focus)
    pupil = result["pupil_magnification"].fillna(1.0).to_numpy(dtype=float)
    settings_known = (focal > 0) & (f_number >= MIN_F_NUMBER) & (coc > 0)
    focus_known = settings_known & (focus >= 4 * np.where(focal > 0, focal, np.inf))

    columns = {name: np.full(count, np.nan) for name in ZONE_COLUMNS if name not in ("coc_policy", "coc_from")}
    columns["coc_mm"] = coc
    columns["effective_focal_mm"] = focal
    if settings_known.any():
        known = settings_known
        nominal = result["focal_mm"].to_numpy(dtype=float)  # the hyperfocal distance is a far-focus figure
        columns["hyperfocal_mm"][known] = sharp_zone(
            nominal[known], f_number[known], coc[known], np.inf, reference="sensor").hyperfocal_mm
        columns["diffraction_limited_f_number"][known] = diffraction_limited_f_number(coc[known])
        columns["effective_f_number"][known] = f_number[known]
    if focus_known.any():
        rows = focus_known
        zone = sharp_zone(focal[rows], f_number[rows], coc[rows], focus[rows], reference="sensor",
                          pupil_magnification=pupil[rows])
        columns["near_mm"][rows] = zone.near_mm
        columns["far_mm"][rows] = zone.far_mm
        columns["total_mm"][rows] = zone.total_mm
        columns["magnification"][rows] = zone.magnification
        columns["effective_f_number"][rows] = zone.effective_f_number
    has_n = ~np.isnan(columns["effective_f_number"])
    columns["airy_disk_mm"][has_n] = airy_disk_diameter_mm(columns["effective_f_number"][has_n])
    result["settings_missing"] = _settings_missing(result, focal, f_number)
    for name in ZONE_COLUMNS:
        if name == "coc_policy":
            result[name] = specs
        elif name == "coc_from":
            result[name] = origins
        else:
            result[name] = columns[name]
    return result
