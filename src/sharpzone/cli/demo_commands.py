"""``sharpzone demo``: the invented scenario end to end, in a folder of its own."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer


def register(app: typer.Typer) -> None:
    app.command("demo")(demo)


def demo(
    folder: Annotated[Path, typer.Option("--folder", help="Where to write the demo (replaced if it holds an earlier demo).")] = Path("sharpzone-demo"),
    imperial: Annotated[bool, typer.Option("--imperial", help="Show distances in feet and inches.")] = False,
) -> None:
    """Run an invented wedding shoot end to end: cards with EXIF, a catalogue of its own,
    ingest, check against each shoot's plan, and sharp-zone sheets. Your catalogue is not touched."""
    from sharpzone.demo import run_demo
    from sharpzone.report.demo_render import render_demo

    render_demo(run_demo(folder), imperial=imperial)
