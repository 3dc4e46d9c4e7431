"""Lenses in the catalogue: list, show, add, edit, remove, EXIF aliases and EXIF matching.

Apertures are f-numbers: ``max_aperture_wide``/``max_aperture_tele`` are the smallest
f-numbers at the short and long end, ``min_aperture`` the largest (e.g. 22).
"""

from __future__ import annotations

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from sharpzone.catalog.models import Frame, Lens, LensAlias
from sharpzone.catalog.service._common import (
    clean_name,
    get_by_name,
    merged,
    remove_reassigning_frames,
    positive,
    require_name_free,
)
from sharpzone.errors import Conflict, InvalidValue, NotFound
from sharpzone.optics.limits import ASSUMED_MIN_APERTURE


def list_lenses(session: Session) -> list[Lens]:
    """Every lens, by name, with its EXIF aliases loaded."""
    return list(session.scalars(select(Lens).order_by(Lens.name)))


def get_lens(session: Session, name: str) -> Lens:
    """The lens called ``name`` (ignoring case); ``NotFound`` lists the known ones."""
    return get_by_name(session, Lens, name, "lens")


def find_lens_for_exif(session: Session, lens_model: str) -> Lens | None:
    """The lens whose EXIF alias is ``lens_model`` (exact after trimming spaces), or ``None``."""
    alias = session.scalars(select(LensAlias).where(LensAlias.exif_name == lens_model.strip())).first()
    return alias.lens if alias is not None else None


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
    exif_names: tuple[str, ...] | list[str] = (),
    confirmed: bool = True,
) -> Lens:
    """Add a lens. A prime leaves ``focal_max_mm`` out; a constant-aperture lens leaves
    ``max_aperture_tele`` out. ``close_focus_mm`` is the closest focus from the sensor;
    ``exif_names`` are the EXIF LensModel strings that name it."""
    lens = Lens(aliases=[])
    _apply(
        session,
        lens,
        name=name,
        focal_min_mm=focal_min_mm,
        focal_max_mm=focal_min_mm if focal_max_mm is None else focal_max_mm,
        max_aperture_wide=max_aperture_wide,
        max_aperture_tele=max_aperture_wide if max_aperture_tele is None else max_aperture_tele,
        min_aperture=min_aperture,
        close_focus_mm=close_focus_mm,
        pupil_magnification=pupil_magnification,
        confirmed=confirmed,
    )
    session.add(lens)
    for exif_name in exif_names:
        add_lens_alias(session, lens.name, exif_name)
    session.flush()
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
    confirmed: bool | None = None,
) -> Lens:
    """Change the given fields of lens ``name`` (``None`` keeps a field). Frames taken with
    it follow the change, since zones are computed when asked for."""
    lens = get_lens(session, name)
    _apply(
        session,
        lens,
        **merged(
            lens,
            name=new_name,
            focal_min_mm=focal_min_mm,
            focal_max_mm=focal_max_mm,
            max_aperture_wide=max_aperture_wide,
            max_aperture_tele=max_aperture_tele,
            min_aperture=min_aperture,
            close_focus_mm=close_focus_mm,
            pupil_magnification=pupil_magnification,
            confirmed=confirmed,
        ),
    )
    session.flush()
    return lens


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


def lens_frame_counts(session: Session) -> dict[int, int]:
    """How many frames each lens id has (lenses without frames are absent)."""
    rows = session.execute(select(Frame.lens_id, func.count()).where(Frame.lens_id.is_not(None)).group_by(Frame.lens_id))
    return {lens_id: count for lens_id, count in rows}


def _apply(
    session,
    lens,
    *,
    name,
    focal_min_mm,
    focal_max_mm,
    max_aperture_wide,
    max_aperture_tele,
    min_aperture,
    close_focus_mm,
    pupil_magnification,
    confirmed,
) -> None:
    """Validate the complete new state of ``lens``, then set it."""
    name = clean_name(name, "lens")
    focal_min, focal_max = focal_min_mm, focal_max_mm
    aperture_wide, aperture_tele = max_aperture_wide, max_aperture_tele
    close_focus, pupil = close_focus_mm, pupil_magnification
    focal_min = positive(focal_min, f"lens {name!r}: shortest focal length", "mm")
    focal_max = positive(focal_max, f"lens {name!r}: longest focal length", "mm")
    if focal_max < focal_min:
        raise InvalidValue(
            f"lens {name!r}: longest focal length {focal_max:g} mm is shorter than the shortest {focal_min:g} mm"
        )
    aperture_wide = positive(aperture_wide, f"lens {name!r}: maximum aperture (f-number)")
    aperture_tele = positive(aperture_tele, f"lens {name!r}: maximum aperture at the long end (f-number)")
    min_aperture = positive(min_aperture, f"lens {name!r}: minimum aperture (f-number)")
    widest_needed = max(aperture_wide, aperture_tele)
    if min_aperture < widest_needed:
        raise InvalidValue(
            f"lens {name!r}: minimum aperture f/{min_aperture:g} is wider than the maximum aperture "
            f"f/{widest_needed:g}: expected a larger f-number such as f/22"
        )
    close_focus = positive(close_focus, f"lens {name!r}: close-focus distance", "mm")
    pupil = positive(pupil, f"lens {name!r}: pupil magnification")
    require_name_free(session, Lens, name, "lens", keep=lens)
    lens.name = name
    lens.focal_min_mm = focal_min
    lens.focal_max_mm = focal_max
    lens.max_aperture_wide = aperture_wide
    lens.max_aperture_tele = aperture_tele
    lens.min_aperture = min_aperture
    lens.close_focus_mm = close_focus
    lens.pupil_magnification = pupil
    lens.confirmed = bool(confirmed)
