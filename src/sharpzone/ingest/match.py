"""Match stage: which catalogued body and lens took a frame.

Bodies are matched by EXIF make, model (and serial); lenses by the EXIF LensModel strings
catalogued as their aliases. Unknown ones are registered as unconfirmed so every frame can be
judged, and the user confirms or corrects them later (``sharpzone body edit``/``lens edit``):
- a body's format is inferred from the 35 mm equivalent focal length (crop factor) or, failing
  that, from the focal-plane resolution, as the nearest catalogued format;
- a lens's focal range and apertures come from LensSpecification (EXIF 0xA432), else from
  the frame itself.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from sharpzone.ingest.records import CaptureRecord
from sharpzone.optics.formats import FULL_FRAME_DIAGONAL_MM, SensorFormat
from sharpzone.optics.limits import ASSUMED_MIN_APERTURE

if TYPE_CHECKING:
    from sqlalchemy.orm import Session

# How far a measured sensor size may be from a catalogued format and still be taken for it.
FORMAT_TOLERANCE = 0.08


def infer_format(record: CaptureRecord, formats: Sequence[SensorFormat]) -> tuple[SensorFormat | None, str]:
    """The catalogued format nearest to what the frame says about its sensor, and how it was
    found ('' when nothing fits within 8 %)."""
    if not formats:
        return None, ""
    if record.focal_35mm_mm and record.focal_mm and record.focal_mm > 0:
        # FocalLengthIn35mmFilm / FocalLength is the crop factor (CIPA DC-008, tag 0xA405).
        diagonal = FULL_FRAME_DIAGONAL_MM * record.focal_mm / record.focal_35mm_mm
        best = min(formats, key=lambda fmt: abs(math.log(fmt.diagonal_mm / diagonal)))
        if abs(best.diagonal_mm / diagonal - 1) <= FORMAT_TOLERANCE:
            return best, "35 mm equivalent focal length"
    if record.focal_plane_width_mm and record.focal_plane_height_mm:
        width = max(record.focal_plane_width_mm, record.focal_plane_height_mm)
        height = min(record.focal_plane_width_mm, record.focal_plane_height_mm)
        best = min(formats, key=lambda fmt: abs(math.log(fmt.width_mm / width)) + abs(math.log(fmt.height_mm / height)))
        if abs(best.width_mm / width - 1) <= FORMAT_TOLERANCE and abs(best.height_mm / height - 1) <= FORMAT_TOLERANCE:
            return best, "focal-plane resolution"
    return None, ""


@dataclass
class MatchOutcome:
    """Ids for the frame (``None`` = unknown), what was registered, and warnings."""

    body_id: int | None = None
    lens_id: int | None = None
    registered: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)


class CatalogMatcher:
    """Matches records to catalogued bodies and lenses within one session, registering the
    unknown ones as unconfirmed; remembers answers for the rest of the batch."""

    def __init__(self, session: Session) -> None:
        from sharpzone.catalog.service import list_formats

        self.session = session
        self._format_rows = {row.name: row for row in list_formats(session)}
        self._formats = [row.to_core() for row in self._format_rows.values()]
        self._bodies: dict[tuple[str, str, str | None], int | None] = {}
        self._lenses: dict[str, int | None] = {}

    def match(self, record: CaptureRecord) -> MatchOutcome:
        outcome = MatchOutcome()
        outcome.body_id = self._body(record, outcome)
        outcome.lens_id = self._lens(record, outcome)
        return outcome

    def _body(self, record: CaptureRecord, outcome: MatchOutcome) -> int | None:
        from sharpzone.catalog.service import add_body, find_body_for_exif

        make, model = (record.exif_make or "").strip(), (record.exif_model or "").strip()
        if not make or not model:
            outcome.warnings.append("no camera make/model in EXIF: body unknown")
            return None
        key = (make.lower(), model.lower(), (record.body_serial or "").strip() or None)
        if key in self._bodies:
            return self._bodies[key]
        body = find_body_for_exif(self.session, make, model, record.body_serial)
        if body is None:
            fmt, how = infer_format(record, self._formats)
            if fmt is None:
                outcome.warnings.append(
                    f"body {make} {model}: sensor format unknown — add it with 'sharpzone body add'")
                self._bodies[key] = None
                return None
            name = self._free_name(f"{make} {model}", "body")
            body = add_body(self.session, name, exif_make=make, exif_model=model, format_name=fmt.name,
                            pixel_width=record.width_px, pixel_height=record.height_px, confirmed=False)
            outcome.registered.append(f"body '{name}' ({fmt.name}, from the {how}; unconfirmed)")
        self._bodies[key] = body.id
        return body.id

    def _lens(self, record: CaptureRecord, outcome: MatchOutcome) -> int | None:
        from sharpzone.catalog.service import add_lens, find_lens_for_exif

        model = (record.lens_model or "").strip()
        if not model:
            return None
        if model in self._lenses:
            return self._lenses[model]
        lens = find_lens_for_exif(self.session, model)
        if lens is None:
            spec = record.lens_spec or (None, None, None, None)
            focal_min = spec[0] or record.focal_mm
            focal_max = spec[1] or focal_min
            if not focal_min:
                outcome.warnings.append(f"lens {model!r}: focal length unknown — not registered")
                self._lenses[model] = None
                return None
            wide = spec[2] or record.f_number or 2.8
            tele = spec[3] or wide
            name = self._free_name(model, "lens")
            lens = add_lens(self.session, name, focal_min_mm=focal_min, focal_max_mm=max(focal_max, focal_min),
                            max_aperture_wide=wide, max_aperture_tele=max(tele, wide) if focal_max > focal_min else wide,
                            min_aperture=max(ASSUMED_MIN_APERTURE, wide, tele), exif_names=[model], confirmed=False)
            source = "LensSpecification" if record.lens_spec else "the frame's own settings"
            outcome.registered.append(f"lens '{name}' (from {source}; unconfirmed)")
        self._lenses[model] = lens.id
        return lens.id

    def _free_name(self, wanted: str, what: str) -> str:
        from sharpzone.catalog.models import Body, Lens
        from sharpzone.catalog.service.common import find_by_name

        model = Body if what == "body" else Lens
        name, number = wanted, 2
        while find_by_name(self.session, model, name) is not None:
            name, number = f"{wanted} ({number})", number + 1
        return name
