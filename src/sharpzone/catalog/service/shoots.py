"""Shoots and their plans: list, show, add, edit, remove.

A plan says what had to be sharp, in millimetres from the sensor: an absolute range
(``near_mm`` to ``far_mm``; far may be ``math.inf``) or a subject depth around the focus
point (``front_mm`` in front, ``back_mm`` behind). Planned focal length, f-number and focus
distance are optional. The command line parses distances with ``sharpzone.units``.
"""

from __future__ import annotations

from pathlib import Path

from sqlalchemy import select
from sqlalchemy.orm import Session

from sharpzone.catalog.models import Frame, Shoot
from sharpzone.catalog.rules import clean_name, optional_text, plan_values, shoot_settings
from sharpzone.catalog.service.common import count_of, get_by_name, merged, plural, require_name_free, saved
from sharpzone.errors import Conflict, InvalidValue

_PLAN_FIELDS = ("plan_near_mm", "plan_far_mm", "plan_front_mm", "plan_back_mm")


def list_shoots(session: Session) -> list[Shoot]:
    """Every shoot, newest first."""
    return list(session.scalars(select(Shoot).order_by(Shoot.created_at.desc(), Shoot.name)))


def get_shoot(session: Session, name: str) -> Shoot:
    """The shoot called ``name`` (ignoring case); ``NotFound`` lists the known ones."""
    return get_by_name(session, Shoot, name, "shoot")


def shoot_frame_count(session: Session, shoot: Shoot) -> int:
    """How many frames belong to ``shoot``."""
    return count_of(session, Frame.shoot_id, shoot.id)


def add_shoot(
    session: Session,
    name: str,
    *,
    root_folder: str | Path | None = None,
    near_mm: float | None = None,
    far_mm: float | None = None,
    front_mm: float | None = None,
    back_mm: float | None = None,
    planned_focal_mm: float | None = None,
    planned_f_number: float | None = None,
    planned_focus_mm: float | None = None,
    coc_policy: str | None = None,
    notes: str | None = None,
) -> Shoot:
    """Add a shoot, with a range plan (``near_mm``/``far_mm``) or a depth plan
    (``front_mm``/``back_mm``) or none; ``root_folder`` is stored as an absolute path."""
    return saved(session, Shoot(), _apply, locals())


def edit_shoot(
    session: Session,
    name: str,
    *,
    new_name: str | None = None,
    root_folder: str | Path | None = None,
    near_mm: float | None = None,
    far_mm: float | None = None,
    front_mm: float | None = None,
    back_mm: float | None = None,
    clear_plan: bool = False,
    planned_focal_mm: float | None = None,
    planned_f_number: float | None = None,
    planned_focus_mm: float | None = None,
    coc_policy: str | None = None,
    notes: str | None = None,
) -> Shoot:
    """Change the given fields of shoot ``name`` (``None`` keeps a field; ``""`` clears a
    text field). Giving one limit of the plan's kind keeps the other; switching kind needs
    both; ``clear_plan`` removes the plan first."""
    return saved(session, get_shoot(session, name), _apply, locals())


def remove_shoot(session: Session, name: str, *, with_frames: bool = False) -> int:
    """Remove shoot ``name``. A shoot with frames is refused (``Conflict``) unless
    ``with_frames`` says to remove them too. Returns how many frames were removed."""
    shoot = get_shoot(session, name)
    frames = shoot_frame_count(session, shoot)
    if frames and not with_frames:
        raise Conflict(
            f"shoot {shoot.name!r} has {plural(frames, 'frame')}: say --with-frames to remove them too"
        )
    session.delete(shoot)
    session.flush()
    return frames


def _apply(session, shoot, *, name, near_mm, far_mm, front_mm, back_mm, clear_plan=False, **details) -> None:
    """Validate and set the new state of ``shoot`` (``None`` keeps a field: a new shoot has
    none yet): its name, its plan (one limit of the plan's kind keeps the other; switching
    kind needs both; ``clear_plan`` removes it first) and the rest. Errors call a renamed
    shoot by the name it had."""
    if name is not None or shoot.name is None:
        name = clean_name(name, "shoot")
        require_name_free(session, Shoot, name, "shoot", keep=shoot)
        shoot.name = shoot.name or name
    kind = None if clear_plan else shoot.plan_kind
    current = {field: (getattr(shoot, field) if kind else None) for field in _PLAN_FIELDS}
    range_given = near_mm is not None or far_mm is not None
    depth_given = front_mm is not None or back_mm is not None
    if range_given and not depth_given:
        current["plan_front_mm"] = current["plan_back_mm"] = None
    if depth_given and not range_given:
        current["plan_near_mm"] = current["plan_far_mm"] = None
    _set_plan(
        shoot,
        current["plan_near_mm"] if near_mm is None else near_mm,
        current["plan_far_mm"] if far_mm is None else far_mm,
        current["plan_front_mm"] if front_mm is None else front_mm,
        current["plan_back_mm"] if back_mm is None else back_mm,
        range_given=range_given,
        depth_given=depth_given,
    )
    _set_details(shoot, **merged(shoot, **details))
    if name is not None:
        shoot.name = name


def _set_plan(shoot, near, far, front, back, *, range_given, depth_given) -> None:
    """Validate (``rules.plan_values``) and set the plan; ``*_given`` say which kind the
    caller asked for."""
    label = f"shoot {shoot.name!r}"
    if range_given and depth_given:
        raise InvalidValue(f"{label}: give a range (near/far) or a subject depth (front/back), not both")
    kind = None
    if range_given or near is not None or far is not None:
        kind, front, back = "range", None, None
    elif front is not None or back is not None:
        kind = "depth"
    for column, value in plan_values(label, kind, near, far, front, back).items():
        setattr(shoot, column, value)


def _set_details(shoot, *, root_folder, planned_focal_mm, planned_f_number, planned_focus_mm, coc_policy, notes) -> None:
    """Validate (``rules.shoot_settings``) and set everything but the plan and the name."""
    folder = optional_text(str(root_folder) if root_folder is not None else None)
    settings = shoot_settings(f"shoot {shoot.name!r}", planned_focal_mm=planned_focal_mm,
                              planned_f_number=planned_f_number, planned_focus_mm=planned_focus_mm,
                              coc_policy_text=coc_policy)
    shoot.root_folder = str(Path(folder).expanduser().resolve()) if folder else None
    for column, value in settings.items():
        setattr(shoot, column, value)
    shoot.notes = optional_text(notes)
