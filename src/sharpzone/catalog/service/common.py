"""Look-ups and steps shared by the service functions (public: ingest uses ``find_by_name``).

The value checks live in ``sharpzone.catalog.rules``."""

from __future__ import annotations

from typing import TypeVar

from sqlalchemy import func, select, update
from sqlalchemy.orm import Session

from sharpzone.catalog.models import Frame
from sharpzone.errors import Conflict, InvalidValue, NotFound

Row = TypeVar("Row")


def equal_ignoring_case(column, value: str):
    """SQL condition: ``column`` equals ``value`` (outer spaces stripped) ignoring case.

    Both sides go through the database's own ``lower()``: SQLite's folds ASCII letters
    only, PostgreSQL's follows the database locale, and Python's ``str.lower`` folds more
    than either, so lowering the value in Python would miss ``Ödland`` spelt exactly."""
    return func.lower(column) == func.lower(value.strip())


def find_by_name(session: Session, model: type[Row], name: str) -> Row | None:
    """The row of ``model`` whose ``name`` equals ``name`` ignoring case, or ``None``."""
    return session.scalars(select(model).where(equal_ignoring_case(model.name, name))).first()


def get_by_name(session: Session, model: type[Row], name: str, what: str, *, error=NotFound) -> Row:
    """The row called ``name`` (case-insensitive); else ``error`` listing the known names."""
    row = find_by_name(session, model, name)
    if row is None:
        known = session.scalars(select(model.name).order_by(model.name).limit(12)).all()
        nouns = {"lens": "lenses", "body": "bodies"}
        expected = f"known: {', '.join(known)}" if known else f"the catalogue has no {nouns.get(what, what + 's')} yet"
        raise error(f"no {what} named {name!r} ({expected})")
    return row


def require_name_free(session: Session, model: type[Row], name: str, what: str, *, keep: object = None) -> None:
    """``Conflict`` when another row of ``model`` (not ``keep``) already has this name."""
    existing = find_by_name(session, model, name)
    if existing is not None and existing is not keep:
        raise Conflict(f"a {what} named {existing.name!r} already exists")


def merged(row, **changes) -> dict:
    """Each change, or ``row``'s current value of that field where the change is ``None``."""
    return {field: getattr(row, field) if value is None else value for field, value in changes.items()}


def saved(session: Session, row: Row, apply, arguments: dict) -> Row:
    """``row`` after ``apply(session, row, **changes)`` has validated and set its new state
    (``None`` in ``changes`` keeps a field: a new row has none yet), added when new, flushed.

    ``arguments`` are the calling ``add_*`` or ``edit_*`` function's own, its ``locals()``
    taken first thing, so that each field is written once, in that function's signature: the
    session is left out, and an edit's ``new_name`` stands for ``name`` (the row looked up)."""
    changes = {field: value for field, value in arguments.items() if field != "session"}
    if "new_name" in changes:
        changes["name"] = changes.pop("new_name")
    apply(session, row, **changes)
    if row not in session:
        session.add(row)
    session.flush()
    return row


def count_of(session: Session, column, value) -> int:
    """How many rows have ``column == value``."""
    return session.scalar(select(func.count()).where(column == value)) or 0


def plural(count: int, noun: str) -> str:
    return f"{count} {noun}{'' if count == 1 else 's'}"


def remove_reassigning_frames(session: Session, model: type[Row], frame_column, name: str, reassign_to: str | None, what: str) -> int:
    """Remove the ``model`` row called ``name``. Frames pointing at it (via ``frame_column``)
    are refused with ``Conflict`` unless ``reassign_to`` names the row they move to.
    Returns how many frames moved."""
    row = get_by_name(session, model, name, what)
    used = count_of(session, frame_column, row.id)
    target = None
    if reassign_to is not None:
        target = get_by_name(session, model, reassign_to, what, error=InvalidValue)
        if target is row:
            raise InvalidValue(f"cannot move the frames of {what} {row.name!r} to itself")
    if used and target is None:
        raise Conflict(
            f"{what} {row.name!r} is used by {plural(used, 'frame')}: name a {what} to move them to (--reassign-to)"
        )
    if used:
        session.execute(update(Frame).where(frame_column == row.id).values({frame_column.key: target.id}))
    session.delete(row)
    session.flush()
    return used
