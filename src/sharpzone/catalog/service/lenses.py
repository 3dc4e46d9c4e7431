"""Lenses in the catalogue: list, show, add, edit, remove, EXIF aliases and EXIF matching.

Apertures are f-numbers: ``max_aperture_wide``/``max_aperture_tele`` are the smallest
f-numbers at the short and long end, ``min_aperture`` the largest (e.g. 22).
"""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from sharpzone.catalog.models import Frame, Lens, LensAlias
from sharpzone.catalog.rules import clean_name, lens_values
from sharpzone.catalog.service.common import get_by_name, merged, remove_reassigning_frames, require_name_free, saved
from sharpzone.errors import Conflict, NotFound
from sharpzone.limits import check_close_focus
from sharpzone.optics.limits import ASSUMED_MIN_APERTURE


def list_lenses(session: Session) -> list[Lens]:
    """Every lens, by name, with its EXIF aliases loaded."""
    return list(session.scalars(select(Lens).order_by(Lens.name)))


def get_lens(session: Session, name: str) -> Lens:
    """The lens called ``name`` (ignoring case) or carrying ``name`` as an EXIF alias;
    ``NotFound`` lists the known ones."""
    try:
        return get_by_name(session, Lens, name, "lens")
    except NotFound:
        lens = find_lens_for_exif(session, name)
        if lens is None:
            raise
        return lens


def find_lens_for_exif(session: Session, lens_model: str) -> Lens | None:
    """The lens whose EXIF alias is ``lens_model`` (exact after trimming spaces), or ``None``."""
    # Queried as a lens (not through the alias) so its aliases load with it.
    return session.scalars(select(Lens).join(LensAlias).where(LensAlias.exif_name == lens_model.strip())).first()


def add_lens(
    session: Session,
    name: str,
    *,
    focal_min_mm: float,
    max_aperture_wide: float,
    focal_max_mm: float | None = None,
    max_aperture_tele: float | None = None,
    min_aperture: float = ASSUMED_MIN_APERTURE,
    close_focus_mm: float | None = None,
    pupil_magnification: float = 1.0,
    max_magnification: float | str | None = None,
    exif_names: tuple[str, ...] | list[str] = (),
    confirmed: bool = True,
) -> Lens:
    """Add a lens. A prime leaves ``focal_max_mm`` out; a constant-aperture lens leaves
    ``max_aperture_tele`` out. ``close_focus_mm`` is the closest focus from the sensor;
    ``max_magnification`` the image scale reached there (its specification: 1.0 or ``"1:1"``
    for a macro lens; a zoom's at its long end); ``exif_names`` are the EXIF LensModel
    strings that name it."""
    fields = dict(locals())
    del fields["exif_names"]
    lens = saved(session, Lens(aliases=[]), _apply, fields)
    for exif_name in exif_names:
        add_lens_alias(session, lens.name, exif_name)
    return lens


def edit_lens(
    session: Session,
    name: str,
    *,
    new_name: str | None = None,
    focal_min_mm: float | None = None,
    focal_max_mm: float | None = None,
    max_aperture_wide: float | None = None,
    max_aperture_tele: float | None = None,
    min_aperture: float | None = None,
    close_focus_mm: float | None = None,
    pupil_magnification: float | None = None,
    max_magnification: float | str | None = None,
    confirmed: bool | None = None,
) -> Lens:
    """Change the given fields of lens ``name`` (``None`` keeps a field; ``max_magnification``
    0 clears it). Frames taken with it follow the change, since zones are computed when asked for."""
    return saved(session, get_lens(session, name), _apply, locals())


def remove_lens(session: Session, name: str, *, reassign_to: str | None = None) -> int:
    """Remove lens ``name`` and its aliases. Frames taken with it are refused (``Conflict``)
    unless ``reassign_to`` names the lens they move to. Returns how many frames moved."""
    return remove_reassigning_frames(session, Lens, Frame.lens_id, name, reassign_to, "lens")


def add_lens_alias(session: Session, lens_name: str, exif_name: str) -> LensAlias:
    """Let the EXIF LensModel string ``exif_name`` name lens ``lens_name``. A string that
    already names another lens is refused (``Conflict``); one naming this lens is kept."""
    lens = get_lens(session, lens_name)
    exif_name = clean_name(exif_name, "EXIF lens")
    existing = session.scalars(select(LensAlias).where(LensAlias.exif_name == exif_name)).first()
    if existing is not None:
        if existing.lens is not lens:
            raise Conflict(f"EXIF lens name {exif_name!r} already names lens {existing.lens.name!r}")
        return existing
    alias = LensAlias(exif_name=exif_name)
    lens.aliases.append(alias)
    session.flush()
    return alias


def remove_lens_alias(session: Session, exif_name: str) -> Lens:
    """Forget the EXIF name ``exif_name``; returns the lens it named."""
    alias = session.scalars(select(LensAlias).where(LensAlias.exif_name == exif_name.strip())).first()
    if alias is None:
        raise NotFound(f"no lens is named {exif_name!r} in EXIF")
    lens = alias.lens
    lens.aliases.remove(alias)
    session.flush()
    return lens


def _apply(session, lens, *, max_magnification=None, **changes) -> None:
    """Validate the complete new state of ``lens`` (``None`` keeps a field; a new prime's long
    end is its focal length, a constant aperture's long end its short end's; the fields
    checked by ``rules.lens_values``, the close focus against the focal length by
    ``limits``, and the close-focus pair by ``optics.macro``: a zoom's maximum magnification
    is its long end's), then set it. A maximum magnification of 0 clears it."""
    fields = merged(lens, **changes)
    confirmed = fields.pop("confirmed")
    if fields["focal_max_mm"] is None:
        fields["focal_max_mm"] = fields["focal_min_mm"]
    if fields["max_aperture_tele"] is None:
        fields["max_aperture_tele"] = fields["max_aperture_wide"]
    values = lens_values(**fields)
    label = f"lens {values['name']!r}"
    values["close_focus_mm"] = check_close_focus(values["close_focus_mm"], values["focal_max_mm"],
                                                 what=f"{label}: close-focus distance")
    if max_magnification is None:
        max_magnification = lens.max_magnification
    elif max_magnification in (0, 0.0, "0", "none", ""):
        max_magnification = None
    macro = None
    if max_magnification is not None:  # (the check needs numpy: a lens registered from frames has none)
        from sharpzone.optics.macro import check_macro_spec

        macro = check_macro_spec(values["focal_max_mm"], values["close_focus_mm"], max_magnification, what=label)
    values["max_magnification"] = macro.max_magnification if macro else None
    require_name_free(session, Lens, values["name"], "lens", keep=lens)
    for column, value in values.items():
        setattr(lens, column, value)
    lens.confirmed = bool(confirmed)
