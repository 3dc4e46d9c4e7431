"""The words for each verdict: what went wrong with a frame and what would have worked.

The verdicts and their remedy numbers come from ``analysis.checks``; this module only says
them, with units, in metric or imperial.
"""

from __future__ import annotations

import numpy as np

from sharpzone.units import format_distance, format_f_number


def describe_flag(flag: str, row, *, imperial: bool = False) -> str:
    """One sentence for people: what went wrong with this frame and what would have worked."""
    def dist(value):
        return format_distance(value, imperial=imperial)

    if flag == "distance-unknown":
        recorded = row.get("focus_mm")
        if recorded is not None and recorded == recorded:
            return (f"recorded focus distance {dist(recorded)} is nearer than a {row['focal_mm']:g} mm lens can "
                    "focus (4 × its focal length from the sensor) — cannot judge; check the lens's focal length")
        return ("focus distance unknown — cannot judge; give it with --distances FILE.csv at ingest "
                "or a sidecar")
    if flag == "settings-unknown":
        return "focal length, f-number or sensor format unknown — cannot judge; confirm the body and lens"
    if flag == "no-requirement":
        return "nothing says what had to be sharp — set the shoot's plan or give --near/--far or --front/--back"
    required = f"{dist(row['required_near_mm'])}–{dist(row['required_far_mm'])}"
    if flag == "too-wide-open":
        text = f"shot too wide open for {required}: {format_f_number(row['needed_f_number'])} would have held it"
        notes = []
        if row["needed_f_number"] > row["max_f_number"]:
            which = "this lens's" if row.get("lens_min_known", False) else "the usual"
            notes.append(f"past {which} narrowest {format_f_number(row['max_f_number'])}")
        if row["needed_f_number"] > row["diffraction_f_number"]:
            notes.append(f"into diffraction beyond about f/{row['diffraction_f_number']:.0f}")
        return text + (f" ({'; '.join(notes)})" if notes else "")
    if flag == "focus-misplaced":
        return (f"focus placed wrong for {required}: focusing at {dist(row['better_focus_mm'])} with "
                f"{format_f_number(row['better_f_number'])} would have held it")
    if flag == "out-of-reach":
        frames = row["stack_frames"]
        if frames is None or np.isnan(frames) or frames < 0:
            return f"out of reach at {row['focal_mm']:g} mm: {required} cannot be held; step back or widen the lens"
        return (f"out of reach at {row['focal_mm']:g} mm with one frame: a focus stack of {int(frames)} frames "
                f"at {format_f_number(row['f_number'])} would hold {required}")
    if flag == "past-diffraction":
        return (f"stopped down past the diffraction limit (about f/{row['diffraction_f_number']:.1f} here): "
                "the plane of focus is softer than the CoC allows")
    if flag == "outside-plan":
        return f"subject at {dist(row['focus_mm'])} lies outside the zone the plan's settings give"
    raise ValueError(f"unknown flag {flag!r}")


def flag_word(flag: str) -> str:
    """A verdict code as words for a heading or a label: ``too-wide-open`` → ``Too wide open``.
    Any code reads this way, so a verdict added later shows without an edit here."""
    words = flag.replace("-", " ").strip()
    return words[:1].upper() + words[1:]
