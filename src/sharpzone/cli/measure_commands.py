"""``sharpzone measure``: the blur of ingested frames, measured from their previews."""

from __future__ import annotations

import sys
from typing import Annotated, Optional

import typer

from sharpzone.cli.state import catalog_location, echo_json


def register(app: typer.Typer) -> None:
    app.command("measure")(measure)


def measure(
    ctx: typer.Context,
    shoot: Annotated[Optional[str], typer.Option("--shoot", help="Only this shoot's frames; default: every shoot.")] = None,
    again: Annotated[bool, typer.Option("--again", help="Measure frames again even when the stored measurement is current.")] = False,
    jobs: Annotated[Optional[int], typer.Option("--jobs", help="Worker processes decoding and measuring; default: 2.")] = None,
    json: Annotated[bool, typer.Option("--json", help="Print the JSON summary (the machine interface) instead of text.")] = False,
) -> None:
    """Measure the blur of ingested frames from their embedded previews (an estimate, for
    'check' to judge against the CoC); frames measured by this version are skipped. Nothing is
    deleted or written to an image file."""
    from sharpzone.catalog.engine import open_catalog
    from sharpzone.measure.service import measure_frames
    from sharpzone.report.ingest_render import ingest_progress
    from sharpzone.report.measure_render import measure_json, render_measure

    show_progress = not json and sys.stderr.isatty()
    with open_catalog(catalog_location(ctx)) as catalog, ingest_progress(show_progress) as progress:
        summary = measure_frames(catalog, shoot=shoot, again=again, jobs=jobs, progress=progress)
    if json:
        echo_json(measure_json(summary))
    else:
        render_measure(summary)
    if summary.interrupted:
        raise typer.Exit(130)
