"""Sensor formats in the catalogue: list, show, add, edit, remove.

A format answers to its name and its aliases, case-insensitively; names and aliases are
unique across all formats.
"""

from __future__ import annotations

from collections.abc import Iterable

from sqlalchemy import select
from sqlalchemy.orm import Session

from sharpzone.catalog.models import Body, SensorFormatRow
from sharpzone.catalog.rules import clean_name, format_answers_to
from sharpzone.catalog.service.common import merged, plural, saved
from sharpzone.errors import Conflict, InvalidValue, NotFound
from sharpzone.optics.formats import SensorFormat
from sharpzone.optics.limits import DIAGONAL_DIVISOR


def list_formats(session: Session) -> list[SensorFormatRow]:
    """Every sensor format, by name."""
    return list(session.scalars(select(SensorFormatRow).order_by(SensorFormatRow.name)))


def find_format(session: Session, name: str) -> SensorFormatRow | None:
    """The format called ``name`` or answering to it as an alias (ignoring case), or ``None``."""
    for row in list_formats(session):
        if format_answers_to(name, row.name, row.aliases):
            return row
    return None


def get_format(session: Session, name: str, *, error: type[Exception] = NotFound) -> SensorFormatRow:
    """The format called ``name`` (or an alias); ``error`` (``NotFound``) lists the known ones."""
    row = find_format(session, name)
    if row is None:
        known = ", ".join(r.name for r in list_formats(session)) or "none yet"
        raise error(f"no sensor format {name!r} (known: {known})")
    return row


def add_format(
    session: Session,
    name: str,
    width_mm: float,
    height_mm: float,
    *,
    coc_divisor: float = DIAGONAL_DIVISOR,
    aliases: Iterable[str] = (),
    description: str = "",
    source: str = "",
) -> SensorFormatRow:
    """Add a format of ``width_mm`` × ``height_mm``; CoC defaults to diagonal / ``coc_divisor``."""
    return saved(session, SensorFormatRow(), _apply, locals())


def edit_format(
    session: Session,
    name: str,
    *,
    new_name: str | None = None,
    width_mm: float | None = None,
    height_mm: float | None = None,
    coc_divisor: float | None = None,
    aliases: Iterable[str] | None = None,
    description: str | None = None,
    source: str | None = None,
) -> SensorFormatRow:
    """Change the given fields of format ``name`` (``None`` keeps a field; ``aliases``
    replaces the whole list). Bodies of this format follow the change."""
    return saved(session, get_format(session, name), _apply, locals())


def remove_format(session: Session, name: str) -> None:
    """Remove format ``name``; refused with ``Conflict`` while bodies use it."""
    row = get_format(session, name)
    users = list(session.scalars(select(Body.name).where(Body.format_id == row.id).order_by(Body.name)))
    if users:
        raise Conflict(
            f"format {row.name!r} is used by {plural(len(users), 'body')} ({', '.join(users[:5])}): "
            "move them to another format first (body edit --format)"
        )
    session.delete(row)
    session.flush()


def _apply(session, row, *, aliases, **changes) -> None:
    """Validate the complete new state of ``row`` (``None`` keeps a field, ``aliases`` too;
    through the optics ``SensorFormat``), then set it."""
    values = merged(row, **changes)
    aliases = row.alias_list if aliases is None else list(aliases)
    name = clean_name(values["name"], "format")
    try:
        core = SensorFormat(name=name, width_mm=float(values["width_mm"]), height_mm=float(values["height_mm"]),
                            coc_divisor=float(values["coc_divisor"]))
    except (TypeError, ValueError) as error:
        if isinstance(error, InvalidValue):
            raise
        raise InvalidValue(f"format {name!r}: sizes and CoC divisor must be numbers ({error})") from None
    cleaned_aliases = []
    for alias in aliases:
        alias = alias.strip()
        if not alias:
            continue
        if ";" in alias:
            raise InvalidValue(f"format alias {alias!r} must not contain ';'")
        if alias.lower() not in (a.lower() for a in cleaned_aliases) and alias.lower() != name.lower():
            cleaned_aliases.append(alias)
    for wanted in (name, *cleaned_aliases):
        other = find_format(session, wanted)
        if other is not None and other is not row:
            raise Conflict(f"sensor format {other.name!r} already answers to the name {wanted!r}")
    row.name = core.name
    row.width_mm = core.width_mm
    row.height_mm = core.height_mm
    row.coc_divisor = core.coc_divisor
    row.aliases = ";".join(cleaned_aliases)
    row.description = (values["description"] or "").strip()
    row.source = (values["source"] or "").strip()
