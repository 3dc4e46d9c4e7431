"""``sharpzone report``: a shoot's report page, one self-contained HTML file to cull from."""

from __future__ import annotations

import sys
from typing import Annotated, Optional

import typer

from sharpzone.cli.option_groups import FILTERS_WITH_VERDICT, JUDGING, uses
from sharpzone.cli.options import ImperialOpt
from sharpzone.cli.state import catalog_session

OutOpt = Annotated[str, typer.Option("--out", "-o", help="The page to write (FILE.html); replaced if it exists.",
                                     show_default=False)]
TitleOpt = Annotated[Optional[str], typer.Option("--title", help="The page's title; default: the shoot's name.")]
JobsOpt = Annotated[Optional[int], typer.Option("--jobs", help="Worker processes making thumbnails; default: one per core.")]


def register(app: typer.Typer) -> None:
    app.command("report")(report)


@uses(FILTERS_WITH_VERDICT, JUDGING)
def report(
    ctx: typer.Context, out: OutOpt, where, judging, title: TitleOpt = None, jobs: JobsOpt = None,
    imperial: ImperialOpt = False,
) -> None:
    """A report page to cull from: one offline HTML file with each frame's picture, zone bar,
    verdict and remedy, filters, keyboard marking and a contact-sheet print style."""
    from sharpzone.analysis.report_page import build_report
    from sharpzone.report.ingest_render import ingest_progress
    from sharpzone.report.page_html import page_path, write_page

    page_path(out)
    with catalog_session(ctx) as session, ingest_progress(sys.stderr.isatty()) as progress:
        data = build_report(session, where, requirement=judging.requirement, coc_policy=judging.coc_policy, title=title, jobs=jobs,
                            progress=progress)
    written = write_page(data, out, imperial=imperial)
    missing = data.thumbnail_problems()
    typer.echo(f"wrote the report page of {len(data.frames)} frames to {written}"
               + (f" ({len(missing)} without a picture)" if missing else ""))
