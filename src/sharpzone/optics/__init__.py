"""The optics core: pure, numpy-vectorised functions over millimetres. No files, no database,
no terminal. Every function takes a scalar or an array column through the same code."""

from sharpzone.optics.coc import (
    DEFAULT_POLICY,
    CocPolicy,
    DiagonalFraction,
    FixedCoc,
    PixelPitch,
    PrintIntent,
    parse_coc_policy,
)
from sharpzone.optics.diffraction import airy_disk_diameter_mm, diffraction_limited_f_number
from sharpzone.optics.dof import (
    SharpZone,
    blur_diameter_mm,
    closeup_total_depth_mm,
    effective_f_number,
    hyperfocal_mm,
    lens_to_sensor_distance,
    magnification_at,
    sensor_to_lens_distance,
    sharp_zone,
)
from sharpzone.optics.formats import SensorFormat
from sharpzone.optics.planning import (
    FocusPlan,
    StackPlan,
    best_focus_for_range,
    f_number_for_range,
    plan_focus_stack,
    stack_frame_counts,
)
from sharpzone.optics.stops import Stop, marked_f_numbers, round_up_to_stop, stop_series

__all__ = [
    "CocPolicy", "DEFAULT_POLICY", "DiagonalFraction", "FixedCoc", "PixelPitch", "PrintIntent",
    "parse_coc_policy", "airy_disk_diameter_mm", "diffraction_limited_f_number", "SharpZone",
    "blur_diameter_mm", "closeup_total_depth_mm", "effective_f_number", "hyperfocal_mm",
    "lens_to_sensor_distance", "magnification_at", "sensor_to_lens_distance", "sharp_zone",
    "SensorFormat", "FocusPlan", "StackPlan", "best_focus_for_range", "f_number_for_range",
    "plan_focus_stack", "stack_frame_counts", "Stop", "marked_f_numbers", "round_up_to_stop",
    "stop_series",
]
