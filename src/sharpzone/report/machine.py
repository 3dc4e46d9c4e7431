"""The machine interface's JSON objects (documented in README.md); renderers only."""

from __future__ import annotations

from typing import Any

from sharpzone.analysis.setting import SettingReport, StackReport
from sharpzone.report.jsonout import metres


def setting_json(report: SettingReport) -> dict[str, Any]:
    """``sharpzone dof --json``: distances in metres (``_m``), small lengths in mm (``_mm``)."""
    zone = report.zone
    return {
        "hyperfocal_m": metres(zone.hyperfocal_mm),
        "near_m": metres(zone.near_mm),
        "far_m": metres(zone.far_mm),
        "total_m": metres(zone.total_mm),
        "front_m": metres(zone.front_mm),
        "behind_m": metres(zone.behind_mm),
        "coc_mm": report.coc.coc_mm,
        "coc_policy": report.coc.policy.spec,
        "sensor": report.coc.sensor.name if report.coc.sensor else None,
        "focal_mm": report.focal_mm,
        "f_number": report.f_number,
        "focus_m": metres(report.focus_mm),
        "reference": report.reference,
        "pupil_magnification": report.pupil_magnification,
        "magnification": zone.magnification,
        "effective_f_number": zone.effective_f_number,
        "closeup_total_m": metres(report.closeup_total_mm),
        "airy_disk_mm": report.airy_disk_mm,
        "diffraction_limited_f_number": report.diffraction_limited_f_number,
        "past_diffraction_limit": report.past_diffraction_limit,
        "notes": list(report.notes),
    }


def stack_json(report: StackReport) -> dict[str, Any]:
    """``sharpzone stack --json``: the frames near to far, distances in metres."""
    plan = report.plan
    return {
        "frame_count": plan.frame_count,
        "f_number": plan.f_number,
        "focal_mm": report.focal_mm,
        "near_target_m": metres(report.near_target_mm),
        "far_target_m": metres(report.far_target_mm),
        "coc_mm": report.coc.coc_mm,
        "coc_policy": report.coc.policy.spec,
        "sensor": report.coc.sensor.name if report.coc.sensor else None,
        "reference": plan.reference,
        "overlap": plan.overlap,
        "max_magnification": report.macro.max_magnification if report.macro else None,
        "close_focus_m": metres(report.macro.close_focus_mm) if report.macro else None,
        "frames": [
            {"focus_m": metres(focus), "near_m": metres(near), "far_m": metres(far),
             "step_mm": step, "magnification": m, "effective_f_number": working, "focal_mm": focal,
             "airy_disk_mm": airy, "diffraction_soft": soft}
            for focus, near, far, step, m, working, focal, airy, soft in zip(
                plan.focus_mm, plan.near_mm, plan.far_mm, (None, *report.steps_mm), plan.magnification,
                plan.effective_f_number, plan.focal_mm, report.airy_disk_mm, report.diffraction_soft)
        ],
        "rail": None if report.rail is None else {
            "focus_m": metres(report.rail.focus_mm), "step_mm": report.rail.step_mm,
            "depth_mm": report.rail.depth_mm, "frame_count": report.rail.frame_count,
        },
        "notes": list(report.notes),
    }
