"""``sharpzone sheet``: a catalogued lens's sharp-zone sheet, written to a file."""

from __future__ import annotations

from typing import Annotated, Optional

import typer

from sharpzone.cli.options import (
    CocOpt,
    CocPolicyOpt,
    ImperialOpt,
    ReferenceOpt,
    SensorOpt,
    choice_option,
    distance_option,
    length_option,
)
from sharpzone.cli.state import catalog_session
from sharpzone.errors import InvalidValue
from sharpzone.report.inert import inert
from sharpzone.units import DISTANCE_HELP

STOP_SCALES = ("full", "half", "third")


def register(app: typer.Typer) -> None:
    app.command("sheet")(sheet)


def _listed(values: list[str] | None) -> list[str]:
    """Option values given repeatedly or separated by commas, as one list."""
    return [part.strip() for value in values or [] for part in value.split(",") if part.strip()]


def sheet(
    ctx: typer.Context,
    lens: Annotated[str, typer.Argument(help="The lens: its catalogue name or an EXIF lens name it answers to.",
                                        show_default=False)],
    out: Annotated[str, typer.Option("--out", "-o", help="File to write; the extension picks the form: .csv (tidy "
                                     "rows), .md, .html (printable charts and tables), .pdf (charts and table "
                                     "per focal length) or .png (the PDF's pages in one image).", show_default=False)],
    body: Annotated[Optional[str], typer.Option("--body", "-b", help="Camera body whose sensor format (and "
                                                "pixel pitch) the sheet is for.")] = None,
    sensor: SensorOpt = None,
    focal: Annotated[Optional[list[str]], typer.Option("--focal", "-f", help="Focal length(s) in mm, repeated or "
                                                       "comma-separated. Default: a prime's own; a zoom's ends "
                                                       "and common steps between.")] = None,
    stops: Annotated[str, typer.Option("--stops", help="f-number scale of the columns: full, half or third.")] = "full",
    distances: Annotated[Optional[list[str]], typer.Option("--distances", "-d", help="Focus distances of the rows, "
                                                           f"repeated or comma-separated: {DISTANCE_HELP}. Default: "
                                                           "close focus to infinity in round steps.")] = None,
    coc: CocOpt = None,
    coc_policy: CocPolicyOpt = None,
    reference: ReferenceOpt = "sensor",
    imperial: ImperialOpt = False,
    paper: Annotated[str, typer.Option("--paper", help="Paper the PDF, PNG and HTML are laid out for, landscape: "
                                       "a4 or letter.")] = "a4",
) -> None:
    """A lens's sharp-zone sheet to print and carry: near and far limits per focal length, f-number and focus distance."""
    from sharpzone.catalog.service.sheets import sheet_from_catalog
    from sharpzone.report.sheet_files import PAPERS, sheet_form, write_sheet

    try:
        sheet_form(out)
    except InvalidValue as error:
        raise error.with_option("--out") from None
    paper = choice_option(paper, "--paper", PAPERS)
    focal_lengths = [length_option(value, "--focal") for value in _listed(focal)]
    focus_distances = [distance_option(value, "--distances") for value in _listed(distances)]
    with catalog_session(ctx) as session:
        result = sheet_from_catalog(
            session, lens, body=body, sensor=sensor,
            coc_mm=length_option(coc, "--coc") if coc is not None else None, coc_policy=coc_policy,
            focal_lengths=focal_lengths or None, stops=choice_option(stops, "--stops", STOP_SCALES),
            distances=focus_distances or None, reference=choice_option(reference, "--reference", ("sensor", "lens")),
            imperial=imperial,
        )
    written = write_sheet(result, out, imperial=imperial, paper=paper)
    focal_count = len(result.tables)
    typer.echo(inert(f"wrote the sheet of {result.lens.name} ({focal_count} focal length{'s' if focal_count > 1 else ''}) "
               f"to {written}"))
