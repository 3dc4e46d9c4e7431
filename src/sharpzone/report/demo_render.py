"""What ``sharpzone demo`` prints: each shoot's check, then where every output lies."""

from __future__ import annotations

from typing import TYPE_CHECKING

from sharpzone.report.console import stdout_console, styled
from sharpzone.report.frames_render import render_check

if TYPE_CHECKING:
    from sharpzone.demo import DemoResult


def render_demo(result: DemoResult, *, imperial: bool = False) -> None:
    console = stdout_console()
    console.rule(styled(result.title, "bold"))
    for shoot in result.shoots:
        summary = shoot.ingest
        console.print()
        console.rule(f"Shoot: {shoot.name}", style="dim")
        console.print(f"Ingested {summary.added} frames"
                      + (f"; {len(summary.failed)} could not be read: "
                         + "; ".join(f"{path.rsplit('/', 1)[-1]} ({reason})" for path, reason in summary.failed)
                         if summary.failed else ""))
        if shoot.measure is not None:
            console.print(f"Measured the blur of {shoot.measure.measured} frames from their pixels (an estimate).")
        render_check(shoot.check, imperial=imperial, console=console)
    console.print()
    console.rule("Where everything is", style="dim")
    console.print(f"Demo folder:      {result.folder}")
    console.print(f"Its catalogue:    {result.catalog_path}  (use it with --catalog)")
    console.print(f"Image cards:      {result.folder / 'cards'}")
    for shoot in result.shoots:
        console.print(f"Check report:     {shoot.report_path}")
        if shoot.page_path is not None:
            console.print(f"Report page:      {shoot.page_path}")
    for sheet in result.sheets:
        console.print(f"Sharp-zone sheet: {sheet}")
    console.print()
    console.print(f"Try: sharpzone --catalog {result.catalog_path} frames --shoot '{result.shoots[0].name}'")
