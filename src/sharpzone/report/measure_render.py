"""What ``sharpzone measure`` prints: how many frames were measured, what failed, cautions."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from sharpzone.report.console import stdout_console
from sharpzone.report.frames_render import BLUR_CAUTION

if TYPE_CHECKING:
    from sharpzone.measure.service import MeasureSummary


def measure_json(summary: MeasureSummary) -> dict[str, Any]:
    """``sharpzone measure --json``."""
    return {
        "method": summary.method, "method_version": summary.method_version, "measured": summary.measured,
        "current": summary.current, "failed": [{"path": path, "reason": reason} for path, reason in summary.failed],
        "interrupted": summary.interrupted, "seconds": round(summary.seconds, 3),
        "note": "an estimate from a small preview; you decide what to reject; nothing is deleted or written to an image file",
    }


def render_measure(summary: MeasureSummary, console=None) -> None:
    console = console or stdout_console()
    if summary.interrupted:
        console.print(f"Interrupted: {summary.measured} measurements saved; run 'sharpzone measure' again to finish.")
    else:
        console.print(f"Measured the blur of {summary.measured} frames in {summary.seconds:.1f} s"
                      f" ({summary.current} already current; method {summary.method} v{summary.method_version}).")
    for path, reason in summary.failed:
        console.print(f"  could not measure {path}: {reason}", markup=False)
    console.print("See the verdicts with 'sharpzone check'. " + BLUR_CAUTION, style="dim")
