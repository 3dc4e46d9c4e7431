"""The words for each verdict: what went wrong with a frame and what would have worked.

The verdicts and their remedy numbers come from ``analysis.checks``; this module only says
them, with units, in metric or imperial.
"""

from __future__ import annotations

import numpy as np

from sharpzone.units import format_distance, format_f_number


def _value(row, name):
    value = row.get(name)
    try:
        value = float(value)
    except (TypeError, ValueError):
        return None
    return None if np.isnan(value) else value


def describe_bracket(row, *, imperial: bool = False) -> str | None:
    """"2.80–3.10 m, from Exif.Some.Key" for a frame whose focus distance is a bracket; else None."""
    nearest, farthest = _value(row, "focus_nearest_mm"), _value(row, "focus_farthest_mm")
    if nearest is None or farthest is None or not farthest > nearest * (1 + 1e-9):
        return None
    text = f"{format_distance(nearest, imperial=imperial)}–{format_distance(farthest, imperial=imperial)}"
    key = row.get("focus_key")
    return f"{text}, from {key}" if isinstance(key, str) and key else text


def _stopping_down(row, dist, over: str = "") -> str:
    """"f/11 would have held it" (and a refocus that saves a stop, as the alternative)."""
    text = f"{format_f_number(row['needed_f_number'])} would have held it{over}"
    better = _value(row, "better_focus_mm")
    if better is not None:
        text += f" (or focus at {dist(better)} with {format_f_number(row['better_f_number'])})"
    return text


def _stack(row, required: str) -> str:
    """The stack remedy, with the unreachable single-frame f-number as its reason."""
    single = _value(row, "single_frame_f_number")
    which = "this lens's" if row.get("lens_min_known", False) else "the usual"
    if single is None:
        reason = "one frame would need more than f/128"
    elif single > row["max_f_number"] * (1 + 1e-9):
        reason = f"one frame would need {format_f_number(single)}, past {which} narrowest {format_f_number(row['max_f_number'])}"
    else:
        reason = (f"one frame would need {format_f_number(single)}, into diffraction beyond about "
                  f"f/{row['diffraction_f_number']:.0f}")
    frames = _value(row, "stack_frames")
    if frames is None or frames < 0:
        return f"{reason}, and a focus stack would need too many frames; step back or widen the lens"
    return (f"{reason}; a focus stack of {int(frames)} frames at {format_f_number(row['stack_f_number'])} "
            f"would hold {required}")


def describe_flag(flag: str, row, *, imperial: bool = False) -> str:
    """One sentence for people: what went wrong with this frame and what would have worked."""
    def dist(value):
        return format_distance(value, imperial=imperial)

    if flag == "distance-unknown":
        recorded = row.get("focus_mm")
        if recorded is not None and recorded == recorded:
            return (f"recorded focus distance {dist(recorded)} is nearer than a {row['focal_mm']:g} mm lens can "
                    "focus (4 × its focal length from the sensor) — cannot judge; check the lens's focal length")
        hint = row.get("subject_distance_range")
        recorded_hint = (f" (the camera noted only a '{hint}' subject)" if isinstance(hint, str) and hint else "")
        return (f"focus distance unknown{recorded_hint} — cannot judge; give it with --distances FILE.csv at "
                "ingest or a sidecar")
    if flag == "settings-unknown":
        return "focal length, f-number or sensor format unknown — cannot judge; confirm the body and lens"
    if flag == "no-requirement":
        return "nothing says what had to be sharp — set the shoot's plan or give --near/--far or --front/--back"
    required = f"{dist(row['required_near_mm'])}–{dist(row['required_far_mm'])}"
    bracket = describe_bracket(row, imperial=imperial)
    over = " for any distance in the camera's bracket" if bracket else ""
    if flag == "too-wide-open":
        return f"shot too wide open for {required}: {_stopping_down(row, dist, over)}"
    if flag == "focus-misplaced":
        if row.get("remedy") == "focus-on-subject":
            planned = _value(row, "better_focus_mm")
            where = f" at about {dist(planned)}, where the plan puts it," if planned is not None else ""
            return (f"focused at infinity: the camera missed the subject — focus on the subject{where} and "
                    "check that the autofocus point sits on it")
        return (f"focus placed wrong for {required}: focusing at {dist(row['better_focus_mm'])} with "
                f"{format_f_number(row['better_f_number'])} would have held it")
    if flag == "out-of-reach":
        return f"out of reach at {row['focal_mm']:g} mm with one frame: {_stack(row, required)}"
    if flag == "distance-uncertain":
        share = _value(row, "holds_share") or 0.0
        text = (f"focus distance known only as {bracket or 'a bracket'}: the zone holds {required} over "
                f"{share:.0%} of it")
        remedy = row.get("remedy")
        if remedy == "stop-down":
            return f"{text}; {_stopping_down(row, dist, ' for any distance in it')}"
        if remedy == "refocus":
            return (f"{text}; focusing at {dist(row['better_focus_mm'])} with "
                    f"{format_f_number(row['better_f_number'])} (a distance set, not measured) would have held it")
        return f"{text}; {_stack(row, required)}"
    if flag == "past-diffraction":
        return (f"stopped down past the diffraction limit (about f/{row['diffraction_f_number']:.1f} here): "
                "the plane of focus is softer than the CoC allows")
    if flag == "outside-plan":
        return f"subject at {dist(row['focus_mm'])} lies outside the zone the plan's settings give"
    raise ValueError(f"unknown flag {flag!r}")
