"""``sharpzone lens …``: lenses, their focal range, apertures, close focus, and the EXIF names
that mean them."""

from __future__ import annotations

from typing import Annotated, Optional

import typer

from sharpzone.cli.noun_commands import (
    NewNameOpt,
    Noun,
    UnconfirmedOpt,
    confirmed_option,
    given,
    maybe,
    noun_group,
    number_option,
    range_option,
    reassigning_remove_command,
    say,
    service,
    show_saved,
    tables,
)
from sharpzone.cli.option_groups import OptionGroup, uses
from sharpzone.cli.options import distance_option, f_number_option, length_option
from sharpzone.cli.state import catalog_session
from sharpzone.errors import InvalidValue
from sharpzone.units import DISTANCE_HELP

NOUN = Noun(
    "lens", lambda session: service().list_lenses(session), lambda session, name: service().get_lens(session, name),
    lambda: tables().LENS_FIELDS, "Lenses", "No lenses yet: add one with 'sharpzone lens add'.", "Lens name.",
    "List lenses with focal range, apertures and EXIF names.", "Show one lens.", True,
)
lens_app, register = noun_group(NOUN, "Lenses: focal range, apertures, close focus, and the EXIF names that mean them.")


FocalRangeOpt = Annotated[Optional[str], typer.Option("--focal", help="Focal length in mm: 50 for a prime, 24-70 for a zoom.")]
ApertureRangeOpt = Annotated[Optional[str], typer.Option("--aperture", help="Widest aperture as an f-number: 2.8, or 3.5-5.6 for the short and long end.")]
MinApertureOpt = Annotated[Optional[str], typer.Option("--min-aperture", help="Smallest aperture (largest f-number), e.g. 22.")]
CloseFocusOpt = Annotated[Optional[str], typer.Option("--close-focus", help=f"Closest focus distance from the sensor: {DISTANCE_HELP}.")]
PupilOpt = Annotated[Optional[str], typer.Option("--pupil", help="Pupil magnification (exit / entrance pupil diameter; 1 for a symmetric lens).")]
ConfirmedOpt = confirmed_option("lens")
MaxMagnificationOpt = Annotated[Optional[str], typer.Option(
    "--max-magnification", help="Image scale reached at the close-focus distance, from the lens's "
    "specification: 1:1, 1:2, 0.25x or 0.5 (a zoom's at its long end; 0 clears it). Lets the "
    "model follow a lens that shortens its focal length to focus close.")]


def _magnification_option(value: str | None) -> float | None:
    from sharpzone.optics.magnification import parse_magnification

    if value is None:
        return None
    if value.strip() in ("0", "none"):
        return 0.0
    try:
        return parse_magnification(value, what="value")
    except InvalidValue as error:
        raise InvalidValue(f"--max-magnification: {error.message}") from None


def _lens_numbers(focal=None, aperture=None, min_aperture=None, close_focus=None, pupil=None,
                  max_magnification=None) -> dict:
    focal_min, focal_max = range_option(focal, "--focal", length_option) if focal else (None, None)
    wide, tele = range_option(aperture, "--aperture", f_number_option) if aperture else (None, None)
    return {
        "focal_min_mm": focal_min,
        "focal_max_mm": focal_max,
        "max_aperture_wide": wide,
        "max_aperture_tele": tele,
        "min_aperture": maybe(f_number_option, min_aperture, "--min-aperture"),
        "close_focus_mm": maybe(distance_option, close_focus, "--close-focus"),
        "pupil_magnification": number_option(pupil, "pupil"),
        "max_magnification": _magnification_option(max_magnification),
    }


# The lens's optics, shared by add and edit, as the service's keyword arguments.
_NUMBERS = OptionGroup("numbers", (
    ("focal", FocalRangeOpt), ("aperture", ApertureRangeOpt), ("min_aperture", MinApertureOpt),
    ("close_focus", CloseFocusOpt), ("pupil", PupilOpt), ("max_magnification", MaxMagnificationOpt),
), _lens_numbers)


@lens_app.command("add")
@uses(_NUMBERS)
def lens_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Our name for the lens, unique.")],
    numbers: dict,
    exif_name: Annotated[Optional[list[str]], typer.Option("--exif-name", help="EXIF LensModel text that names this lens; repeat for more.")] = None,
    unconfirmed: UnconfirmedOpt = False,
) -> None:
    """Add a lens (--focal and --aperture are required)."""
    if numbers["focal_min_mm"] is None or numbers["max_aperture_wide"] is None:
        raise InvalidValue("lens add needs --focal (e.g. 50 or 24-70) and --aperture (e.g. 2.8 or 3.5-5.6)")
    show_saved(ctx, NOUN, "Added",
               lambda session: service().add_lens(session, name, exif_names=exif_name or [],
                                                  confirmed=not unconfirmed, **given(numbers)))


@lens_app.command("edit")
@uses(_NUMBERS)
def lens_edit(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Lens name.")],
    new_name: NewNameOpt = None,
    *,
    numbers: dict,
    confirmed: ConfirmedOpt = None,
) -> None:
    """Change a lens; every frame taken with it follows."""
    show_saved(ctx, NOUN, "Changed",
               lambda session: service().edit_lens(session, name, new_name=new_name, confirmed=confirmed, **numbers))


reassigning_remove_command(lens_app, NOUN, "Remove a lens and its EXIF names; frames taken with it need --reassign-to.",
                           lambda session, name, to: service().remove_lens(session, name, reassign_to=to))


@lens_app.command("add-alias")
def lens_add_alias(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Lens name.")],
    exif_name: Annotated[str, typer.Argument(help="EXIF LensModel text, exactly as the files carry it.")],
) -> None:
    """Let an EXIF LensModel text name this lens."""
    with catalog_session(ctx) as session:
        alias = service().add_lens_alias(session, name, exif_name)
    say(f"EXIF lens name {alias.exif_name!r} now names {alias.lens.name}.")


@lens_app.command("remove-alias")
def lens_remove_alias(ctx: typer.Context, exif_name: Annotated[str, typer.Argument(help="EXIF LensModel text.")]) -> None:
    """Forget an EXIF LensModel text."""
    with catalog_session(ctx) as session:
        lens = service().remove_lens_alias(session, exif_name)
    say(f"EXIF lens name {exif_name!r} no longer names {lens.name}.")
