"""``sharpzone shoot …``: shoots and their plans, what had to be sharp."""

from __future__ import annotations

from typing import Annotated, Optional

import typer

from sharpzone.cli.noun_commands import NewNameOpt, Noun, maybe, noun_group, say, service, show_saved, tables
from sharpzone.cli.option_groups import OptionGroup, uses
from sharpzone.cli.options import distance_option, f_number_option, length_option
from sharpzone.cli.state import catalog_session
from sharpzone.units import DISTANCE_HELP

NOUN = Noun(
    "shoot", lambda session: service().list_shoots(session), lambda session, name: service().get_shoot(session, name),
    lambda: tables().SHOOT_FIELDS, "Shoots", "No shoots yet: add one with 'sharpzone shoot add'.", "Shoot name.",
    "List shoots, newest first, with their plans.", "Show one shoot and its plan.", True,
)
shoot_app, register = noun_group(NOUN, "Shoots and their plans: what had to be sharp.")


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


def _limits(folder=None, near=None, far=None, front=None, back=None) -> dict:
    return {
        "root_folder": folder,
        "near_mm": maybe(distance_option, near, "--near"),
        "far_mm": maybe(distance_option, far, "--far"),
        "front_mm": maybe(distance_option, front, "--front"),
        "back_mm": maybe(distance_option, back, "--back"),
    }


def _settings(focal=None, aperture=None, focus=None, coc_policy=None, notes=None) -> dict:
    return {
        "planned_focal_mm": maybe(length_option, focal, "--focal"),
        "planned_f_number": maybe(f_number_option, aperture, "--aperture"),
        "planned_focus_mm": maybe(distance_option, focus, "--focus"),
        "coc_policy": coc_policy,
        "notes": notes,
    }


# The plan's options, shared by add and edit: where and what must be sharp, and the setting planned.
_LIMITS = OptionGroup("limits", (("folder", FolderOpt), ("near", NearOpt), ("far", FarOpt), ("front", FrontOpt),
                                 ("back", BackOpt)), _limits)
_SETTINGS = OptionGroup("settings", (("focal", PlannedFocalOpt), ("aperture", PlannedApertureOpt),
                                     ("focus", PlannedFocusOpt), ("coc_policy", CocPolicyOpt), ("notes", NotesOpt)),
                        _settings)


@shoot_app.command("add")
@uses(_LIMITS, _SETTINGS)
def shoot_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="A unique name for the shoot.")],
    limits: dict,
    settings: dict,
) -> None:
    """Add a shoot; plan an absolute range (--near/--far) or a subject depth (--front/--back)."""
    show_saved(ctx, NOUN, "Added", lambda session: service().add_shoot(session, name, **limits, **settings))


@shoot_app.command("edit")
@uses(_LIMITS, _SETTINGS)
def shoot_edit(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Shoot name.")],
    new_name: NewNameOpt = None,
    *,
    limits: dict,
    clear_plan: Annotated[bool, typer.Option("--clear-plan", help="Remove the plan (before applying any new limits).")] = False,
    settings: dict,
) -> None:
    """Change a shoot or its plan; one limit of the same kind keeps the other."""
    show_saved(ctx, NOUN, "Changed",
               lambda session: service().edit_shoot(session, name, new_name=new_name, clear_plan=clear_plan, **limits, **settings))


@shoot_app.command("remove")
def shoot_remove(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Shoot name.")],
    with_frames: Annotated[bool, typer.Option("--with-frames", help="Also remove the shoot's frames from the catalogue (never the image files).")] = False,
) -> None:
    """Remove a shoot; one with frames needs --with-frames."""
    with catalog_session(ctx) as session:
        removed = service().remove_shoot(session, name, with_frames=with_frames)
    say(f"Removed shoot {name}" + (f" and its {removed} frame(s) (image files untouched)." if removed else "."))
