"""``sharpzone format|body|lens|shoot …`` and ``sharpzone catalog …``: the catalogue's nouns.

Each command parses its options, calls one service function from ``sharpzone.catalog.service``
inside one unit of work, and hands the result to ``sharpzone.report.catalog_tables``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Annotated, Optional

import typer

from sharpzone.cli.options import ImperialOpt, WideOpt, distance_option, f_number_option, length_option
from sharpzone.cli.state import catalog_session, echo_json
from sharpzone.errors import InvalidValue
from sharpzone.optics.limits import ASSUMED_MIN_APERTURE, DIAGONAL_DIVISOR
from sharpzone.units import DISTANCE_HELP

format_app = typer.Typer(help="Sensor formats: image area and default circle-of-confusion rule.", no_args_is_help=True)
body_app = typer.Typer(help="Camera bodies: how EXIF names them and which sensor format they have.", no_args_is_help=True)
lens_app = typer.Typer(help="Lenses: focal range, apertures, close focus, and the EXIF names that mean them.", no_args_is_help=True)
shoot_app = typer.Typer(help="Shoots and their plans: what had to be sharp.", no_args_is_help=True)
catalog_app = typer.Typer(help="The catalogue itself: where it is, export and import.", no_args_is_help=True)


def register(app: typer.Typer) -> None:
    """Add the catalogue command groups to the top-level app."""
    app.add_typer(format_app, name="format")
    app.add_typer(body_app, name="body")
    app.add_typer(lens_app, name="lens")
    app.add_typer(shoot_app, name="shoot")
    app.add_typer(catalog_app, name="catalog")


def _say(text: str) -> None:
    from sharpzone.report.inert import inert

    typer.echo(inert(text))


@dataclass(frozen=True)
class _Noun:
    """What the list and show commands of one noun need: service functions, renderer
    fields (names in ``sharpzone.report.catalog_tables``) and words for people."""

    list_function: str
    get_function: str
    fields: str
    plural_title: str
    empty: str
    argument_help: str
    list_help: str
    show_help: str
    has_distances: bool


_NOUNS = {
    "format": _Noun("list_formats", "get_format", "FORMAT_FIELDS", "Sensor formats", "No sensor formats.",
                    "Format name or alias.", "List the catalogue's sensor formats with size, crop factor and default CoC.",
                    "Show one sensor format.", False),
    "body": _Noun("list_bodies", "get_body", "BODY_FIELDS", "Camera bodies",
                  "No camera bodies yet: add one with 'sharpzone body add'.", "Body name.",
                  "List camera bodies with their EXIF names and sensor formats.", "Show one camera body.", False),
    "lens": _Noun("list_lenses", "get_lens", "LENS_FIELDS", "Lenses", "No lenses yet: add one with 'sharpzone lens add'.",
                  "Lens name.", "List lenses with focal range, apertures and EXIF names.", "Show one lens.", True),
    "shoot": _Noun("list_shoots", "get_shoot", "SHOOT_FIELDS", "Shoots", "No shoots yet: add one with 'sharpzone shoot add'.",
                   "Shoot name.", "List shoots, newest first, with their plans.", "Show one shoot and its plan.", True),
}


def _fields_of(noun: str):
    from sharpzone.report import catalog_tables

    return getattr(catalog_tables, _NOUNS[noun].fields)


def _show(row, noun: str, *, as_json: bool = False, imperial: bool = False, title: str | None = None) -> None:
    from sharpzone.report import catalog_tables

    fields = _fields_of(noun)
    if as_json:
        echo_json(catalog_tables.row_json(row, fields))
    else:
        catalog_tables.render_record(row, fields, title=title or f"{noun.capitalize()} {row.name}", imperial=imperial)


def _run_list(ctx: typer.Context, noun: str, as_json: bool, imperial: bool, wide: bool = False) -> None:
    from sharpzone.catalog import service
    from sharpzone.report import catalog_tables

    spec = _NOUNS[noun]
    with catalog_session(ctx) as session:
        rows = getattr(service, spec.list_function)(session)
    fields = _fields_of(noun)
    if as_json:
        echo_json([catalog_tables.row_json(row, fields) for row in rows])
    else:
        catalog_tables.render_rows(rows, fields, title=spec.plural_title, empty=spec.empty, imperial=imperial, wide=wide)


def _run_show(ctx: typer.Context, noun: str, name: str, as_json: bool, imperial: bool) -> None:
    from sharpzone.catalog import service

    with catalog_session(ctx) as session:
        row = getattr(service, _NOUNS[noun].get_function)(session, name)
    _show(row, noun, as_json=as_json, imperial=imperial)


def _add_list_and_show(group: typer.Typer, noun: str) -> None:
    """Give ``group`` its ``list`` and ``show`` commands (``--imperial`` where distances show)."""
    spec = _NOUNS[noun]

    if spec.has_distances:
        def list_command(ctx: typer.Context, json: JsonOpt = False, imperial: ImperialOpt = False,
                         wide: WideOpt = False) -> None:
            _run_list(ctx, noun, json, imperial, wide)

        def show_command(
            ctx: typer.Context, name: str = typer.Argument(help=spec.argument_help), json: JsonOpt = False,
            imperial: ImperialOpt = False,
        ) -> None:
            _run_show(ctx, noun, name, json, imperial)
    else:
        def list_command(ctx: typer.Context, json: JsonOpt = False, wide: WideOpt = False) -> None:
            _run_list(ctx, noun, json, False, wide)

        def show_command(ctx: typer.Context, name: str = typer.Argument(help=spec.argument_help), json: JsonOpt = False) -> None:
            _run_show(ctx, noun, name, json, False)

    group.command("list", help=spec.list_help)(list_command)
    group.command("show", help=spec.show_help)(show_command)


for _noun, _group in (("format", format_app), ("body", body_app), ("lens", lens_app), ("shoot", shoot_app)):
    _add_list_and_show(_group, _noun)


# ---- option types ----------------------------------------------------------------------

JsonOpt = Annotated[bool, typer.Option("--json", help="Print JSON (lengths in mm, distances in metres, infinity as \"inf\").")]
NewNameOpt = Annotated[Optional[str], typer.Option("--name", help="A new name.")]
_RANGE = re.compile(r"^\s*([^-–]+?)\s*(?:[-–]\s*(.+?))?\s*$")


def _range_option(value: str, option: str, parse) -> tuple[float, float]:
    """``24-70`` → (24, 70); ``50`` → (50, 50); each end parsed by ``parse(text, option)``."""
    match = _RANGE.match(value)
    if not match:
        raise InvalidValue(option=option, what="value", value=value, expected="one value or two joined by '-'")
    low = parse(match.group(1), option)
    high = parse(match.group(2), option) if match.group(2) else low
    if high < low:
        raise InvalidValue(option=option, what="value", value=value, problem="runs backwards",
                           expected="the smaller number first",
                           hint=f"did you mean {match.group(2)}-{match.group(1)}?")
    return low, high


def _pixels_option(value: str | None) -> tuple[int | None, int | None]:
    if value is None:
        return None, None
    match = re.fullmatch(r"\s*(\d+)\s*[x×]\s*(\d+)\s*", value)
    if not match:
        raise InvalidValue(f"--pixels: {value!r} is not valid: expected width x height in pixels, e.g. 6000x4000")
    return int(match.group(1)), int(match.group(2))


def _number_option(value: str | None, option: str) -> float | None:
    if value is None:
        return None
    try:
        return float(value)
    except ValueError:
        raise InvalidValue(option=f"--{option}", what="value", value=value, problem="is not a number") from None


def _maybe(parse, value: str | None, option: str):
    return None if value is None else parse(value, option)


# ---- format ----------------------------------------------------------------------------

WidthOpt = Annotated[Optional[str], typer.Option("--width", help="Image width in mm (a bare number is mm).")]
HeightOpt = Annotated[Optional[str], typer.Option("--height", help="Image height in mm (a bare number is mm).")]
CocDivisorOpt = Annotated[Optional[str], typer.Option("--coc-divisor", help="Default circle of confusion = diagonal / this number (1500 unless told, the common rule).")]
FormatAliasOpt = Annotated[Optional[list[str]], typer.Option("--alias", help="Another name the format answers to; repeat for more (edit: replaces the list).")]
DescriptionOpt = Annotated[Optional[str], typer.Option("--description", help="A line for people.")]
SourceOpt = Annotated[Optional[str], typer.Option("--source", help="Where the size comes from.")]


@format_app.command("add")
def format_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="A unique name, e.g. 36x24.")],
    width: WidthOpt = None,
    height: HeightOpt = None,
    coc_divisor: CocDivisorOpt = None,
    alias: FormatAliasOpt = None,
    description: DescriptionOpt = "",
    source: SourceOpt = "",
) -> None:
    """Add a sensor format (--width and --height are required)."""
    from sharpzone.catalog.service import add_format

    if width is None or height is None:
        raise InvalidValue("format add needs --width and --height (mm)")
    with catalog_session(ctx) as session:
        row = add_format(
            session, name, length_option(width, "--width"), length_option(height, "--height"),
            coc_divisor=DIAGONAL_DIVISOR if coc_divisor is None else _number_option(coc_divisor, "coc-divisor"), aliases=alias or [],
            description=description or "", source=source or "",
        )
    _show(row, "format", title=f"Added format {row.name}")


@format_app.command("edit")
def format_edit(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Format name or alias.")],
    new_name: NewNameOpt = None,
    width: WidthOpt = None,
    height: HeightOpt = None,
    coc_divisor: CocDivisorOpt = None,
    alias: FormatAliasOpt = None,
    description: DescriptionOpt = None,
    source: SourceOpt = None,
) -> None:
    """Change a sensor format; bodies of this format follow."""
    from sharpzone.catalog.service import edit_format

    with catalog_session(ctx) as session:
        row = edit_format(
            session, name, new_name=new_name, width_mm=_maybe(length_option, width, "--width"),
            height_mm=_maybe(length_option, height, "--height"),
            coc_divisor=_number_option(coc_divisor, "coc-divisor"), aliases=alias, description=description,
            source=source,
        )
    _show(row, "format", title=f"Changed format {row.name}")


@format_app.command("remove")
def format_remove(ctx: typer.Context, name: Annotated[str, typer.Argument(help="Format name or alias.")]) -> None:
    """Remove a sensor format no body uses."""
    from sharpzone.catalog.service import remove_format

    with catalog_session(ctx) as session:
        remove_format(session, name)
    _say(f"Removed format {name}.")


# ---- body ------------------------------------------------------------------------------

MakeOpt = Annotated[Optional[str], typer.Option("--make", help="EXIF Make exactly as the camera writes it.")]
ModelOpt = Annotated[Optional[str], typer.Option("--model", help="EXIF Model exactly as the camera writes it.")]
SerialOpt = Annotated[Optional[str], typer.Option("--serial", help="EXIF body serial number, to tell two bodies of one model apart ('' clears it).")]
FormatOpt = Annotated[Optional[str], typer.Option("--format", help="Sensor format name or alias (see 'sharpzone format list').")]
PixelsOpt = Annotated[Optional[str], typer.Option("--pixels", help="Full image size in pixels, e.g. 6000x4000.")]
ReassignOpt = Annotated[Optional[str], typer.Option("--reassign-to", help="Move the frames that use it to this one first.")]


@body_app.command("add")
def body_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Our name for the body, unique.")],
    make: MakeOpt = None,
    model: ModelOpt = None,
    format: FormatOpt = None,
    serial: SerialOpt = None,
    pixels: PixelsOpt = None,
    unconfirmed: Annotated[bool, typer.Option("--unconfirmed", help="Mark it as still to be checked.")] = False,
) -> None:
    """Add a camera body (--make, --model and --format are required)."""
    from sharpzone.catalog.service import add_body

    if make is None or model is None or format is None:
        raise InvalidValue("body add needs --make, --model (as EXIF writes them) and --format")
    width, height = _pixels_option(pixels)
    with catalog_session(ctx) as session:
        row = add_body(session, name, exif_make=make, exif_model=model, format_name=format, serial=serial,
                       pixel_width=width, pixel_height=height, confirmed=not unconfirmed)
    _show(row, "body", title=f"Added body {row.name}")


@body_app.command("edit")
def body_edit(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Body name.")],
    new_name: NewNameOpt = None,
    make: MakeOpt = None,
    model: ModelOpt = None,
    format: FormatOpt = None,
    serial: SerialOpt = None,
    pixels: PixelsOpt = None,
    confirmed: Annotated[Optional[bool], typer.Option("--confirmed/--unconfirmed", help="Mark the body as checked (or not).", show_default=False)] = None,
) -> None:
    """Change a camera body; its frames follow."""
    from sharpzone.catalog.service import edit_body

    width, height = _pixels_option(pixels)
    with catalog_session(ctx) as session:
        row = edit_body(session, name, new_name=new_name, exif_make=make, exif_model=model, serial=serial,
                        format_name=format, pixel_width=width, pixel_height=height, confirmed=confirmed)
    _show(row, "body", title=f"Changed body {row.name}")


@body_app.command("remove")
def body_remove(ctx: typer.Context, name: Annotated[str, typer.Argument(help="Body name.")], reassign_to: ReassignOpt = None) -> None:
    """Remove a camera body; frames taken with it need --reassign-to."""
    from sharpzone.catalog.service import remove_body

    with catalog_session(ctx) as session:
        moved = remove_body(session, name, reassign_to=reassign_to)
    _say(f"Removed body {name}." + (f" {moved} frame(s) now use {reassign_to}." if moved else ""))


# ---- lens ------------------------------------------------------------------------------

FocalRangeOpt = Annotated[Optional[str], typer.Option("--focal", help="Focal length in mm: 50 for a prime, 24-70 for a zoom.")]
ApertureRangeOpt = Annotated[Optional[str], typer.Option("--aperture", help="Widest aperture as an f-number: 2.8, or 3.5-5.6 for the short and long end.")]
MinApertureOpt = Annotated[Optional[str], typer.Option("--min-aperture", help="Smallest aperture (largest f-number), e.g. 22.")]
CloseFocusOpt = Annotated[Optional[str], typer.Option("--close-focus", help=f"Closest focus distance from the sensor: {DISTANCE_HELP}.")]
PupilOpt = Annotated[Optional[str], typer.Option("--pupil", help="Pupil magnification (exit / entrance pupil diameter; 1 for a symmetric lens).")]
MaxMagnificationOpt = Annotated[Optional[str], typer.Option(
    "--max-magnification", help="Image scale reached at the close-focus distance, from the lens's "
    "specification: 1:1, 1:2, 0.25x or 0.5 (a zoom's at its long end; 0 clears it). Lets the "
    "model follow a lens that shortens its focal length to focus close.")]


def _magnification_option(value: str | None) -> float | None:
    from sharpzone.optics.macro import parse_magnification

    if value is None:
        return None
    if value.strip() in ("0", "none"):
        return 0.0
    try:
        return parse_magnification(value, what="value")
    except InvalidValue as error:
        raise InvalidValue(f"--max-magnification: {error.message}") from None


def _lens_numbers(focal, aperture, min_aperture, close_focus, pupil, max_magnification=None) -> dict:
    focal_min, focal_max = _range_option(focal, "--focal", length_option) if focal else (None, None)
    wide, tele = _range_option(aperture, "--aperture", f_number_option) if aperture else (None, None)
    return {
        "focal_min_mm": focal_min,
        "focal_max_mm": focal_max,
        "max_aperture_wide": wide,
        "max_aperture_tele": tele,
        "min_aperture": _maybe(f_number_option, min_aperture, "--min-aperture"),
        "close_focus_mm": _maybe(distance_option, close_focus, "--close-focus"),
        "pupil_magnification": _number_option(pupil, "pupil"),
        "max_magnification": _magnification_option(max_magnification),
    }


@lens_app.command("add")
def lens_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Our name for the lens, unique.")],
    focal: FocalRangeOpt = None,
    aperture: ApertureRangeOpt = None,
    min_aperture: MinApertureOpt = None,
    close_focus: CloseFocusOpt = None,
    pupil: PupilOpt = None,
    max_magnification: MaxMagnificationOpt = None,
    exif_name: Annotated[Optional[list[str]], typer.Option("--exif-name", help="EXIF LensModel text that names this lens; repeat for more.")] = None,
    unconfirmed: Annotated[bool, typer.Option("--unconfirmed", help="Mark it as still to be checked.")] = False,
) -> None:
    """Add a lens (--focal and --aperture are required)."""
    from sharpzone.catalog.service import add_lens

    if focal is None or aperture is None:
        raise InvalidValue("lens add needs --focal (e.g. 50 or 24-70) and --aperture (e.g. 2.8 or 3.5-5.6)")
    numbers = _lens_numbers(focal, aperture, min_aperture, close_focus, pupil, max_magnification)
    defaults = {"min_aperture": ASSUMED_MIN_APERTURE, "pupil_magnification": 1.0}
    numbers.update({key: value for key, value in defaults.items() if numbers[key] is None})
    with catalog_session(ctx) as session:
        row = add_lens(session, name, exif_names=exif_name or [], confirmed=not unconfirmed, **numbers)
    _show(row, "lens", title=f"Added lens {row.name}")


@lens_app.command("edit")
def lens_edit(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Lens name.")],
    new_name: NewNameOpt = None,
    focal: FocalRangeOpt = None,
    aperture: ApertureRangeOpt = None,
    min_aperture: MinApertureOpt = None,
    close_focus: CloseFocusOpt = None,
    pupil: PupilOpt = None,
    max_magnification: MaxMagnificationOpt = None,
    confirmed: Annotated[Optional[bool], typer.Option("--confirmed/--unconfirmed", help="Mark the lens as checked (or not).", show_default=False)] = None,
) -> None:
    """Change a lens; every frame taken with it follows."""
    from sharpzone.catalog.service import edit_lens

    numbers = _lens_numbers(focal, aperture, min_aperture, close_focus, pupil, max_magnification)
    with catalog_session(ctx) as session:
        row = edit_lens(session, name, new_name=new_name, confirmed=confirmed, **numbers)
    _show(row, "lens", title=f"Changed lens {row.name}")


@lens_app.command("remove")
def lens_remove(ctx: typer.Context, name: Annotated[str, typer.Argument(help="Lens name.")], reassign_to: ReassignOpt = None) -> None:
    """Remove a lens and its EXIF names; frames taken with it need --reassign-to."""
    from sharpzone.catalog.service import remove_lens

    with catalog_session(ctx) as session:
        moved = remove_lens(session, name, reassign_to=reassign_to)
    _say(f"Removed lens {name}." + (f" {moved} frame(s) now use {reassign_to}." if moved else ""))


@lens_app.command("add-alias")
def lens_add_alias(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Lens name.")],
    exif_name: Annotated[str, typer.Argument(help="EXIF LensModel text, exactly as the files carry it.")],
) -> None:
    """Let an EXIF LensModel text name this lens."""
    from sharpzone.catalog.service import add_lens_alias

    with catalog_session(ctx) as session:
        alias = add_lens_alias(session, name, exif_name)
    _say(f"EXIF lens name {alias.exif_name!r} now names {alias.lens.name}.")


@lens_app.command("remove-alias")
def lens_remove_alias(ctx: typer.Context, exif_name: Annotated[str, typer.Argument(help="EXIF LensModel text.")]) -> None:
    """Forget an EXIF LensModel text."""
    from sharpzone.catalog.service import remove_lens_alias

    with catalog_session(ctx) as session:
        lens = remove_lens_alias(session, exif_name)
    _say(f"EXIF lens name {exif_name!r} no longer names {lens.name}.")


# ---- shoot -----------------------------------------------------------------------------

FolderOpt = Annotated[Optional[str], typer.Option("--folder", help="The shoot's root folder ('' clears it).")]
NearOpt = Annotated[Optional[str], typer.Option("--near", help=f"Plan: nearest point that must be sharp, from the sensor: {DISTANCE_HELP}.")]
FarOpt = Annotated[Optional[str], typer.Option("--far", help=f"Plan: farthest point that must be sharp (inf allowed): {DISTANCE_HELP}.")]
FrontOpt = Annotated[Optional[str], typer.Option("--front", help=f"Plan: subject depth in front of the focus point: {DISTANCE_HELP}.")]
BackOpt = Annotated[Optional[str], typer.Option("--back", help=f"Plan: subject depth behind the focus point: {DISTANCE_HELP}.")]
PlannedFocalOpt = Annotated[Optional[str], typer.Option("--focal", help="Planned focal length in mm.")]
PlannedApertureOpt = Annotated[Optional[str], typer.Option("--aperture", help="Planned f-number, e.g. 8 or f/5.6.")]
PlannedFocusOpt = Annotated[Optional[str], typer.Option("--focus", help=f"Planned focus distance from the sensor: {DISTANCE_HELP}.")]
CocPolicyOpt = Annotated[Optional[str], typer.Option("--coc-policy", help="Circle-of-confusion policy: diagonal, diagonal/K, fixed:0.03mm, print:10x8in@50cm or pixels:K ('' clears it).")]
NotesOpt = Annotated[Optional[str], typer.Option("--notes", help="Free text ('' clears it).")]


def _shoot_values(folder, near, far, front, back, focal, aperture, focus, coc_policy, notes) -> dict:
    return {
        "root_folder": folder,
        "near_mm": _maybe(distance_option, near, "--near"),
        "far_mm": _maybe(distance_option, far, "--far"),
        "front_mm": _maybe(distance_option, front, "--front"),
        "back_mm": _maybe(distance_option, back, "--back"),
        "planned_focal_mm": _maybe(length_option, focal, "--focal"),
        "planned_f_number": _maybe(f_number_option, aperture, "--aperture"),
        "planned_focus_mm": _maybe(distance_option, focus, "--focus"),
        "coc_policy": coc_policy,
        "notes": notes,
    }


@shoot_app.command("add")
def shoot_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="A unique name for the shoot.")],
    folder: FolderOpt = None,
    near: NearOpt = None,
    far: FarOpt = None,
    front: FrontOpt = None,
    back: BackOpt = None,
    focal: PlannedFocalOpt = None,
    aperture: PlannedApertureOpt = None,
    focus: PlannedFocusOpt = None,
    coc_policy: CocPolicyOpt = None,
    notes: NotesOpt = None,
) -> None:
    """Add a shoot; plan an absolute range (--near/--far) or a subject depth (--front/--back)."""
    from sharpzone.catalog.service import add_shoot

    values = _shoot_values(folder, near, far, front, back, focal, aperture, focus, coc_policy, notes)
    with catalog_session(ctx) as session:
        row = add_shoot(session, name, **values)
    _show(row, "shoot", title=f"Added shoot {row.name}")


@shoot_app.command("edit")
def shoot_edit(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Shoot name.")],
    new_name: NewNameOpt = None,
    folder: FolderOpt = None,
    near: NearOpt = None,
    far: FarOpt = None,
    front: FrontOpt = None,
    back: BackOpt = None,
    clear_plan: Annotated[bool, typer.Option("--clear-plan", help="Remove the plan (before applying any new limits).")] = False,
    focal: PlannedFocalOpt = None,
    aperture: PlannedApertureOpt = None,
    focus: PlannedFocusOpt = None,
    coc_policy: CocPolicyOpt = None,
    notes: NotesOpt = None,
) -> None:
    """Change a shoot or its plan; one limit of the same kind keeps the other."""
    from sharpzone.catalog.service import edit_shoot

    values = _shoot_values(folder, near, far, front, back, focal, aperture, focus, coc_policy, notes)
    with catalog_session(ctx) as session:
        row = edit_shoot(session, name, new_name=new_name, clear_plan=clear_plan, **values)
    _show(row, "shoot", title=f"Changed shoot {row.name}")


@shoot_app.command("remove")
def shoot_remove(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Shoot name.")],
    with_frames: Annotated[bool, typer.Option("--with-frames", help="Also remove the shoot's frames from the catalogue (never the image files).")] = False,
) -> None:
    """Remove a shoot; one with frames needs --with-frames."""
    from sharpzone.catalog.service import remove_shoot

    with catalog_session(ctx) as session:
        removed = remove_shoot(session, name, with_frames=with_frames)
    _say(f"Removed shoot {name}" + (f" and its {removed} frame(s) (image files untouched)." if removed else "."))


# ---- catalog ---------------------------------------------------------------------------

BundleArg = Annotated[str, typer.Argument(help="Bundle file: NAME.json (one JSON file) or NAME.zip (one CSV per table).")]


@catalog_app.command("info")
def catalog_info_command(ctx: typer.Context, json: JsonOpt = False) -> None:
    """Where the catalogue is, its schema revision and how many rows it holds."""
    from sharpzone.catalog.service import catalog_info
    from sharpzone.report.catalog_tables import info_json, render_info

    with catalog_session(ctx) as session:
        info = catalog_info(session)
    if json:
        echo_json(info_json(info))
    else:
        render_info(info)


@catalog_app.command("export")
def catalog_export(ctx: typer.Context, bundle: BundleArg) -> None:
    """Write the whole catalogue to a bundle file (nothing is lost; see the bundle format in docs)."""
    from sharpzone.catalog.service import export_catalog
    from sharpzone.report.catalog_tables import render_counts

    with catalog_session(ctx) as session:
        counts = export_catalog(session, bundle)
    render_counts(f"Exported to {bundle}", {"Rows": counts})


@catalog_app.command("import")
def catalog_import(
    ctx: typer.Context,
    bundle: BundleArg,
    replace: Annotated[bool, typer.Option("--replace", help="Overwrite rows that exist with other values (default: refuse).")] = False,
) -> None:
    """Add a bundle's rows to the catalogue: identical rows are kept, new ones added."""
    from sharpzone.catalog.service import import_catalog
    from sharpzone.report.catalog_tables import render_counts

    with catalog_session(ctx) as session:
        result = import_catalog(session, bundle, replace=replace)
    render_counts(f"Imported {bundle}", {"Added": result.added, "Replaced": result.replaced, "Unchanged": result.unchanged})
