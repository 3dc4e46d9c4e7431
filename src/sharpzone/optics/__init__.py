"""The optics core: pure, numpy-vectorised functions over millimetres. No files, no database,
no terminal. Every function takes a scalar or an array column through the same code."""

import importlib

# The public names, loaded on first use (PEP 562): importing one light submodule, such as
# the CoC policies for a command's help text, does not pull in numpy with the rest.
_EXPORTS = {
    "DEFAULT_POLICY": "sharpzone.optics.coc",
    "CocPolicy": "sharpzone.optics.coc",
    "DiagonalFraction": "sharpzone.optics.coc",
    "FixedCoc": "sharpzone.optics.coc",
    "PixelPitch": "sharpzone.optics.coc",
    "PrintIntent": "sharpzone.optics.coc",
    "parse_coc_policy": "sharpzone.optics.coc",
    "airy_disk_diameter_mm": "sharpzone.optics.diffraction",
    "diffraction_limited_f_number": "sharpzone.optics.diffraction",
    "SharpZone": "sharpzone.optics.dof",
    "blur_diameter_mm": "sharpzone.optics.dof",
    "closeup_total_depth_mm": "sharpzone.optics.dof",
    "effective_f_number": "sharpzone.optics.dof",
    "hyperfocal_mm": "sharpzone.optics.dof",
    "lens_to_sensor_distance": "sharpzone.optics.dof",
    "magnification_at": "sharpzone.optics.dof",
    "sensor_to_lens_distance": "sharpzone.optics.dof",
    "sharp_zone": "sharpzone.optics.dof",
    "SensorFormat": "sharpzone.optics.formats",
    "MacroSpec": "sharpzone.optics.macro",
    "check_macro_spec": "sharpzone.optics.macro",
    "effective_focal_mm": "sharpzone.optics.macro",
    "parse_magnification": "sharpzone.optics.magnification",
    "sharp_zone_focusing": "sharpzone.optics.macro",
    "FocusPlan": "sharpzone.optics.planning",
    "StackPlan": "sharpzone.optics.planning",
    "best_focus_for_range": "sharpzone.optics.planning",
    "f_number_for_range": "sharpzone.optics.planning",
    "plan_focus_stack": "sharpzone.optics.planning",
    "stack_frame_counts": "sharpzone.optics.planning",
    "Stop": "sharpzone.optics.stops",
    "marked_f_numbers": "sharpzone.optics.stops",
    "round_up_to_stop": "sharpzone.optics.stops",
    "stop_series": "sharpzone.optics.stops",
}


def __getattr__(name: str):
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'sharpzone.optics' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)


__all__ = [
    "CocPolicy", "DEFAULT_POLICY", "DiagonalFraction", "FixedCoc", "PixelPitch", "PrintIntent",
    "parse_coc_policy", "airy_disk_diameter_mm", "diffraction_limited_f_number", "SharpZone",
    "blur_diameter_mm", "closeup_total_depth_mm", "effective_f_number", "hyperfocal_mm",
    "lens_to_sensor_distance", "magnification_at", "sensor_to_lens_distance", "sharp_zone",
    "SensorFormat", "MacroSpec", "check_macro_spec", "effective_focal_mm", "parse_magnification",
    "sharp_zone_focusing", "FocusPlan", "StackPlan", "best_focus_for_range", "f_number_for_range",
    "plan_focus_stack", "stack_frame_counts", "Stop", "marked_f_numbers", "round_up_to_stop",
    "stop_series",
]
