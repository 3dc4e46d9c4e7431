"""Small picklable records shared by the ingest stages, and the read-error type they raise."""

from __future__ import annotations

import os
from dataclasses import dataclass
from datetime import datetime

from sharpzone.errors import ReadError

# Where a frame's focus distance came from, in order of precedence; "none" when nowhere.
FOCUS_SOURCES = ("user", "exif", "xmp", "none")


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
    dropped or guessed. ``focus_source`` is ``"user"``, ``"exif"``, ``"xmp"`` or ``"none"``.
    """

    path: str
    focal_mm: float | None = None
    f_number: float | None = None
    exposure_s: float | None = None
    iso: int | None = None
    focus_mm: float | None = None
    focus_source: str = "none"
    subject_distance_range: str | None = None
    focal_35mm_mm: float | None = None
    lens_spec: tuple[float | None, float | None, float | None, float | None] | None = None
    exif_make: str | None = None
    exif_model: str | None = None
    lens_make: str | None = None
    lens_model: str | None = None
    body_serial: str | None = None
    lens_serial: str | None = None
    captured_at: datetime | None = None
    utc_offset_minutes: int | None = None
    width_px: int | None = None
    height_px: int | None = None
    focal_plane_width_mm: float | None = None
    focal_plane_height_mm: float | None = None
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
