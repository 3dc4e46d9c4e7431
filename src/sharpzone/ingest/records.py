"""Small picklable records shared by the ingest stages, and the read-error type they raise."""

from __future__ import annotations

import os
from dataclasses import dataclass
from datetime import datetime

from sharpzone.errors import ReadError

from sharpzone.vocabulary import FOCUS_SOURCES  # noqa: F401 - re-exported for the ingest stages


def printable_path(path: str | bytes) -> str:
    """A path that always prints: undecodable bytes in a file name show as ``\\xNN``.

    Paths from ``os.fsdecode`` carry undecodable bytes as lone surrogates, which crash
    ``print`` on a UTF-8 terminal; this form is for people, the original for ``open``.
    """
    return os.fsencode(path).decode("utf-8", "backslashreplace")


class FileReadError(ReadError):
    """One file (image or sidecar) could not be read; ``reason`` is short, e.g. "truncated JPEG"."""

    def __init__(self, path: str | bytes, reason: str) -> None:
        self.path = os.fsdecode(path)
        self.reason = reason
        super().__init__(f"cannot read {printable_path(self.path)}: {reason}")

    def __reduce__(self):
        return (type(self), (self.path, self.reason))


@dataclass(frozen=True)
class ReadProblem:
    """A file or folder that was skipped, with the reason; ingest reports it and goes on."""

    path: str
    reason: str

    @property
    def printable_path(self) -> str:
        return printable_path(self.path)


@dataclass(frozen=True)
class CaptureRecord:
    """What one frame's metadata says about how it was taken, normalised and checked.

    Lengths in millimetres (``focus_mm`` may be ``math.inf``), exposure in seconds,
    ``None`` wherever the file gives no usable value; ``warnings`` says why a value was
    dropped or guessed. ``focus_source`` is one of ``FOCUS_SOURCES``.

    Focus distance with its precision: ``focus_near_mm``/``focus_far_mm`` bracket the
    nearest and farthest distance the record can mean (both equal to ``focus_mm`` when it
    is exact; the maker's lower/upper pair; ± half a step for a step code), all measured
    from the sensor plane; ``focus_key`` is the exact key it was read from (e.g.
    ``"Exif.Photo.SubjectDistance"``). ``focus_point`` is where the camera focused, as
    (centre x, centre y, width, height) in fractions of the image (0..1, from the top
    left; width and height 0 for a point), with ``focus_point_key`` naming its source.
    ``lens_candidates`` are the lens names a maker-note lens id may mean, best first.
    ``sensor_width_mm``/``sensor_height_mm`` are a sensor size the maker note records;
    ``sensor_width_px``/``sensor_height_px`` the sensor's own pixel dimensions when the file
    says (never a preview's or a downsized copy's).
    """

    path: str
    focal_mm: float | None = None
    f_number: float | None = None
    exposure_s: float | None = None
    iso: int | None = None
    focus_mm: float | None = None
    focus_source: str = "none"
    focus_near_mm: float | None = None
    focus_far_mm: float | None = None
    focus_key: str | None = None
    subject_distance_range: str | None = None
    focal_35mm_mm: float | None = None
    lens_spec: tuple[float | None, float | None, float | None, float | None] | None = None
    exif_make: str | None = None
    exif_model: str | None = None
    lens_model: str | None = None
    body_serial: str | None = None
    captured_at: datetime | None = None
    utc_offset_minutes: int | None = None
    width_px: int | None = None
    height_px: int | None = None
    focal_plane_width_mm: float | None = None
    focal_plane_height_mm: float | None = None
    sensor_width_mm: float | None = None
    sensor_height_mm: float | None = None
    sensor_width_px: int | None = None
    sensor_height_px: int | None = None
    lens_candidates: tuple[str, ...] = ()
    focus_point: tuple[float, float, float, float] | None = None
    focus_point_key: str | None = None
    warnings: tuple[str, ...] = ()

    @property
    def printable_path(self) -> str:
        return printable_path(self.path)


def os_error_reason(err: OSError) -> str:
    """A short reason for a failed file operation, for people."""
    reasons = (
        (PermissionError, "permission denied"),
        (FileNotFoundError, "no such file or folder (or a broken link)"),
        (IsADirectoryError, "is a folder, not a file"),
        (NotADirectoryError, "not a folder"),
    )
    for kind, reason in reasons:
        if isinstance(err, kind):
            return reason
    return f"cannot read ({err.strerror or type(err).__name__})"
