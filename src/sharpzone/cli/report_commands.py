"""``sharpzone report``: a shoot's report page, one self-contained HTML file to cull from."""

from __future__ import annotations

import sys
from typing import Annotated, Optional

import typer

from sharpzone.cli.frames_commands import (
    BackOpt,
    BodyOpt,
    CocPolicyOpt,
    FarOpt,
    FMaxOpt,
    FMinOpt,
    FocalMaxOpt,
    FocalMinOpt,
    FromOpt,
    FrontOpt,
    LensOpt,
    NearOpt,
    ShootOpt,
    ToOpt,
    VerdictOpt,
    _filter,
    _requirement,
)
from sharpzone.cli.options import ImperialOpt
from sharpzone.cli.state import catalog_session

OutOpt = Annotated[str, typer.Option("--out", "-o", help="The page to write (FILE.html); replaced if it exists.",
                                     show_default=False)]
TitleOpt = Annotated[Optional[str], typer.Option("--title", help="The page's title; default: the shoot's name.")]
JobsOpt = Annotated[Optional[int], typer.Option("--jobs", help="Worker processes making thumbnails; default: one per core.")]


def register(app: typer.Typer) -> None:
    app.command("report")(report)


def report(
    ctx: typer.Context, out: OutOpt, shoot: ShootOpt = None, body: BodyOpt = None, lens: LensOpt = None,
    date_from: FromOpt = None, date_to: ToOpt = None, f_min: FMinOpt = None, f_max: FMaxOpt = None,
    focal_min: FocalMinOpt = None, focal_max: FocalMaxOpt = None, verdict: VerdictOpt = None,
    coc_policy: CocPolicyOpt = None, near: NearOpt = None, far: FarOpt = None, front: FrontOpt = None,
    back: BackOpt = None, title: TitleOpt = None, jobs: JobsOpt = None, imperial: ImperialOpt = False,
) -> None:
    """A report page to cull from: one offline HTML file with each frame's picture, zone bar,
    verdict and remedy, filters, keyboard marking and a contact-sheet print style."""
    from sharpzone.analysis.report_page import build_report
    from sharpzone.report.ingest_render import ingest_progress
    from sharpzone.report.page_html import page_path, write_page

    page_path(out)
    where = _filter(shoot, body, lens, date_from, date_to, f_min, f_max, focal_min, focal_max, verdict)
    requirement = _requirement(near, far, front, back)
    with catalog_session(ctx) as session, ingest_progress(sys.stderr.isatty()) as progress:
        data = build_report(session, where, requirement=requirement, coc_policy=coc_policy, title=title, jobs=jobs,
                            progress=progress)
    written = write_page(data, out, imperial=imperial)
    missing = data.thumbnail_problems()
    typer.echo(f"wrote the report page of {len(data.frames)} frames to {written}"
               + (f" ({len(missing)} without a picture)" if missing else ""))
