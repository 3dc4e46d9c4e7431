"""Match stage: which catalogued body and lens took a frame.

Bodies are matched by EXIF make, model (and serial); lenses by the lens names catalogued as
their EXIF aliases. Unknown ones are registered as unconfirmed so every frame is linked, and
the user confirms or corrects them later (``sharpzone body edit``/``lens edit``):

- a body is registered whenever the file names a make or a model, named without the make
  repeated ("Acme" + "Acme X1" → "Acme X1"). Its sensor format is inferred, in order, from
  the 35 mm equivalent focal length (crop factor), from the focal-plane resolution with the
  sensor's own pixel dimensions, and from the sensor size a maker note records, as the
  nearest catalogued format; else it is registered without one and its frames are judged
  as soon as the user sets it (``body edit NAME --format F``), with no re-ingest;
- a lens is named by LensModel, else by the first lens a maker-note lens id may mean (the
  other candidates become EXIF names it answers to), else by its LensSpecification. Its
  focal range and apertures come from LensSpecification, else from its name ("18-55mm
  F3.5-5.6"), else from the frame; an unconfirmed lens widens them as later frames show
  shorter or longer focal lengths and wider or narrower apertures, so a zoom first seen at
  one end does not stay a prime.
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


def body_name(make: str | None, model: str | None) -> str:
    """The name a body is registered under: the model alone when it already starts with the
    make or the make's first word, ignoring case ("Acme" + "ACME X1" → "ACME X1"), else make
    and model ("ACME CORP" + "X1" → "ACME CORP X1"); whichever is given when one is missing."""
    make, model = (make or "").strip(), (model or "").strip()
    if not make or not model:
        return make or model
    folded_make, folded_model = make.casefold(), model.casefold()
    first_word = folded_make.split()[0]
    if folded_model.startswith(folded_make) or folded_model.split()[0] == first_word:
        return model
    return f"{make} {model}"


def _nearest_by_size(width: float, height: float, formats: Sequence[SensorFormat]) -> SensorFormat | None:
    width, height = max(width, height), min(width, height)
    best = min(formats, key=lambda fmt: abs(math.log(fmt.width_mm / width)) + abs(math.log(fmt.height_mm / height)))
    if abs(best.width_mm / width - 1) <= FORMAT_TOLERANCE and abs(best.height_mm / height - 1) <= FORMAT_TOLERANCE:
        return best
    return None


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
    plane = _focal_plane_size(record)
    if plane is not None:
        best = _nearest_by_size(*plane, formats)
        if best is not None:
            return best, "focal-plane resolution"
    if record.sensor_width_mm and record.sensor_height_mm and record.sensor_width_mm > 0 and record.sensor_height_mm > 0:
        best = _nearest_by_size(record.sensor_width_mm, record.sensor_height_mm, formats)
        if best is not None:
            return best, "sensor size in the maker note"
    return None, ""


def _focal_plane_size(record: CaptureRecord) -> tuple[float, float] | None:
    """The sensor size (mm) the focal-plane resolution gives. The record's focal-plane size
    is the image's pixel count over that resolution; when the file gives the sensor's own
    pixel dimensions it is scaled to them (a raw file's EXIF image may be a smaller preview)."""
    width, height = record.focal_plane_width_mm, record.focal_plane_height_mm
    if not (width and height and width > 0 and height > 0):
        return None
    if record.sensor_width_px and record.sensor_height_px and record.width_px and record.height_px:
        width *= record.sensor_width_px / record.width_px
        height *= record.sensor_height_px / record.height_px
    return width, height


def lens_from_name(name: str) -> tuple[float | None, float | None, float | None, float | None]:
    """(focal min, focal max, widest aperture at the short end, at the long end) as far as a
    lens name says them ("18-55mm F3.5-5.6", "50mm f/1.8", "1:2.8"); ``None`` where it does
    not. The reading itself is the field table's (``fields.lens_spec_from_name``)."""
    from sharpzone.ingest.fields import lens_spec_from_name

    return lens_spec_from_name(name) or (None, None, None, None)


def _spec_name(spec: tuple) -> str | None:
    """A lens name in the trade's notation from a LensSpecification ("24-70mm f/2.8")."""
    low, high, wide, tele = spec
    if not low:
        return None
    focal = f"{low:g}mm" if not high or high == low else f"{low:g}-{high:g}mm"
    if not wide:
        return focal
    return f"{focal} f/{wide:g}" if not tele or tele == wide else f"{focal} f/{wide:g}-{tele:g}"


@dataclass
class MatchOutcome:
    """Ids for the frame (``None`` = unknown), what was registered, warnings, and the
    frame's body name when that body still needs a sensor format."""

    body_id: int | None = None
    lens_id: int | None = None
    registered: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    needs_format: list[str] = field(default_factory=list)


# The lens columns an unconfirmed lens widens as frames come in.
_RANGE_COLUMNS = ("focal_min_mm", "focal_max_mm", "max_aperture_wide", "max_aperture_tele", "min_aperture")


@dataclass
class _KnownLens:
    """What a run remembers of a lens between batches: plain values, not a row."""

    id: int
    confirmed: bool
    focal_min_mm: float
    focal_max_mm: float
    max_aperture_wide: float
    max_aperture_tele: float
    min_aperture: float
    # (focal length, f-number) pairs known to leave it as it is.
    within: set = field(default_factory=set)

    def widened_by(self, record: CaptureRecord) -> bool:
        """Whether this frame would widen the lens (``_widen`` on a copy, remembered)."""
        if self.confirmed:
            return False
        settings = (record.focal_mm, record.f_number)
        if settings in self.within:
            return False
        copy = _KnownLens(self.id, False, *(getattr(self, column) for column in _RANGE_COLUMNS))
        if _widen(copy, record):
            return True
        self.within.add(settings)
        return False


@dataclass(frozen=True)
class _KnownBody:
    """What a run remembers of a body between batches: one that has a sensor format, or is
    confirmed, learns nothing more from frames."""

    id: int
    name: str
    needs_format: bool


class MatchMemory:
    """The bodies and lenses one ingest run has matched, kept across its batches (each
    batch is its own session), so that a frame of a known body and lens costs a dictionary
    look-up instead of queries. What a batch learned counts only once that batch is
    committed (``commit``); a batch rolled back is forgotten (``discard``), and ``clear``
    forgets everything (a batch retried after a conflict looks everything up again)."""

    def __init__(self) -> None:
        self.formats: list[SensorFormat] | None = None
        self.bodies: dict[tuple, _KnownBody] = {}
        self.lenses: dict[str, _KnownLens] = {}
        self._pending: tuple[dict, dict] = ({}, {})

    def stage(self, bodies: dict, lenses: dict) -> None:
        self._pending = (bodies, lenses)

    def commit(self) -> None:
        bodies, lenses = self._pending
        self.bodies.update(bodies)
        self.lenses.update(lenses)
        self.discard()

    def discard(self) -> None:
        self._pending = ({}, {})

    def clear(self) -> None:
        self.__init__()


class CatalogMatcher:
    """Matches records to catalogued bodies and lenses within one session, registering the
    unknown ones as unconfirmed; remembers answers for the rest of the batch, and with a
    ``memory`` for the rest of the run (``finish`` hands it what this batch learned)."""

    def __init__(self, session: Session, memory: MatchMemory | None = None) -> None:
        self.session = session
        self.memory = memory if memory is not None else MatchMemory()
        if self.memory.formats is None:
            from sharpzone.catalog.models import SensorFormatRow
            from sqlalchemy import select

            self.memory.formats = [row.to_core() for row in
                                   session.scalars(select(SensorFormatRow).order_by(SensorFormatRow.name))]
        self._formats = self.memory.formats
        # The rows themselves, not ids: the session's identity map holds rows only weakly,
        # and a look-up by id per frame would go back to the database.
        self._bodies: dict[tuple[str, str, str | None], object] = {}
        self._lenses: dict[str, object] = {}
        # Per raw (make, model, serial): the body; per raw lens fields: the names to look up.
        self._body_keys: dict[tuple, tuple] = {}
        self._lens_names: dict[tuple, tuple[list[str], str]] = {}

    def match(self, record: CaptureRecord) -> MatchOutcome:
        outcome = MatchOutcome()
        outcome.body_id = self._body(record, outcome)
        outcome.lens_id = self._lens(record, outcome)
        return outcome

    def finish(self) -> None:
        """Hand the memory what this batch learned, as plain values (call it inside the
        batch's session; it counts once the batch is committed)."""
        bodies = {key: body for key, body in self._bodies.items() if isinstance(body, _KnownBody)}
        lenses = {key: lens if isinstance(lens, _KnownLens) else
                  _KnownLens(lens.id, lens.confirmed, *(getattr(lens, column) for column in _RANGE_COLUMNS))
                  for key, lens in self._lenses.items() if lens is not None}
        self.memory.stage(bodies, lenses)

    def _body(self, record: CaptureRecord, outcome: MatchOutcome) -> int | None:
        raw = (record.exif_make, record.exif_model, record.body_serial)
        key = self._body_keys.get(raw)
        if key is None:
            make, model = (record.exif_make or "").strip(), (record.exif_model or "").strip()
            key = self._body_keys[raw] = ((make.casefold(), model.casefold(),
                                           (record.body_serial or "").strip() or None), make, model)
        key, make, model = key
        if not make and not model:
            outcome.warnings.append("no camera make or model in the file: body unknown")
            return None
        body = self._bodies.get(key) or self.memory.bodies.get(key)
        if isinstance(body, _KnownBody):  # settled in an earlier frame: nothing to learn
            if body.needs_format:
                outcome.needs_format.append(body.name)
            self._bodies[key] = body
            return body.id
        return self._match_body(record, key, make, model, body, outcome)

    def _match_body(self, record: CaptureRecord, key: tuple, make: str, model: str, body,
                    outcome: MatchOutcome) -> int | None:
        from sharpzone.catalog.service import add_body, find_body_for_exif

        if body is None:
            body = find_body_for_exif(self.session, make, model, record.body_serial)
        if body is None:
            fmt, how = infer_format(record, self._formats)
            name = self._free_name(body_name(make, model), "body")
            body = add_body(self.session, name, exif_make=make, exif_model=model,
                            format_name=fmt.name if fmt else None, pixel_width=record.width_px,
                            pixel_height=record.height_px, confirmed=False)
            found = f"{fmt.name}, from the {how}" if fmt else "sensor format unknown"
            outcome.registered.append(f"body '{name}' ({found}; unconfirmed)")
        elif body.sensor_format is None and not body.confirmed:
            fmt, how = infer_format(record, self._formats)
            if fmt is not None:  # a later frame tells what the first ones did not
                from sharpzone.catalog.service import get_format

                body.sensor_format = get_format(self.session, fmt.name)
                outcome.registered.append(f"body '{body.name}': format {fmt.name}, from the {how}")
        if body.sensor_format is None:
            outcome.needs_format.append(body.name)
        settled = body.sensor_format is not None or body.confirmed
        self._bodies[key] = _KnownBody(body.id, body.name, body.sensor_format is None) if settled else body
        return body.id

    def _lens_key(self, record: CaptureRecord) -> tuple[list[str], str]:
        """The names to look the frame's lens up by (best first) and where they came from."""
        raw = (record.lens_model, record.lens_candidates, record.lens_spec)
        known = self._lens_names.get(raw)
        if known is not None:
            return known
        spec = record.lens_spec or (None, None, None, None)
        names = [name.strip() for name in (record.lens_model, *record.lens_candidates) if name and name.strip()]
        if not record.lens_model and record.lens_candidates:
            how = "the maker note's lens id"
        elif record.lens_model:
            how = "LensModel"
            names = names[:1]  # a LensModel names one lens; candidates are for when it is missing
        else:
            names = [name for name in (_spec_name(spec),) if name]
            how = "LensSpecification"
        self._lens_names[raw] = names, how
        return names, how

    def _lens(self, record: CaptureRecord, outcome: MatchOutcome) -> int | None:
        names, how = self._lens_key(record)
        if not names:
            return None
        key = names[0]
        if key in self._lenses:
            lens = self._lenses[key]
        else:
            lens = self.memory.lenses.get(key)
        if isinstance(lens, _KnownLens):
            if not lens.widened_by(record):
                self._lenses[key] = lens
                return lens.id
            # This frame widens it: the row itself, as it is now, takes the change.
            from sharpzone.catalog.models import Lens
            from sharpzone.catalog.service import find_lens_for_exif

            lens = self.session.get(Lens, lens.id) or find_lens_for_exif(self.session, key)
            if lens is None:
                return self._new_lens(record, names, how, key, outcome)
        if lens is not None:
            _widen(lens, record)
            self._lenses[key] = lens
            return lens.id
        if key in self._lenses:  # looked up in this batch: not registrable
            return None
        from sharpzone.catalog.service import find_lens_for_exif

        lens = find_lens_for_exif(self.session, key)
        if lens is None:
            return self._new_lens(record, names, how, key, outcome)
        _widen(lens, record)
        self._lenses[key] = lens
        return lens.id

    def _new_lens(self, record: CaptureRecord, names: list[str], how: str, key: str,
                  outcome: MatchOutcome) -> int | None:
        spec = record.lens_spec or (None, None, None, None)
        lens = self._register_lens(names, spec, record, how, outcome)
        self._lenses[key] = lens
        return None if lens is None else lens.id

    def _register_lens(self, names: list[str], spec: tuple, record: CaptureRecord, how: str, outcome: MatchOutcome):
        from sharpzone.catalog.service import add_lens, find_lens_for_exif

        named = lens_from_name(names[0])
        focal_min = spec[0] or named[0] or record.focal_mm
        focal_max = spec[1] or (named[1] if named[0] else None) or focal_min
        if not focal_min:
            outcome.warnings.append(f"lens {names[0]!r}: focal length unknown — not registered")
            return None
        focal_min, focal_max = min(focal_min, record.focal_mm or focal_min), max(focal_max, record.focal_mm or focal_max)
        wide = spec[2] or named[2] or record.f_number or 2.8
        tele = spec[3] or named[3] or wide
        if focal_max == focal_min:
            tele = wide
        source = ("LensSpecification" if record.lens_spec else "its name" if named[0] else "the frame's own settings")
        aliases = [name for name in dict.fromkeys(names) if find_lens_for_exif(self.session, name) is None]
        lens = add_lens(self.session, self._free_name(names[0], "lens"), focal_min_mm=focal_min,
                        focal_max_mm=focal_max, max_aperture_wide=wide, max_aperture_tele=max(tele, wide),
                        min_aperture=max(ASSUMED_MIN_APERTURE, wide, tele), exif_names=aliases, confirmed=False)
        also = f"; also answers to {', '.join(repr(n) for n in aliases[1:])}" if len(aliases) > 1 else ""
        outcome.registered.append(f"lens '{lens.name}' (named from {how}, range from {source}{also}; unconfirmed)")
        return lens

    def _free_name(self, wanted: str, what: str) -> str:
        from sharpzone.catalog.models import Body, Lens
        from sharpzone.catalog.service.common import find_by_name

        model = Body if what == "body" else Lens
        name, number = wanted, 2
        while find_by_name(self.session, model, name) is not None:
            name, number = f"{wanted} ({number})", number + 1
        return name


def _widen(lens, record: CaptureRecord) -> bool:
    """An unconfirmed lens (a row, or what a run remembers of one) takes in this frame's
    focal length and aperture; whether that changed it."""
    if lens is None or lens.confirmed:
        return False
    before = tuple(getattr(lens, column) for column in _RANGE_COLUMNS)
    focal, f_number = record.focal_mm, record.f_number
    if focal and focal > 0:
        if focal < lens.focal_min_mm:
            if lens.focal_min_mm == lens.focal_max_mm:
                lens.max_aperture_tele = lens.max_aperture_wide
            lens.focal_min_mm = focal
        elif focal > lens.focal_max_mm:
            if lens.focal_min_mm == lens.focal_max_mm:
                lens.max_aperture_tele = lens.max_aperture_wide
            lens.focal_max_mm = focal
    if f_number and f_number > 0:
        near_long_end = focal and lens.focal_max_mm > lens.focal_min_mm and \
            focal >= (lens.focal_min_mm + lens.focal_max_mm) / 2
        if f_number > lens.min_aperture:
            lens.min_aperture = f_number
        elif near_long_end and f_number < lens.max_aperture_tele:
            # the short end opens at least as wide as the long end
            lens.max_aperture_wide = min(lens.max_aperture_wide, f_number)
            lens.max_aperture_tele = f_number
        elif not near_long_end and f_number < lens.max_aperture_wide:
            lens.max_aperture_wide = f_number
    return tuple(getattr(lens, column) for column in _RANGE_COLUMNS) != before
