"""``sharpzone ingest``: read a shoot's EXIF into the catalogue."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated, Optional

import typer

from sharpzone.cli.state import catalog_location, echo_json


def register(app: typer.Typer) -> None:
    app.command("ingest")(ingest)


def ingest(
    ctx: typer.Context,
    paths: Annotated[list[Path], typer.Argument(help="Image files or folders (searched recursively).", show_default=False)],
    shoot: Annotated[Optional[str], typer.Option("--shoot", help="Shoot to file every frame found under (created if new), moving frames that belong to another shoot; default: the shoot these files are already in, else the first folder's name.")] = None,
    jobs: Annotated[Optional[int], typer.Option("--jobs", help="Worker processes reading EXIF; default: one per core.")] = None,
    distances: Annotated[Optional[Path], typer.Option("--distances", help="CSV of file name or path → focus distance (with units); wins over EXIF.")] = None,
    prune: Annotated[bool, typer.Option("--prune", help="Remove catalogued frames whose files have vanished.")] = False,
    strict: Annotated[bool, typer.Option("--strict", help="Exit with 1 if any file could not be read.")] = False,
    json: Annotated[bool, typer.Option("--json", help="Print the JSON summary (the machine interface) instead of a table.")] = False,
) -> None:
    """Read the metadata of every image under each PATH into the catalogue (raw files of every
    major maker, DNG, HEIC/HEIF, AVIF, JPEG, TIFF, PNG, WebP): new and changed files are read,
    unchanged ones skipped, damaged ones reported and skipped.

    Focus distance: the --distances CSV, else EXIF SubjectDistance, else the camera's maker
    note (with its bracket), else an XMP sidecar. Ctrl-C stops in order: what was saved is
    kept, and the same command finishes the job."""
    from sharpzone.catalog.location import display_url, resolve_catalog_url
    from sharpzone.ingest.pipeline import ingest_paths
    from sharpzone.report.ingest_render import ingest_json, ingest_progress, render_ingest

    show_progress = not json and sys.stderr.isatty()
    location = catalog_location(ctx)
    with ingest_progress(show_progress) as progress:
        summary = ingest_paths(location, [str(p) for p in paths], shoot=shoot, jobs=jobs,
                               distances_csv=distances, prune=prune, progress=progress)
    where = display_url(resolve_catalog_url(location))
    if json:
        echo_json(ingest_json(summary, where))
    else:
        render_ingest(summary, where)
    if strict and summary.failed:
        raise typer.Exit(1)
