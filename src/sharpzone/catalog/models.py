"""The catalogue's tables as typed SQLAlchemy 2 declarative models.

Dialect-neutral: the same models serve SQLite and PostgreSQL. Lengths are millimetres
(``*_mm``), times are seconds (``exposure_s``), ``math.inf`` is a valid focus distance
(SQLite REAL and PostgreSQL DOUBLE PRECISION both store infinity). Timestamps the program
makes (``created_at``, ``seen_at``) are naive UTC; ``Frame.captured_at`` is the camera's
naive local time with its offset, when known, in ``utc_offset_minutes``.

Every change here needs an Alembic revision in ``migrations/versions`` (see DEVELOPERS.md);
``tests/catalog/test_migrations.py`` fails when the two drift apart.
"""

from __future__ import annotations

import datetime as dt
from typing import TYPE_CHECKING, Optional

from sqlalchemy import (
    BigInteger,
    Boolean,
    CheckConstraint,
    DateTime,
    Double,
    ForeignKey,
    Index,
    Integer,
    MetaData,
    String,
    Text,
    TypeDecorator,
    func,
    true,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column, relationship

from sharpzone.catalog.rules import CHECKS, NAME_LENGTH, alias_list
from sharpzone.optics.limits import DIAGONAL_DIVISOR

if TYPE_CHECKING:
    from sharpzone.optics.formats import SensorFormat

# Constraint names come from this convention so that migrations (and SQLite batch mode,
# which must name what it drops) see the same names on every database.
NAMING_CONVENTION = {
    "ix": "ix_%(table_name)s_%(column_0_N_name)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}



def utc_now() -> dt.datetime:
    """The current time as naive UTC, the form the catalogue stores its own timestamps in."""
    return dt.datetime.now(dt.timezone.utc).replace(tzinfo=None)


class WallClockDateTime(TypeDecorator):
    """A timestamp without a zone, stored as the wall-clock time it shows.

    A zone-aware value loses its zone (the offset, where it matters, lives in its own
    column), the same on every database: SQLite drops it on its own, but PostgreSQL would
    first shift the value into the server's time zone, so one catalogue would read back
    different times depending on where it lives."""

    impl = DateTime
    cache_ok = True

    def process_bind_param(self, value, dialect):
        if isinstance(value, dt.datetime) and value.tzinfo is not None:
            return value.replace(tzinfo=None)
        return value


def checks(table: str) -> tuple[CheckConstraint, ...]:
    """The CHECK constraints of ``table`` (``rules.CHECKS``, added by migration 0004), named
    ``ck_<table>_<rule>`` through the naming convention."""
    return tuple(CheckConstraint(condition, name=name) for name, condition in CHECKS.get(table, ()))


class Base(DeclarativeBase):
    metadata = MetaData(naming_convention=NAMING_CONVENTION)


class SensorFormatRow(Base):
    """A sensor or film format: its image area in mm and its default CoC rule (diagonal / k).

    ``aliases`` holds other names the format answers to, separated by ``;``.
    """

    __tablename__ = "sensor_format"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    width_mm: Mapped[float] = mapped_column(Double)
    height_mm: Mapped[float] = mapped_column(Double)
    coc_divisor: Mapped[float] = mapped_column(Double, default=DIAGONAL_DIVISOR, server_default=f"{DIAGONAL_DIVISOR:g}")
    aliases: Mapped[str] = mapped_column(Text, default="", server_default="")
    description: Mapped[str] = mapped_column(Text, default="", server_default="")
    source: Mapped[str] = mapped_column(Text, default="", server_default="")

    __table_args__ = checks("sensor_format")

    bodies: Mapped[list[Body]] = relationship(back_populates="sensor_format")

    @property
    def alias_list(self) -> list[str]:
        """``aliases`` split into a list (empty entries dropped)."""
        return alias_list(self.aliases)

    def to_core(self) -> SensorFormat:
        """The optics core's frozen ``SensorFormat`` for this row."""
        from sharpzone.optics.formats import SensorFormat

        return SensorFormat(
            name=self.name, width_mm=self.width_mm, height_mm=self.height_mm, coc_divisor=self.coc_divisor
        )


class Body(Base):
    """A camera body: how EXIF names it (make, model, serial), its format and pixel size.

    Uniqueness of the EXIF identity: at most one body per (make, model, serial), where a
    missing serial counts as the empty serial. So there is at most one "any serial" body
    per make and model (the one EXIF matching falls back to), and any number of bodies of
    that model told apart by their serials. Enforced by a unique index on
    ``(exif_make, exif_model, coalesce(serial, ''))``, which SQLite and PostgreSQL both
    support, and checked first by the service for a readable message.
    """

    __tablename__ = "body"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    exif_make: Mapped[str] = mapped_column(String(NAME_LENGTH))
    exif_model: Mapped[str] = mapped_column(String(NAME_LENGTH))
    serial: Mapped[Optional[str]] = mapped_column(String(NAME_LENGTH))
    format_id: Mapped[Optional[int]] = mapped_column(ForeignKey("sensor_format.id"), index=True)
    pixel_width: Mapped[Optional[int]] = mapped_column(Integer)
    pixel_height: Mapped[Optional[int]] = mapped_column(Integer)
    confirmed: Mapped[bool] = mapped_column(Boolean, default=True, server_default=true())

    sensor_format: Mapped[Optional[SensorFormatRow]] = relationship(back_populates="bodies", lazy="joined")

    @property
    def pixel_pitch_mm(self) -> float | None:
        """Pixel pitch in mm (``None`` while the format or the pixel dimensions are unknown)."""
        from sharpzone.optics.formats import pixel_pitch_mm

        if self.sensor_format is None:
            return None
        return pixel_pitch_mm(self.sensor_format.to_core(), self.pixel_width, self.pixel_height)

    __table_args__ = (
        Index("uq_body_exif_identity", "exif_make", "exif_model", func.coalesce(serial, ""), unique=True),
        *checks("body"),
    )


class Lens(Base):
    """A lens: focal range in mm, maximum aperture at each end, minimum aperture, close focus.

    ``max_aperture_wide`` is the smallest f-number at ``focal_min_mm``; ``max_aperture_tele``
    the smallest at ``focal_max_mm`` (the same for a prime or a constant-aperture zoom);
    ``min_aperture`` the largest f-number (e.g. 22). ``pupil_magnification`` is exit/entrance
    pupil diameter (1 for a symmetric design), used in close-up depth of field.
    ``max_magnification`` is the lens's specified maximum magnification at
    ``close_focus_mm`` (e.g. 1.0 for a 1:1 macro lens; ``None`` when not known).
    """

    __tablename__ = "lens"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    focal_min_mm: Mapped[float] = mapped_column(Double)
    focal_max_mm: Mapped[float] = mapped_column(Double)
    max_aperture_wide: Mapped[float] = mapped_column(Double)
    max_aperture_tele: Mapped[float] = mapped_column(Double)
    min_aperture: Mapped[float] = mapped_column(Double)
    close_focus_mm: Mapped[Optional[float]] = mapped_column(Double)
    pupil_magnification: Mapped[float] = mapped_column(Double, default=1.0, server_default="1")
    max_magnification: Mapped[Optional[float]] = mapped_column(Double)
    confirmed: Mapped[bool] = mapped_column(Boolean, default=True, server_default=true())

    __table_args__ = checks("lens")

    aliases: Mapped[list[LensAlias]] = relationship(
        back_populates="lens",
        cascade="all, delete-orphan",
        passive_deletes=True,
        order_by="LensAlias.exif_name",
        lazy="selectin",
    )

    @property
    def is_prime(self) -> bool:
        return self.focal_min_mm == self.focal_max_mm


class LensAlias(Base):
    """An EXIF ``LensModel`` string that names a lens; each string names one lens only."""

    __tablename__ = "lens_alias"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    lens_id: Mapped[int] = mapped_column(ForeignKey("lens.id", ondelete="CASCADE"), index=True)
    exif_name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)

    lens: Mapped[Lens] = relationship(back_populates="aliases")


class Shoot(Base):
    """A shoot and its plan: what had to be sharp and with which settings.

    ``plan_kind`` is ``None`` (no plan), ``'range'`` (everything from ``plan_near_mm`` to
    ``plan_far_mm`` from the sensor, far may be infinite) or ``'depth'`` (``plan_front_mm``
    in front of and ``plan_back_mm`` behind the focus point). ``coc_policy`` is the text
    form of a circle-of-confusion policy (``None`` = each format's own rule).
    """

    __tablename__ = "shoot"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    root_folder: Mapped[Optional[str]] = mapped_column(Text)
    created_at: Mapped[dt.datetime] = mapped_column(WallClockDateTime, default=utc_now)
    plan_kind: Mapped[Optional[str]] = mapped_column(String(16))
    plan_near_mm: Mapped[Optional[float]] = mapped_column(Double)
    plan_far_mm: Mapped[Optional[float]] = mapped_column(Double)
    plan_front_mm: Mapped[Optional[float]] = mapped_column(Double)
    plan_back_mm: Mapped[Optional[float]] = mapped_column(Double)
    planned_focal_mm: Mapped[Optional[float]] = mapped_column(Double)
    planned_f_number: Mapped[Optional[float]] = mapped_column(Double)
    planned_focus_mm: Mapped[Optional[float]] = mapped_column(Double)
    coc_policy: Mapped[Optional[str]] = mapped_column(String(NAME_LENGTH))
    notes: Mapped[Optional[str]] = mapped_column(Text)

    __table_args__ = checks("shoot")


class Frame(Base):
    """One image file and the capture settings read from it (inputs only: zones are computed
    at query time). ``focus_mm`` may be ``math.inf``; ``focus_source`` says where it came
    from (one of ``FOCUS_SOURCES``) and ``focus_key`` the exact key; ``focus_near_mm`` and
    ``focus_far_mm`` bracket what the recorded distance can mean (equal to ``focus_mm`` when
    exact). ``focus_point_*`` say where the camera focused, in fractions of the image (0..1
    from the top left; width and height 0 for a point). ``device``/``inode`` identify the file
    however it is reached. The ``exif_*`` columns keep the raw strings so a frame can be
    matched again after the catalogue learns a body or lens.
    """

    __tablename__ = "frame"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    shoot_id: Mapped[Optional[int]] = mapped_column(ForeignKey("shoot.id", ondelete="CASCADE"), index=True)
    path: Mapped[str] = mapped_column(Text, unique=True)
    file_size: Mapped[int] = mapped_column(BigInteger)
    file_mtime_ns: Mapped[int] = mapped_column(BigInteger)
    # Indexed: check and frames over a date range read only those frames (docs/streamed-output.md).
    captured_at: Mapped[Optional[dt.datetime]] = mapped_column(WallClockDateTime, index=True)
    utc_offset_minutes: Mapped[Optional[int]] = mapped_column(Integer)
    body_id: Mapped[Optional[int]] = mapped_column(ForeignKey("body.id"), index=True)
    lens_id: Mapped[Optional[int]] = mapped_column(ForeignKey("lens.id"), index=True)
    focal_mm: Mapped[Optional[float]] = mapped_column(Double)
    f_number: Mapped[Optional[float]] = mapped_column(Double)
    exposure_s: Mapped[Optional[float]] = mapped_column(Double)
    iso: Mapped[Optional[int]] = mapped_column(Integer)
    focus_mm: Mapped[Optional[float]] = mapped_column(Double)
    focus_source: Mapped[str] = mapped_column(String(16), default="none", server_default="none")
    focus_near_mm: Mapped[Optional[float]] = mapped_column(Double)
    focus_far_mm: Mapped[Optional[float]] = mapped_column(Double)
    focus_key: Mapped[Optional[str]] = mapped_column(String(NAME_LENGTH))
    subject_distance_range: Mapped[Optional[str]] = mapped_column(String(16))
    focus_point_x: Mapped[Optional[float]] = mapped_column(Double)
    focus_point_y: Mapped[Optional[float]] = mapped_column(Double)
    focus_point_w: Mapped[Optional[float]] = mapped_column(Double)
    focus_point_h: Mapped[Optional[float]] = mapped_column(Double)
    focus_point_key: Mapped[Optional[str]] = mapped_column(String(NAME_LENGTH))
    device: Mapped[Optional[int]] = mapped_column(BigInteger)
    inode: Mapped[Optional[int]] = mapped_column(BigInteger)
    focal_35mm_mm: Mapped[Optional[float]] = mapped_column(Double)
    width_px: Mapped[Optional[int]] = mapped_column(Integer)
    height_px: Mapped[Optional[int]] = mapped_column(Integer)
    exif_make: Mapped[Optional[str]] = mapped_column(Text)
    exif_model: Mapped[Optional[str]] = mapped_column(Text)
    exif_lens_model: Mapped[Optional[str]] = mapped_column(Text)
    warnings: Mapped[Optional[str]] = mapped_column(Text)

    shoot: Mapped[Optional[Shoot]] = relationship()
    body: Mapped[Optional[Body]] = relationship()
    lens: Mapped[Optional[Lens]] = relationship()

    __table_args__ = (Index("ix_frame_device_inode", "device", "inode"), *checks("frame"))


class FrameBlur(Base):
    """The blur measured from a frame's pixels (its embedded preview, decoded small).

    Blur diameters are in pixels of the analysed image, whose long side is
    ``analysed_long_px``: a fraction of the frame, so the blur in sensor millimetres follows
    from the body's format at query time (a format set later needs no new measurement).
    ``None`` where a region had too few edges to measure. ``focus_*`` is the region at the
    camera's focus point (``None`` without one); ``best_*`` the sharpest region of the grid;
    positions are region centres in fractions of the image (0..1 from the top left).
    ``grid`` is the grid of region blurs as JSON (rows of numbers or nulls). ``method`` and
    ``method_version`` name the estimator, so a later version can measure again.
    """

    __tablename__ = "frame_blur"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    frame_id: Mapped[int] = mapped_column(ForeignKey("frame.id", ondelete="CASCADE"), unique=True)
    method: Mapped[str] = mapped_column(String(64))
    method_version: Mapped[int] = mapped_column(Integer)
    measured_at: Mapped[dt.datetime] = mapped_column(WallClockDateTime, default=utc_now)
    analysed_long_px: Mapped[int] = mapped_column(Integer)
    focus_blur_px: Mapped[Optional[float]] = mapped_column(Double)
    focus_edges: Mapped[Optional[int]] = mapped_column(Integer)
    focus_x: Mapped[Optional[float]] = mapped_column(Double)
    focus_y: Mapped[Optional[float]] = mapped_column(Double)
    best_blur_px: Mapped[Optional[float]] = mapped_column(Double)
    best_x: Mapped[Optional[float]] = mapped_column(Double)
    best_y: Mapped[Optional[float]] = mapped_column(Double)
    median_blur_px: Mapped[Optional[float]] = mapped_column(Double)
    regions_measured: Mapped[int] = mapped_column(Integer, default=0, server_default="0")
    regions_total: Mapped[int] = mapped_column(Integer, default=0, server_default="0")
    grid: Mapped[Optional[str]] = mapped_column(Text)

    __table_args__ = checks("frame_blur")


class IngestProblem(Base):
    """A file that ingest could not read, with the reason, so a run can report and go on."""

    __tablename__ = "ingest_problem"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    shoot_id: Mapped[Optional[int]] = mapped_column(ForeignKey("shoot.id", ondelete="CASCADE"), index=True)
    path: Mapped[str] = mapped_column(Text)
    reason: Mapped[str] = mapped_column(Text)
    seen_at: Mapped[dt.datetime] = mapped_column(WallClockDateTime, default=utc_now)

    shoot: Mapped[Optional[Shoot]] = relationship()


TABLES_IN_DEPENDENCY_ORDER = (SensorFormatRow, Body, Lens, LensAlias, Shoot, Frame, FrameBlur, IngestProblem)
