"""Terminal rendering with rich: one-off answers (dof, stack) and shared table helpers."""

from __future__ import annotations

import math
import sys

from rich.console import Console
from rich.table import Table

from sharpzone.analysis.setting import SettingReport, StackReport
from sharpzone.units import format_distance, format_f_number, format_length_mm


def stdout_console() -> Console:
    """A console for results; plain text (no colour codes) when piped."""
    return Console(file=sys.stdout, highlight=False, soft_wrap=False)


def stderr_console() -> Console:
    """A console for progress and warnings, which must never mix into piped results."""
    return Console(file=sys.stderr, highlight=False)


def _reference_phrase(reference: str) -> str:
    return "from the sensor plane" if reference == "sensor" else "from the lens"


def render_setting(report: SettingReport, *, imperial: bool = False, console: Console | None = None) -> None:
    """The sharp zone of one setting as a short titled table with notes below."""
    console = console or stdout_console()
    zone = report.zone

    def dist(value_mm: float) -> str:
        return format_distance(value_mm, imperial=imperial)

    title = (
        f"{report.focal_mm:g} mm at {format_f_number(report.f_number)}, focused at {dist(report.focus_mm)} "
        f"({_reference_phrase(report.reference)})"
    )
    table = Table(title=title, show_header=False, box=None, pad_edge=False, title_justify="left")
    table.add_column(style="bold")
    table.add_column()
    table.add_row("Near limit", dist(zone.near_mm))
    table.add_row("Far limit", dist(zone.far_mm))
    depth = dist(zone.total_mm)
    behind = dist(zone.behind_mm)
    table.add_row("Depth of field", f"{depth}  ({dist(zone.front_mm)} in front, {behind} behind)")
    table.add_row("Hyperfocal distance", dist(zone.hyperfocal_mm))
    coc = report.coc
    sensor = coc.sensor.name if coc.sensor else "—"
    table.add_row("Circle of confusion", f"{format_length_mm(coc.coc_mm)}  ({coc.describe()})")
    table.add_row("Sensor format", sensor)
    table.add_row("Airy disk", f"{format_length_mm(report.airy_disk_mm)}  (diffraction limit "
                  f"f/{report.diffraction_limited_f_number:.1f} for this CoC)")
    if report.is_closeup:
        table.add_row("Magnification", f"{zone.magnification:.3g}×")
        table.add_row("Effective f-number", f"f/{zone.effective_f_number:.1f}")
        if report.closeup_total_mm is not None:
            table.add_row("Close-up depth (approx.)", dist(report.closeup_total_mm))
    console.print(table)
    for note in report.notes:
        console.print(f"• {note}")


def stack_digits(report: StackReport) -> int:
    """Significant figures that keep neighbouring frames apart: the farthest finite distance
    shown with the smallest step (or depth) to about two figures; 3 to 7."""
    plan = report.plan
    finite = [d for d in (*plan.focus_mm, *plan.near_mm, *plan.far_mm) if math.isfinite(d)]
    finest = [s for s in report.steps_mm if math.isfinite(s) and s > 0]
    finest += [far - near for near, far in zip(plan.near_mm, plan.far_mm) if math.isfinite(far) and far > near]
    if not finite or not finest:
        return 3
    return min(7, max(3, math.ceil(math.log10(max(finite) / min(finest))) + 1))


def render_stack(report: StackReport, *, imperial: bool = False, console: Console | None = None) -> None:
    """A focus-stack plan: one row per frame, near to far, with the step from the frame
    before, the working f-number, and (for a finite range) the same stack on a focusing rail."""
    console = console or stdout_console()
    plan = report.plan
    digits = stack_digits(report)

    def dist(value_mm: float) -> str:
        return format_distance(value_mm, imperial=imperial, digits=digits)

    def short(value_mm: float) -> str:
        return format_distance(value_mm, imperial=imperial)

    frames = "frame" if plan.frame_count == 1 else "frames"
    title = (
        f"{plan.frame_count} {frames} at {format_f_number(plan.f_number)} with {report.focal_mm:g} mm hold "
        f"{short(report.near_target_mm)} – {short(report.far_target_mm)}"
    )
    caption = (f"distances {_reference_phrase(plan.reference)}; CoC {format_length_mm(report.coc.coc_mm)} "
               f"({report.coc.describe()}); working f-number N (1 + m/P)")
    console.print(title, style="bold")
    table = Table()
    for head in ("#", "Focus at", "Step", "Sharp from", "Sharp to", "Scale", "Working"):
        table.add_column(head, justify="right", no_wrap=True)
    steps = ("—", *(format_distance(step, imperial=imperial, digits=2) for step in report.steps_mm))
    soft = report.diffraction_soft or (False,) * plan.frame_count
    for number, (focus, near, far) in enumerate(zip(plan.focus_mm, plan.near_mm, plan.far_mm), start=1):
        m = plan.magnification[number - 1] if plan.magnification else float("nan")
        working = plan.effective_f_number[number - 1] if plan.effective_f_number else plan.f_number
        mark = " ‡" if soft[number - 1] else ""
        table.add_row(str(number), dist(focus), steps[number - 1], dist(near), dist(far), f"{m:.3g}×",
                      f"f/{working:.1f}{mark}")
    console.print(table)
    console.print(caption)
    if plan.frame_count > 1:
        console.print(f"• neighbouring frames share {plan.overlap:.0%} of their depth")
    if math.isinf(plan.focus_mm[-1]):
        console.print("• the last frame is focused at infinity")
    rail = report.rail
    if rail is not None:
        console.print(f"• on a focusing rail: focus once at {dist(rail.focus_mm)}, then move the camera "
                      f"{format_distance(rail.step_mm, imperial=imperial, digits=2)} per frame, {rail.frame_count} "
                      f"frames (each {format_distance(rail.depth_mm, imperial=imperial, digits=2)} deep)")
    if any(soft):
        console.print("• ‡ diffraction at the working f-number (Airy disk 2.44 λ N, 550 nm) is wider than the CoC")
    for note in report.notes:
        console.print(f"• {note}")
